// Estimating parameters so that the simulated discharge pressure reproduces a
// field recording: nonlinear least squares (Levenberg-Marquardt, Eigen's
// unsupported module), with standard errors from the Jacobian at the
// solution and a plain statement when the trace cannot tell a parameter.
#pragma once

#include <functional>
#include <string>
#include <vector>

#include "swashtune/field_trace.hpp"
#include "swashtune/scenario.hpp"

namespace swashtune {

struct FitOptions {
  std::vector<std::string> free_keys;  // numeric model parameters to estimate
  int max_iterations = 40;
};

struct FittedParameter {
  std::string key;
  double initial = 0.0;  // stored units
  double value = 0.0;
  double standard_error = 0.0;  // one standard deviation, stored units (inf when not identifiable)
  bool identifiable = true;
  std::string note;  // why not identifiable, or that it sits on a range limit
};

struct FitResult {
  std::vector<FittedParameter> parameters;
  double initial_rms = 0.0;  // Pa, of simulated minus measured pressure
  double rms = 0.0;          // Pa, at the solution
  int samples = 0;           // field samples inside the simulated time
  int simulations = 0;
  bool converged = false;
  bool cancelled = false;
  std::string message;  // how the search ended
  Scenario fitted;      // the scenario with the fitted values
};

// Called after every simulation with its count and the rms residual so far;
// return false to cancel (the best values found so far are reported).
using FitProgress = std::function<bool(int simulations, double rms)>;

// The field trace's time is taken to be the scenario's time. Throws
// ScenarioError for an unknown or non-numeric key and when fewer field
// samples than free parameters fall inside the run.
FitResult fit_to_trace(const Scenario& scenario, const FieldTrace& trace, const FitOptions& options,
                       const FitProgress& progress = nullptr);

}  // namespace swashtune
