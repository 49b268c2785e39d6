// Transient figures of a run, per event window, as interfaces.md defines them.
#pragma once

#include <string>
#include <vector>

#include "swashtune/oscillation.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune {

struct EventMetrics {
  double time = 0.0;  // s, when the event starts
  std::string target;
  double peak_discharge_pressure = 0.0;  // Pa, highest in the window
  double overshoot_percent = 0.0;        // swing past the new level, % of the step
  double settling_time = 0.0;            // s after the event, +-2 % band
  double swash_response_time = 0.0;      // s after the event, 90 % of the swash change
  OscillationReport oscillation;         // of the discharge pressure over the window
};

// How an event window's pressure is examined for oscillation: the first 5 %
// (the event itself) is skipped; swings below 0.1 % of the setting count as
// none (a simulated trace has no measurement noise to set that floor).
OscillationOptions window_oscillation_options(const ModelParameters& p, double window);

// Window i runs from event i to event i+1 (or the end of the run). Peaks and
// minima come from every solver step (RunResult), the rest from the trace.
std::vector<EventMetrics> event_metrics(const Scenario& scenario, const RunResult& result);

// Linear interpolation of one trace column at time t (clamped to the trace).
double trace_value_at(const std::vector<Sample>& trace, double t, double (*column)(const Sample&));

inline double discharge_pressure_of(const Sample& s) { return s.x[state::discharge_pressure]; }
inline double swash_angle_of(const Sample& s) { return s.x[state::swash_angle]; }

}  // namespace swashtune
