// A live study: the simulator advanced in pieces while a person turns the
// controls. Every change is an Event at the present simulated time, kept in
// a scenario, so a session can be saved as a scenario file and replayed
// with run_scenario() to give the same trace. Qt-free; the desktop program
// drives it from a worker thread.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "swashtune/scenario.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune {

class LiveSession {
 public:
  // Starts at t = 0 from the steady state of the scenario's initial
  // parameters; the scenario's own events are scheduled too (a scripted run).
  explicit LiveSession(const Scenario& scenario);

  // Changes a numeric parameter now: from its present value to `to` over
  // `ramp` seconds. Returns the event as recorded. Throws ScenarioError for an
  // unknown key or a value out of range. The script goes on: scripted events
  // on the same key that have not started yet still act at their times.
  Event change(const std::string& key, double to, double ramp = 0.0);

  // Advances by dt of simulated time, handing each new sample to the sink.
  // The session's clock stays on a grid of 1 / steps_per_second, so the
  // times of changes are short decimals in a saved file. Throws SolverError.
  void advance(double dt, const Simulator::SampleSink& sink);
  static constexpr double steps_per_second = 1e7;  // a 0.1 us grid

  // Changes the spacing of the samples from now on (slow motion wants finer).
  void set_sample_interval(double seconds);

  // Starts over at t = 0 from the steady state of `initial` (no events).
  void reset(const ModelParameters& initial);

  double time() const { return simulator_->time(); }
  const State& state() const { return simulator_->state(); }
  ModelParameters parameters_now() const { return simulator_->parameters_now(); }
  Sample sample_now() const;
  const OperatingPoint& start() const { return start_; }
  const SolverStats& stats() const { return simulator_->stats(); }

  // The session as a scenario: initial parameters, every event (the person's
  // changes and the whole script, also its events still to come) and the
  // duration run so far, or the scripted duration while scripted events are
  // still to come (at least one sample interval). Replayed by run_scenario()
  // it gives the session's trace up to the present time.
  Scenario to_scenario() const;

 private:
  void begin(const ModelParameters& initial);

  Scenario scenario_;  // initial parameters, settings, the script and the changes so far
  double scripted_duration_ = 0.0;
  OperatingPoint start_;
  std::unique_ptr<Simulator> simulator_;
};

}  // namespace swashtune
