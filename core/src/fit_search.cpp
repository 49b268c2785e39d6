#include "fit_search.hpp"

#include <stdexcept>

#include "swashtune/scenario.hpp"
#include "text_helpers.hpp"

namespace swashtune::fitting {

std::vector<FreeParameter> free_parameters(const std::vector<std::string>& keys, const ModelParameters& p,
                                           const std::string& command) {
  std::vector<FreeParameter> free;
  for (const std::string& key : keys) {
    const ParameterSpec* spec = find_parameter(key);
    if (!spec || spec->is_flag()) {
      std::vector<std::string> numeric;
      for (const ParameterSpec& candidate : parameter_registry())
        if (!candidate.is_flag()) numeric.emplace_back(candidate.key);
      throw ScenarioError(command + ": \"" + key + "\" is not a numeric model parameter" +
                          detail::did_you_mean(key, numeric));
    }
    for (const FreeParameter& f : free)
      if (f.spec == spec) throw ScenarioError(command + ": \"" + key + "\" is named twice");
    const double v0 = spec->get(p);
    const bool logarithmic = v0 > 0.0 && spec->range.min >= 0.0;
    const double scale = std::max({std::abs(v0), 1e-3 * (spec->range.max - spec->range.min), 1e-12});
    free.push_back(FreeParameter{spec, v0, logarithmic, scale});
  }
  return free;
}

std::vector<Eigen::VectorXd> start_points(const std::vector<FreeParameter>& free, int starts) {
  const int n = static_cast<int>(free.size());
  std::vector<Eigen::VectorXd> points{Eigen::VectorXd::Zero(n)};
  for (int k = 1; k < starts; ++k) {
    Eigen::VectorXd theta(n);
    for (int i = 0; i < n; ++i) {
      const int others = starts - 1;
      const double f = (((k - 1 + i) % others) + 0.5) / others;
      theta[i] = free[i].theta_of(free[i].start_at(f));
    }
    points.push_back(theta);
  }
  return points;
}

// MINPACK's stopping tests as Eigen reports them (Eigen's
// LevenbergMarquardt is a port of MINPACK's lmder; More, Garbow & Hillstrom,
// User Guide for MINPACK-1, 1980, section 2.3).
FitStop stop_of(Eigen::LevenbergMarquardtSpace::Status status) {
  using namespace Eigen::LevenbergMarquardtSpace;
  switch (status) {
    case RelativeReductionTooSmall:
    case RelativeErrorAndReductionTooSmall:  // both; the cost is the stronger statement
    case FtolTooSmall:
      return FitStop::cost_change;
    case RelativeErrorTooSmall:
    case XtolTooSmall:
      return FitStop::step;
    case CosinusTooSmall:
    case GtolTooSmall:
      return FitStop::gradient;
    default:
      return FitStop::iteration_limit;
  }
}

std::string criterion_of(Eigen::LevenbergMarquardtSpace::Status status, double ftol, double xtol, int simulations) {
  using namespace Eigen::LevenbergMarquardtSpace;
  std::ostringstream o;
  switch (status) {
    case RelativeReductionTooSmall:
      o << "cost change: the sum of squares fell by less than " << ftol << " relative, as predicted";
      break;
    case RelativeErrorAndReductionTooSmall:
      o << "cost change and step: the sum of squares fell by less than " << ftol << " relative and the step was below "
        << xtol << " of the parameters";
      break;
    case FtolTooSmall:
      o << "cost change: no further reduction of the sum of squares is possible at machine precision";
      break;
    case RelativeErrorTooSmall:
      o << "step: the last step changed the parameters by less than " << xtol << " relative";
      break;
    case XtolTooSmall:
      o << "step: no further change of the parameters is possible at machine precision";
      break;
    case CosinusTooSmall:
    case GtolTooSmall:
      o << "gradient: the residual is orthogonal to every column of the Jacobian";
      break;
    default:
      o << "iteration limit: " << simulations << " simulations without meeting a criterion";
  }
  return o.str();
}

std::string number(double v, int digits) {
  std::ostringstream o;
  o.precision(digits);
  o << v;
  return o.str();
}

}  // namespace swashtune::fitting
