// A peer integrator for the benchmark: SUNDIALS CVODE (BDF, dense direct
// linear solver, the analytic Jacobian of model.hpp) on exactly the model,
// scaled states, schedule corners and hard end-stop logic of
// core/src/simulator.cpp. It exists to measure the project's own solver
// against a general-purpose one; nothing in core depends on it.
#pragma once

#include <vector>

#include "swashtune/scenario.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune::bench {

struct PeerStats {
  SolverStats solver;  // steps, rejected (error test + Newton failures), RHS, Jacobian, stop events, wall
  long long error_test_failures = 0;
  long long convergence_failures = 0;  // Newton iterations that did not converge
  long long newton_iterations = 0;
  long long restarts = 0;  // CVodeReInit calls: stop switches and schedule corners
};

struct PeerResult {
  std::vector<Sample> trace;  // on the grid k * sample_interval, as run_scenario's
  PeerStats stats;
  double peak_discharge_pressure = 0.0;  // over every step and sample
};

// Runs the scenario from `start` (normally run_scenario's own starting point)
// to its duration with the scenario's rtol and atol. Throws SolverError when
// CVODE fails.
PeerResult run_cvode_peer(const Scenario& scenario, const InitialCondition& start);

}  // namespace swashtune::bench
