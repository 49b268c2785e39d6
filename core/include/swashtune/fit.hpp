// Estimating parameters so that the simulated discharge pressure reproduces a
// field recording: nonlinear least squares (Levenberg-Marquardt, Eigen's
// unsupported module), with standard errors from the Jacobian at the
// solution, a plain statement when the trace cannot tell a parameter, the
// criterion the search stopped on, restarts from several starts (reported
// when they end in different minima), and a verdict on whether the model
// reproduces the recording at all (the rms residual against the
// recording's own noise).
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
  // Searches from the given values and from starts - 1 more points spread
  // over each parameter's start span (see fit.cpp); 1 searches once.
  int starts = 3;
};

// The criterion the Levenberg-Marquardt search stopped on (MINPACK's,
// through Eigen's status codes), and what our own check at the end found.
enum class FitStop {
  gradient,         // the residual is orthogonal to the Jacobian's columns (gtol)
  step,             // the relative change of the parameters fell below xtol
  cost_change,      // the relative reduction of the sum of squares fell below ftol
  iteration_limit,  // the simulations allowed ran out
  stalled,          // a criterion was met, but the remaining Gauss-Newton step is not small
  cancelled,
};
const char* to_string(FitStop s);  // "gradient", "step", "cost change", ...

// Whether the model reproduces the recording: the rms residual r against
// the recording's noise s. Within fits_within_noise_limit(n) times s, r is
// what noise alone would leave: 1 + 3 * 1.78 / sqrt(n), three deviations of
// r / s for white noise (measured by Monte Carlo, 2000 repetitions at n =
// 100 to 4000: the noise estimate's relative deviation is 1.63 / sqrt(n),
// the rms's 1 / sqrt(2n)). Above kDoesNotFit times s the model does not
// fit the machine; between, systematic differences remain.
enum class FitVerdict { reproduces, systematic_difference, does_not_fit, unknown };
const char* to_string(FitVerdict v);  // "reproduces the recording", ...
double fits_within_noise_limit(int samples);
constexpr double kDoesNotFit = 3.0;

struct FitStart {
  std::vector<double> start;  // stored units, one per free parameter
  std::vector<double> end;
  double rms = 0.0;  // Pa
  FitStop stop = FitStop::cancelled;
  std::string criterion;  // the stop in words
  int simulations = 0;
  bool same_minimum = true;  // ends within kSameMinimum standard errors of the best start's values
};
constexpr double kSameMinimum = 3.0;

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
  bool converged = false;  // the best start stopped on gradient, step or cost change, and not stalled
  bool cancelled = false;
  FitStop stop = FitStop::cancelled;  // of the best start
  double remaining_step = 0.0;        // the Gauss-Newton step left at the solution, in standard errors
  std::string message;                // how the search ended, naming the criterion
  std::vector<FitStart> starts;       // every start, the given one first
  bool starts_agree = true;           // every finished start ended in the best start's minimum
  std::string starts_note;            // which did not, in words
  double noise = 0.0;                 // Pa: the recording's noise (local-cubic pseudo-residuals, MAD)
  double residual_to_noise = 0.0;     // rms / noise
  FitVerdict verdict = FitVerdict::unknown;
  std::string verdict_text;       // the verdict in plain words
  std::vector<double> times;      // s: the recording's samples inside the run
  std::vector<double> measured;   // Pa
  std::vector<double> simulated;  // Pa: the fitted scenario's pressure at those times
  Scenario fitted;                // the scenario with the fitted values
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
