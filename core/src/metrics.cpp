#include "swashtune/metrics.hpp"

#include <algorithm>
#include <cmath>

namespace swashtune {

double trace_value_at(const std::vector<Sample>& trace, double t, double (*column)(const Sample&)) {
  if (trace.empty()) return 0.0;
  if (t <= trace.front().time) return column(trace.front());
  if (t >= trace.back().time) return column(trace.back());
  auto after =
      std::lower_bound(trace.begin(), trace.end(), t, [](const Sample& s, double time) { return s.time < time; });
  const Sample& b = *after;
  const Sample& a = *(after - 1);
  const double f = (t - a.time) / (b.time - a.time);
  return column(a) + f * (column(b) - column(a));
}

namespace {

// The settling band of interfaces.md: 2 % of the step's own change, with a
// floor of 0.2 % of the final value.
constexpr double band_of_change = 0.02;
constexpr double band_of_final = 0.002;
// A swash change below this fraction of the full-stroke angle is no motion.
constexpr double least_swash_change = 0.01;
// The stretch at a window's end over which the pressure must move less than
// the band's width to count as settled (a slow creep the oscillation analysis
// cannot call an oscillation).
constexpr double end_stretch = 0.05;

bool oscillating(const OscillationReport& o) { return o.kind != OscillationKind::settled; }

}  // namespace

void pressure_figures(const EventWindow& w, double initial, double final_value,
                      const OscillationReport& end_oscillation, double band_floor, EventMetrics& m) {
  m.initial_discharge_pressure = initial;
  m.final_discharge_pressure = final_value;
  m.change = m.final_discharge_pressure - m.initial_discharge_pressure;
  m.band =
      std::max({band_of_change * std::abs(m.change), band_of_final * std::abs(m.final_discharge_pressure), band_floor});
  m.peak_discharge_pressure = w.peak_pressure();
  if (std::abs(m.change) < m.band || m.band == 0.0) {
    m.note = note_no_change;  // nothing measurable happened: no figures
    return;
  }
  if (m.change > 0.0)
    m.overshoot_percent = 100.0 * (m.peak_discharge_pressure - m.final_discharge_pressure) / m.change;
  else
    m.undershoot_percent = 100.0 * (m.final_discharge_pressure - w.lowest_pressure()) / (-m.change);
  // Settled means staying within the band to the window's end; an
  // oscillation at the end larger than the band never does.
  const double window = w.end() - w.start();
  const bool large = end_oscillation.peak_to_peak > 2.0 * m.band;
  if (end_oscillation.kind == OscillationKind::sustained && large) {
    m.note = note_hunting;
  } else if ((oscillating(end_oscillation) && large) ||
             w.pressure_span_after(w.end() - end_stretch * window) > 2.0 * m.band) {
    m.note = note_not_settled;
  } else {
    m.settling_time =
        w.settled_from(m.final_discharge_pressure - m.band, m.final_discharge_pressure + m.band) - w.start();
  }
}

std::vector<EventMetrics> event_metrics(const Scenario& scenario, const RunResult& result) {
  std::vector<EventMetrics> out;
  const auto& events = scenario.events;
  for (std::size_t i = 0; i < events.size(); ++i) {
    EventMetrics m;
    m.time = events[i].at;
    m.target = events[i].target;
    m.window_end = i + 1 < events.size() ? events[i + 1].at : scenario.settings.duration;
    if (i >= result.windows.size() || !result.windows[i].observed()) {
      out.push_back(m);
      continue;
    }
    const EventWindow& w = result.windows[i];
    pressure_figures(w, w.initial_pressure(), w.final_pressure(), w.oscillation(), 0.0, m);
    m.oscillation = w.oscillation();
    m.oscillation_from = w.oscillation_from();
    m.oscillation_to = w.oscillation_to();

    // The swash: 10 % and 90 % of its change over the window, first reached.
    const double a0 = w.initial_angle(), a1 = w.final_angle(), swing = a1 - a0;
    if (std::abs(swing) >= least_swash_change * scenario.parameters.max_swash_angle) {
      const auto t10 = w.angle_first_reaching(a0 + 0.1 * swing, swing > 0.0);
      const auto t90 = w.angle_first_reaching(a0 + 0.9 * swing, swing > 0.0);
      if (t90) m.swash_response_time = *t90 - w.start();
      if (t10 && t90) m.swash_travel_time = *t90 - *t10;
    }
    out.push_back(m);
  }
  return out;
}

}  // namespace swashtune
