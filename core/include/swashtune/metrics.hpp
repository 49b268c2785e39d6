// Transient figures of a run, per event window, as interfaces.md ("Event
// metrics v2") defines them. They come from every solver step and every
// sample of the run (RunResult::windows), not from the kept trace, so the
// same event gives the same figures in a short run and a long one.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "swashtune/oscillation.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune {

struct EventMetrics {
  double time = 0.0;        // s, when the event starts
  double window_end = 0.0;  // s, the next event or the end of the run
  std::string target;
  double peak_discharge_pressure = 0.0;     // Pa, highest in the window
  double initial_discharge_pressure = 0.0;  // Pa, at the event
  double final_discharge_pressure = 0.0;    // Pa, at the window's end
  double change = 0.0;                      // final - initial, Pa
  double band = 0.0;                        // max(0.02 |change|, 0.002 |final|), Pa
  // null (nullopt) where interfaces.md says so:
  std::optional<double> overshoot_percent;    // a rise: swing past the new level, % of the step
  std::optional<double> undershoot_percent;   // a fall: swing below the new level
  std::optional<double> settling_time;        // s after the event until within +-band to the end
  std::optional<double> swash_response_time;  // s after the event until 90 % of the swash change
  std::optional<double> swash_travel_time;    // s from 10 % to 90 % of the swash change
  // "no change", "does not settle: hunting", "does not settle within the
  // window", or empty.
  std::string note;
  OscillationReport oscillation;                        // of the discharge pressure (see EventWindow::oscillation)
  double oscillation_from = 0.0, oscillation_to = 0.0;  // s, the stretch it was taken over
};

inline constexpr const char* note_no_change = "no change";
inline constexpr const char* note_hunting = "does not settle: hunting";
inline constexpr const char* note_not_settled = "does not settle within the window";

// Window i runs from event i to event i+1 (or the end of the run).
std::vector<EventMetrics> event_metrics(const Scenario& scenario, const RunResult& result);

// The pressure figures of one window (initial, final, change, band, peak,
// overshoot or undershoot, settling time, note) from an EventWindow fed with
// the pressure, for any source of samples: a run takes initial and final as
// the window's first and last values and end_oscillation as the window's
// own analysis; a recording takes averages, the analysis of its stretch from
// the peak, and widens the band to band_floor for its noise.
void pressure_figures(const EventWindow& w, double initial, double final_value,
                      const OscillationReport& end_oscillation, double band_floor, EventMetrics& m);

// Linear interpolation of one trace column at time t (clamped to the trace).
double trace_value_at(const std::vector<Sample>& trace, double t, double (*column)(const Sample&));

inline double discharge_pressure_of(const Sample& s) { return s.x[state::discharge_pressure]; }
inline double swash_angle_of(const Sample& s) { return s.x[state::swash_angle]; }

}  // namespace swashtune
