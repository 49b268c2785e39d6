#include "swashtune/fit.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <unsupported/Eigen/LevenbergMarquardt>

#include "swashtune/metrics.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune {
namespace {

// The search works in theta: log(v / v0) for a positive parameter whose
// range cannot reach zero from it, (v - v0) / scale otherwise, so that every
// free parameter moves on a comparable scale whatever its unit.
struct FreeParameter {
  const ParameterSpec* spec;
  double initial;
  bool logarithmic;
  double scale;

  double value(double theta) const {
    const double v = logarithmic ? initial * std::exp(theta) : initial + scale * theta;
    return std::clamp(v, spec->range.min, spec->range.max);
  }
  // dv/dtheta at theta, for carrying standard errors back to the parameter.
  double slope(double theta) const { return logarithmic ? value(theta) : scale; }
};

struct Cancelled {};

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
      const double h = 1e-4 * std::max(1.0, std::abs(theta[j]));
      t[j] += h;
      (*this)(t, shifted);
      jacobian.col(j) = (shifted - base) / h;
    }
    return 0;
  }

  int simulations() const { return simulations_; }
  double best_rms() const { return best_rms_; }
  const InputType& best_theta() const { return best_theta_; }
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
};

}  // namespace

FitResult fit_to_trace(const Scenario& scenario, const FieldTrace& trace, const FitOptions& options,
                       const FitProgress& progress) {
  if (options.free_keys.empty()) throw ScenarioError("fit: name at least one parameter to estimate");
  std::vector<FreeParameter> free;
  for (const std::string& key : options.free_keys) {
    const ParameterSpec* spec = find_parameter(key);
    if (!spec || spec->is_flag()) throw ScenarioError("fit: \"" + key + "\" is not a numeric model parameter");
    for (const FreeParameter& f : free)
      if (f.spec == spec) throw ScenarioError("fit: \"" + key + "\" is named twice");
    const double v0 = spec->get(scenario.parameters);
    const bool logarithmic = v0 > 0.0 && spec->range.min >= 0.0;
    const double scale = std::max({std::abs(v0), 1e-3 * (spec->range.max - spec->range.min), 1e-12});
    free.push_back(FreeParameter{spec, v0, logarithmic, scale});
  }
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

  TraceResiduals residuals(base, free, times, measured, progress);
  const int n = static_cast<int>(free.size());
  Eigen::VectorXd theta = Eigen::VectorXd::Zero(n);
  FitResult result;
  result.samples = static_cast<int>(times.size());
  Eigen::LevenbergMarquardt<TraceResiduals> lm(residuals);
  lm.setMaxfev(options.max_iterations * (n + 1));
  lm.setXtol(1e-8);
  lm.setFtol(1e-10);
  try {
    Eigen::VectorXd r0;
    residuals(theta, r0);
    result.initial_rms = std::sqrt(r0.squaredNorm() / r0.size());
    const auto status = lm.minimize(theta);
    using namespace Eigen::LevenbergMarquardtSpace;
    result.converged = status == RelativeReductionTooSmall || status == RelativeErrorTooSmall ||
                       status == RelativeErrorAndReductionTooSmall || status == CosinusTooSmall ||
                       status == FtolTooSmall || status == XtolTooSmall || status == GtolTooSmall;
    result.message = result.converged ? "converged" : "stopped after the iteration limit";
  } catch (const Cancelled&) {
    result.cancelled = true;
    result.message = "cancelled; the best values so far are reported";
  }
  theta = residuals.best_theta();
  result.rms = residuals.best_rms();

  // Standard errors from the Jacobian at the solution: cov = s^2 (J^T J)^-1,
  // s^2 = RSS / (n - p) (the usual linearised least-squares estimate), taken
  // through an SVD so that a direction the trace cannot see shows up as a
  // vanishing singular value instead of a numerical blow-up.
  Eigen::MatrixXd jacobian;
  if (!result.cancelled) residuals.df(theta, jacobian);
  const double dof = std::max(1, result.samples - n);
  const double s2 = result.rms * result.rms * result.samples / dof;
  Eigen::VectorXd variance = Eigen::VectorXd::Constant(n, std::numeric_limits<double>::infinity());
  Eigen::VectorXd column_norm = Eigen::VectorXd::Zero(n);
  if (jacobian.size() > 0) {
    column_norm = jacobian.colwise().norm().transpose();
    const Eigen::JacobiSVD<Eigen::MatrixXd> svd(jacobian, Eigen::ComputeThinV);
    const Eigen::VectorXd sv = svd.singularValues();
    const double cutoff = 1e-8 * sv.maxCoeff();
    variance.setZero();
    for (int k = 0; k < sv.size(); ++k) {
      const double inverse_square = sv[k] > cutoff ? 1.0 / (sv[k] * sv[k]) : std::numeric_limits<double>::infinity();
      for (int i = 0; i < n; ++i) {
        const double weight = svd.matrixV()(i, k) * svd.matrixV()(i, k);
        if (weight > 1e-12) variance[i] += s2 * weight * inverse_square;
      }
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
  return result;
}

}  // namespace swashtune
