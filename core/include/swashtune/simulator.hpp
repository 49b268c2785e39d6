// Runs the model through time: applies the schedule of parameter events,
// handles the hard end stops as located events, samples the trace on a fixed
// grid from the integrator's dense output, and counts the solver's work.
// It can advance in pieces, which is how a live session drives it.
#pragma once

#include <functional>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

#include "swashtune/event_window.hpp"
#include "swashtune/model.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/schedule.hpp"

namespace swashtune {

struct SolverStats {
  long long steps = 0;  // accepted steps
  long long rejected_steps = 0;
  long long rhs_evaluations = 0;
  long long jacobian_evaluations = 0;
  long long stop_events = 0;  // end-stop contacts and releases located
  double wall_time_s = 0.0;
};

// One row of the trace: the state plus the flows a user wants to see.
struct Sample {
  double time = 0.0;
  // The model's state (the layout of the study's elements), on the heap:
  // a trace holds many samples and most studies use a few of max_states.
  Eigen::VectorXd x;
  double pump_flow = 0.0;     // Q_g - Q_leak: what the pump delivers into the line
  double load_flow = 0.0;     // through the load valve
  double valve_end_pressure = 0.0;  // Pa, at the load valve: the discharge pressure unless the line is distributed
  double leakage_flow = 0.0;  // internal leakage
  double control_flow = 0.0;  // Q_pc: taken by the compensator into the control chamber
  double opening = 0.0;       // load valve opening
  double setting = 0.0;       // compensator setting, Pa
};

Sample make_sample(double t, const State& x, const ModelParameters& p);

class SolverError : public std::runtime_error {
 public:
  SolverError(double time, const std::string& why);
  double time() const { return time_; }

 private:
  double time_;
};

struct InitialCondition {
  State x;
  StopModes modes;
};

// Full stroke at rest, the line at the pressure that pushes the full-stroke
// flow through the load valve (or at the setting when the valve is shut).
InitialCondition full_stroke_guess(const ModelParameters& p);

// Normalisation of the states to order one for the error control, fixed at
// the start of a run (see solver-notes.md).
State state_scale(const ModelParameters& p);

class Simulator {
 public:
  using SampleSink = std::function<void(const Sample&)>;
  using StepObserver = std::function<void(double t, const State& x)>;

  Simulator(const ModelParameters& initial, const RunSettings& settings, const InitialCondition& start,
            double start_time = 0.0);
  ~Simulator();
  Simulator(const Simulator&) = delete;
  Simulator& operator=(const Simulator&) = delete;

  // Adds a parameter event; it may not start before the present time.
  // Throws std::invalid_argument otherwise.
  void add_event(const Event& event);

  // Integrates up to t_end, handing every grid sample in the interval to the
  // sink (the first call also emits the sample at the start time when it is
  // on the grid). Throws SolverError when the integration fails.
  void advance_to(double t_end, const SampleSink& sink);

  // Samples from now on come every `seconds` (on the grid k * seconds,
  // strictly after the present time).
  void set_sample_interval(double seconds);

  // Called after every accepted step (and every located stop event).
  void set_step_observer(StepObserver observer);

  double time() const;
  const State& state() const;
  StopModes stop_modes() const;
  ModelParameters parameters_now() const;
  const Schedule& schedule() const;
  const SolverStats& stats() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// Integrates from the full-stroke guess with the given parameters until the
// state stops changing, to start a run from the steady operating point.
struct SettledStart {
  InitialCondition condition;
  bool settled = false;         // false: still moving when the time limit ran out
  double simulated_time = 0.0;  // s needed (or spent)
  SolverStats stats;
};
SettledStart settle_by_integration(const ModelParameters& p, const RunSettings& settings);

// Where a run starts: the equilibrium at the initial parameters, found by
// Newton (analysis.hpp, steady_state) or, failing that, by integration.
enum class SteadyMethod { newton, integration };
const char* to_string(SteadyMethod m);

struct OperatingPoint {
  InitialCondition condition;  // state and the stops the coordinates rest on
  SteadyMethod method = SteadyMethod::newton;
  bool converged = false;       // false: integration ran out of time (the loop may hunt)
  double residual = 0.0;        // Newton: largest scaled rate left at the solution
  int iterations = 0;           // Newton iterations (summed over tried stop combinations)
  double simulated_time = 0.0;  // integration: s of simulated time spent
};

// A whole run of a scenario: start from the steady state, apply every event,
// keep the trace and the peak discharge pressure seen in each event window
// (taken over every solver step, not only the samples).
struct RunResult {
  std::vector<Sample> trace;  // every sample, or every trace_stride-th one (see RunOptions)
  long long trace_stride = 1;
  Sample final_sample;  // the last sample of the run, whatever the stride
  OperatingPoint start;
  SolverStats stats;  // of the run itself, without finding the start
  double peak_discharge_pressure = 0.0;
  // One per event, over [at, next event or end]: what its transient figures
  // need, taken from every solver step and every sample (before the kept
  // trace is thinned), in bounded memory (event_window.hpp).
  std::vector<EventWindow> windows;
};
// For long runs: every sample can be streamed out (to a file) while the
// trace kept in memory is thinned to at most about max_trace_samples, by
// doubling its stride whenever it fills, so memory stays bounded whatever
// the duration. 0 keeps every sample.
struct RunOptions {
  Simulator::SampleSink stream;
  std::size_t max_trace_samples = 0;
};

RunResult run_scenario(const Scenario& scenario, const RunOptions& options = {});

}  // namespace swashtune
