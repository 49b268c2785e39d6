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

// Below this a pressure step is too small to speak of overshoot (interfaces.md).
constexpr double minimum_pressure_change = 1e4;  // Pa

double settling_time(const std::vector<Sample>& trace, double start, double end, double final_value, double band) {
  // The last sample outside the band; settled from the next one on.
  double settled_at = start;
  for (std::size_t i = 0; i < trace.size(); ++i) {
    const Sample& s = trace[i];
    if (s.time < start || s.time > end) continue;
    if (std::abs(discharge_pressure_of(s) - final_value) > band)
      settled_at = i + 1 < trace.size() ? std::min(trace[i + 1].time, end) : end;
  }
  return settled_at - start;
}

double response_time(const std::vector<Sample>& trace, double start, double end, double initial, double final_value,
                     double threshold) {
  const double change = final_value - initial;
  if (std::abs(change) < threshold) return 0.0;
  double previous_time = start, previous_fraction = 0.0;
  for (const Sample& s : trace) {
    if (s.time < start || s.time > end) continue;
    const double fraction = (swash_angle_of(s) - initial) / change;
    if (fraction >= 0.9) {
      if (fraction == previous_fraction) return s.time - start;
      // Interpolate the 90 % crossing between samples.
      const double f = (0.9 - previous_fraction) / (fraction - previous_fraction);
      return std::max(0.0, previous_time + f * (s.time - previous_time) - start);
    }
    previous_time = s.time;
    previous_fraction = fraction;
  }
  return end - start;
}

OscillationReport window_oscillation(const std::vector<Sample>& trace, double start, double end,
                                     const OscillationOptions& options) {
  std::vector<double> t, p;
  for (const Sample& s : trace)
    if (s.time >= start && s.time <= end) {
      t.push_back(s.time);
      p.push_back(discharge_pressure_of(s));
    }
  if (t.size() < 16) return OscillationReport{};  // too short a window to say anything
  return analyse_oscillation(t, p, std::nullopt, std::nullopt, options);
}

}  // namespace

OscillationOptions window_oscillation_options(const ModelParameters& p, double /*window*/) {
  OscillationOptions o;
  o.skip_fraction = 0.02;
  o.amplitude_floor = 1e-3 * std::max(p.setting, 1e6);
  return o;
}

std::vector<EventMetrics> event_metrics(const Scenario& scenario, const RunResult& result) {
  std::vector<EventMetrics> out;
  const auto& events = scenario.events;
  const auto& trace = result.trace;
  for (std::size_t i = 0; i < events.size(); ++i) {
    const double start = events[i].at;
    const double end = i + 1 < events.size() ? events[i + 1].at : scenario.settings.duration;
    EventMetrics m;
    m.time = start;
    m.target = events[i].target;
    // Exact values at the window's ends where the run recorded them (a
    // thinned trace would blur them), else from the trace.
    auto at = [&](const std::vector<State>& states, double t, int index, double (*column)(const Sample&)) {
      const double exact = i < states.size() ? states[i][index] : std::nan("");
      return std::isfinite(exact) ? exact : trace_value_at(trace, t, column);
    };
    const double initial = at(result.window_start_state, start, state::discharge_pressure, discharge_pressure_of);
    const double final_value = at(result.window_end_state, end, state::discharge_pressure, discharge_pressure_of);
    const double change = final_value - initial;
    m.peak_discharge_pressure = i < result.window_peaks.size() ? result.window_peaks[i] : initial;
    const double minimum = i < result.window_minima.size() ? result.window_minima[i] : initial;
    if (change >= minimum_pressure_change)
      m.overshoot_percent = 100.0 * (m.peak_discharge_pressure - final_value) / change;
    else if (change <= -minimum_pressure_change)
      m.overshoot_percent = 100.0 * (final_value - minimum) / (-change);
    const double band = 0.02 * std::max(std::abs(final_value), std::abs(change));
    m.settling_time = settling_time(trace, start, end, final_value, band);
    const double a0 = at(result.window_start_state, start, state::swash_angle, swash_angle_of);
    const double a1 = at(result.window_end_state, end, state::swash_angle, swash_angle_of);
    m.swash_response_time = response_time(trace, start, end, a0, a1, 1e-3 * scenario.parameters.max_swash_angle);
    m.oscillation = window_oscillation(trace, start, end, window_oscillation_options(scenario.parameters, end - start));
    out.push_back(m);
  }
  return out;
}

}  // namespace swashtune
