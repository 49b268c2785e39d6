#include "swashtune/fit.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <unsupported/Eigen/LevenbergMarquardt>

#include "swashtune/field_analysis.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/simulator.hpp"
#include "fit_search.hpp"

namespace swashtune {
namespace {

using fitting::Cancelled;
using fitting::criterion_of;
using fitting::FreeParameter;
using fitting::number;
using fitting::stop_of;

// Pa rms of pressure change for a 100 % change of a parameter (a unit step
// of theta) below which the trace says nothing about it.
constexpr double minimum_sensitivity = 1.0;

class TraceResiduals : public Eigen::DenseFunctor<double> {
 public:
  TraceResiduals(const Scenario& scenario, std::vector<FreeParameter> free, std::vector<double> times,
                 std::vector<double> measured, const FitProgress& progress)
      : Eigen::DenseFunctor<double>(static_cast<int>(free.size()), static_cast<int>(times.size())),
        scenario_(scenario),
        free_(std::move(free)),
        times_(std::move(times)),
        measured_(std::move(measured)),
        progress_(progress) {}

  Scenario with(const InputType& theta) const {
    Scenario s = scenario_;
    for (std::size_t i = 0; i < free_.size(); ++i) free_[i].spec->set(s.parameters, free_[i].value(theta[i]));
    return s;
  }

  int operator()(const InputType& theta, ValueType& residual) {
    const RunResult run = run_scenario(with(theta));
    residual.resize(values());
    for (int i = 0; i < values(); ++i)
      residual[i] = trace_value_at(run.trace, times_[i], discharge_pressure_of) - measured_[i];
    ++simulations_;
    const double rms = std::sqrt(residual.squaredNorm() / values());
    if (rms < best_rms_) {
      best_rms_ = rms;
      best_theta_ = theta;
    }
    if (rms < overall_rms_) {
      overall_rms_ = rms;
      overall_theta_ = theta;
    }
    if (progress_ && !progress_(simulations_, best_rms_)) throw Cancelled{};
    return 0;
  }

  // Forward differences: one simulation per free parameter.
  int df(const InputType& theta, JacobianType& jacobian) {
    ValueType base, shifted;
    (*this)(theta, base);
    jacobian.resize(values(), inputs());
    for (int j = 0; j < inputs(); ++j) {
      InputType t = theta;
      const double h = 1e-3 * std::max(1.0, std::abs(theta[j]));
      t[j] += h;
      (*this)(t, shifted);
      jacobian.col(j) = (shifted - base) / h;
    }
    return 0;
  }

  // The best point is tracked per start.
  void restart_tracking() {
    best_rms_ = std::numeric_limits<double>::infinity();
    best_theta_ = InputType();
  }
  int simulations() const { return simulations_; }
  double best_rms() const { return best_rms_; }
  const InputType& best_theta() const { return best_theta_; }
  double overall_rms() const { return overall_rms_; }
  const InputType& overall_theta() const { return overall_theta_; }
  const std::vector<FreeParameter>& free() const { return free_; }

 private:
  const Scenario& scenario_;
  std::vector<FreeParameter> free_;
  std::vector<double> times_;
  std::vector<double> measured_;
  const FitProgress& progress_;
  int simulations_ = 0;
  double best_rms_ = std::numeric_limits<double>::infinity();
  InputType best_theta_;
  double overall_rms_ = std::numeric_limits<double>::infinity();
  InputType overall_theta_;
};

}  // namespace

const char* to_string(FitStop s) {
  switch (s) {
    case FitStop::gradient:
      return "gradient";
    case FitStop::step:
      return "step";
    case FitStop::cost_change:
      return "cost change";
    case FitStop::iteration_limit:
      return "iteration limit";
    case FitStop::stalled:
      return "stalled";
    case FitStop::cancelled:
      return "cancelled";
  }
  return "?";
}

const char* to_string(FitVerdict v) {
  switch (v) {
    case FitVerdict::reproduces:
      return "reproduces the recording";
    case FitVerdict::systematic_difference:
      return "systematic differences remain";
    case FitVerdict::does_not_fit:
      return "does not fit this machine";
    case FitVerdict::unknown:
      return "unknown";
  }
  return "?";
}

double fits_within_noise_limit(int samples) { return 1.0 + 3.0 * 1.78 / std::sqrt(std::max(1, samples)); }

// Remaining Gauss-Newton step (in standard errors) above which a search that
// met a criterion is called stalled: the minimum is further than that.
constexpr double kStalledStep = 0.2;

FitResult fit_to_trace(const Scenario& scenario, const FieldTrace& trace, const FitOptions& options,
                       const FitProgress& progress) {
  if (options.free_keys.empty()) throw ScenarioError("fit: name at least one parameter to estimate");
  if (options.starts < 1) throw ScenarioError("fit: the number of starts must be at least 1");
  const std::vector<FreeParameter> free = fitting::free_parameters(options.free_keys, scenario.parameters, "fit");
  std::vector<double> times, measured;
  for (std::size_t i = 0; i < trace.time.size(); ++i)
    if (trace.time[i] >= 0.0 && trace.time[i] <= scenario.settings.duration) {
      times.push_back(trace.time[i]);
      measured.push_back(trace.pressure[i]);
    }
  if (times.size() <= free.size())
    throw ScenarioError("fit: only " + std::to_string(times.size()) + " samples of " + trace.source +
                        " fall inside the run (0 to " + std::to_string(scenario.settings.duration) +
                        " s); the trace's time must be the scenario's time");

  // Sample the simulation at least as finely as the recording.
  Scenario base = scenario;
  double finest = base.settings.sample_interval;
  for (std::size_t i = 1; i < times.size(); ++i) finest = std::min(finest, times[i] - times[i - 1]);
  base.settings.sample_interval = std::max(finest, 1e-6);

  FitResult result;
  result.samples = static_cast<int>(times.size());
  result.noise = measurement_noise(times, measured);
  TraceResiduals residuals(base, free, times, measured, progress);
  const int n = static_cast<int>(free.size());
  const double ftol = 1e-10, xtol = 1e-8;

  const std::vector<Eigen::VectorXd> start_points = fitting::start_points(free, options.starts);
  Eigen::LevenbergMarquardtSpace::Status status{};
  // One Levenberg-Marquardt search from theta; the best point it met is kept.
  const auto search = [&](Eigen::VectorXd theta) {
    residuals.restart_tracking();
    Eigen::LevenbergMarquardt<TraceResiduals> lm(residuals);
    lm.setMaxfev(options.max_iterations * (n + 1));
    lm.setXtol(xtol);
    lm.setFtol(ftol);
    status = lm.minimize(theta);
  };
  int best = -1;
  try {
    for (std::size_t k = 0; k < start_points.size(); ++k) {
      const int before = residuals.simulations();
      if (k == 0) {
        Eigen::VectorXd r0;
        residuals(start_points[0], r0);
        result.initial_rms = std::sqrt(r0.squaredNorm() / r0.size());
      }
      search(start_points[k]);
      FitStart start;
      for (int i = 0; i < n; ++i) {
        start.start.push_back(free[i].value(start_points[k][i]));
        start.end.push_back(free[i].value(residuals.best_theta()[i]));
      }
      start.rms = residuals.best_rms();
      start.stop = stop_of(status);
      start.simulations = residuals.simulations() - before;
      start.criterion = criterion_of(status, ftol, xtol, start.simulations);
      result.starts.push_back(start);
      if (best < 0 || start.rms < result.starts[best].rms) best = static_cast<int>(k);
    }
  } catch (const Cancelled&) {
    result.cancelled = true;
    result.stop = FitStop::cancelled;
    result.message = "cancelled; the best values so far are reported";
  }
  Eigen::VectorXd theta = residuals.overall_theta();
  result.rms = residuals.overall_rms();

  // Standard errors from the Jacobian at the solution: cov = s^2 (J^T J)^-1,
  // s^2 = RSS / (n - p) (the usual linearised least-squares estimate), taken
  // through an SVD so that a direction the trace cannot see shows up as a
  // vanishing singular value instead of a numerical blow-up. The same SVD
  // gives the Gauss-Newton step still left, |U^T r| / s in standard errors.
  Eigen::VectorXd variance = Eigen::VectorXd::Constant(n, std::numeric_limits<double>::infinity());
  Eigen::VectorXd column_norm = Eigen::VectorXd::Zero(n);
  Eigen::VectorXd at_solution;
  const auto assess = [&] {
    Eigen::MatrixXd jacobian;
    residuals(theta, at_solution);
    residuals.df(theta, jacobian);
    const double dof = std::max(1, result.samples - n);
    const double s2 = result.rms * result.rms * result.samples / dof;
    column_norm = jacobian.colwise().norm().transpose();
    const Eigen::JacobiSVD<Eigen::MatrixXd> svd(jacobian, Eigen::ComputeThinU | Eigen::ComputeThinV);
    const Eigen::VectorXd sv = svd.singularValues();
    const double cutoff = 1e-8 * sv.maxCoeff();
    variance.setZero();
    double projected = 0.0;
    for (int k = 0; k < sv.size(); ++k) {
      const double inverse_square = sv[k] > cutoff ? 1.0 / (sv[k] * sv[k]) : std::numeric_limits<double>::infinity();
      if (sv[k] > cutoff) projected += std::pow(svd.matrixU().col(k).dot(at_solution), 2);
      for (int i = 0; i < n; ++i) {
        const double weight = svd.matrixV()(i, k) * svd.matrixV()(i, k);
        if (weight > 1e-12) variance[i] += s2 * weight * inverse_square;
      }
    }
    result.remaining_step = s2 > 0.0 ? std::sqrt(projected / s2) : 0.0;
  };
  if (!result.cancelled) {
    try {
      assess();
      // A search that met its criterion short of the minimum (the trust
      // region shrank on an inexact Jacobian) is continued from where it
      // stopped, at most twice.
      FitStart& chosen = result.starts[static_cast<std::size_t>(best)];
      for (int again = 0; again < 2 && result.remaining_step > kStalledStep && chosen.stop != FitStop::iteration_limit;
           ++again) {
        const int before = residuals.simulations();
        search(theta);
        if (residuals.best_rms() < result.rms) {
          theta = residuals.best_theta();
          result.rms = residuals.best_rms();
        }
        chosen.simulations += residuals.simulations() - before;
        chosen.stop = stop_of(status);
        chosen.criterion = criterion_of(status, ftol, xtol, chosen.simulations) + "; continued " +
                           std::to_string(again + 1) + " time(s) from where it stalled";
        for (int i = 0; i < n; ++i) chosen.end[static_cast<std::size_t>(i)] = free[i].value(theta[i]);
        chosen.rms = result.rms;
        assess();
      }
    } catch (const Cancelled&) {
      result.cancelled = true;
      result.stop = FitStop::cancelled;
      result.message = "cancelled; the best values so far are reported";
      theta = residuals.overall_theta();
      result.rms = residuals.overall_rms();
    }
  }
  result.simulations = residuals.simulations();
  result.fitted = residuals.with(theta);
  result.fitted.settings.sample_interval = scenario.settings.sample_interval;
  for (int i = 0; i < n; ++i) {
    const FreeParameter& f = residuals.free()[i];
    FittedParameter out;
    out.key = std::string(f.spec->key);
    out.initial = f.initial;
    out.value = f.value(theta[i]);
    out.standard_error = std::sqrt(variance[i]) * f.slope(theta[i]);
    // A parameter the pressure hardly responds to, or one known no better
    // than its own size, cannot be told from this trace.
    const double relative = out.standard_error / std::max(std::abs(out.value), 1e-300);
    const double rms_sensitivity = column_norm[i] / std::sqrt(static_cast<double>(result.samples));
    if (!std::isfinite(out.standard_error) || rms_sensitivity < minimum_sensitivity || relative > 1.0) {
      out.identifiable = false;
      out.note = "not identifiable from this trace: the pressure barely depends on it here";
    } else if (out.value <= f.spec->range.min || out.value >= f.spec->range.max) {
      out.note = "at the limit of its valid range";
    }
    result.parameters.push_back(out);
  }
  if (result.cancelled) return result;

  // How the best start stopped, checked: a criterion met with the minimum
  // still a good part of a standard error away is a stall, not convergence.
  FitStart& chosen = result.starts[static_cast<std::size_t>(best)];
  result.stop = chosen.stop;
  if (result.stop != FitStop::iteration_limit && result.remaining_step > kStalledStep) result.stop = FitStop::stalled;
  result.converged =
      result.stop == FitStop::gradient || result.stop == FitStop::step || result.stop == FitStop::cost_change;
  if (result.converged)
    result.message = "converged (" + chosen.criterion + ")";
  else if (result.stop == FitStop::stalled)
    result.message = "stalled (" + chosen.criterion + "), but the minimum is still " +
                     number(result.remaining_step, 2) +
                     " standard errors away: not converged; try other starting values or fewer free parameters";
  else
    result.message = "not converged (" + chosen.criterion + ")";

  // Do the starts agree? Each identifiable parameter within kSameMinimum
  // standard errors of the best start's value.
  std::string disagree;
  for (std::size_t k = 0; k < result.starts.size(); ++k) {
    FitStart& st = result.starts[k];
    for (int i = 0; i < n; ++i) {
      const FittedParameter& p = result.parameters[static_cast<std::size_t>(i)];
      if (!p.identifiable) continue;
      if (std::abs(st.end[i] - p.value) > kSameMinimum * p.standard_error) st.same_minimum = false;
    }
    if (!st.same_minimum) {
      result.starts_agree = false;
      std::ostringstream o;
      o << (disagree.empty() ? "" : "; ") << "start " << k + 1 << " ended at";
      for (int i = 0; i < n; ++i) {
        const ParameterSpec& spec = *free[i].spec;
        const double reach = 1e-6 * std::max(std::abs(free[i].initial), free[i].scale);
        const bool edge = st.end[i] <= spec.range.min + reach || st.end[i] >= spec.range.max - reach;
        o << (i ? "," : "") << " " << result.parameters[i].key << " " << number(st.end[i], 4)
          << (edge ? " (at the edge of its valid range)" : "");
      }
      o << " with rms " << number(st.rms / 1e5, 3) << " bar (" << to_string(st.stop) << ")";
      disagree += o.str();
    }
  }
  if (result.starts.size() > 1)
    result.starts_note = result.starts_agree
                             ? "all " + std::to_string(result.starts.size()) + " starts ended in the same minimum"
                             : "the starts disagree (local minima): " + disagree + "; the lowest residual is reported";

  // The verdict: the residual against the recording's own noise.
  if (result.noise > 0.0) {
    result.residual_to_noise = result.rms / result.noise;
    const std::string ratio = number(result.residual_to_noise, 3) + " times the recording's noise (" +
                              number(result.noise / 1e5, 3) + " bar)";
    if (result.residual_to_noise <= fits_within_noise_limit(result.samples)) {
      result.verdict = FitVerdict::reproduces;
      result.verdict_text = "the model reproduces the recording: the rms residual is " + ratio;
    } else if (result.residual_to_noise <= kDoesNotFit) {
      result.verdict = FitVerdict::systematic_difference;
      result.verdict_text = "systematic differences remain: the rms residual is " + ratio +
                            " (ripple, an offset or dynamics the model lacks); the standard errors, which assume "
                            "independent noise, are too small";
    } else {
      result.verdict = FitVerdict::does_not_fit;
      result.verdict_text = "the model does not fit this machine: the rms residual is " + ratio +
                            "; the fitted values are not this machine's. Check that the scenario is the machine "
                            "(settings, volumes, events and their times) before trusting any of them";
    }
  } else {
    result.verdict_text = "the recording's noise could not be measured (fewer than 9 samples or a constant trace)";
  }

  // The fitted pressure at the recording's samples, to show over it.
  result.times = times;
  result.measured = measured;
  result.simulated.resize(times.size());
  for (std::size_t i = 0; i < times.size(); ++i)
    result.simulated[i] = at_solution[static_cast<Eigen::Index>(i)] + measured[i];
  return result;
}

}  // namespace swashtune
