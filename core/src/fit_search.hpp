// What the fits share (fit.cpp to a recording, datasheet.cpp to published
// figures): the free parameters' scaling and start points, and MINPACK's
// stopping tests in words.
#pragma once

#include <unsupported/Eigen/LevenbergMarquardt>
#include <algorithm>
#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "swashtune/fit.hpp"
#include "swashtune/parameters.hpp"

namespace swashtune::fitting {

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
  double theta_of(double v) const { return logarithmic ? std::log(v / initial) : (v - initial) / scale; }

  // The value at fraction f of the span the restarts are spread over: a
  // factor of ten either way for a logarithmic parameter, else the initial
  // value +- the larger of its size and a tenth of its valid range; both
  // inside the valid range.
  double start_at(double f) const {
    const double lo_limit = spec->range.min, hi_limit = spec->range.max;
    if (logarithmic) {
      const double lo = std::max(initial / 10.0, lo_limit > 0.0 ? lo_limit : initial / 10.0);
      const double hi = std::min(initial * 10.0, hi_limit);
      return lo * std::pow(hi / lo, f);
    }
    double reach = std::abs(initial);
    if (std::isfinite(hi_limit - lo_limit)) reach = std::max(reach, 0.1 * (hi_limit - lo_limit));
    if (reach <= 0.0) reach = scale;
    const double lo = std::max(lo_limit, initial - reach), hi = std::min(hi_limit, initial + reach);
    return lo + f * (hi - lo);
  }
};

// The free parameters named by keys, each at its value in p. `command`
// ("fit") starts the messages.
std::vector<FreeParameter> free_parameters(const std::vector<std::string>& keys, const ModelParameters& p,
                                           const std::string& command);

// Parameter i of start k (k >= 1) at fraction ((k - 1 + i) mod (starts - 1)
// + 0.5) / (starts - 1) of its start span, so that no two parameters move
// together; start 0 is the given values.
std::vector<Eigen::VectorXd> start_points(const std::vector<FreeParameter>& free, int starts);

struct Cancelled {};

FitStop stop_of(Eigen::LevenbergMarquardtSpace::Status status);
std::string criterion_of(Eigen::LevenbergMarquardtSpace::Status status, double ftol, double xtol, int simulations);
std::string number(double v, int digits = 3);

}  // namespace swashtune::fitting
