#include "swashtune/segment_parameters.hpp"

#include <cmath>

namespace swashtune {

SegmentParameters::SegmentParameters(const Schedule& schedule)
    : schedule_(schedule), params_(schedule.initial()), derived_(params_) {}

void SegmentParameters::begin(double t0, double t1) {
  segment_start_ = t0;
  ramps_.clear();
  params_ = schedule_.at(t0);
  if (std::isfinite(t1) && t1 > t0 && schedule_.varies_between(t0, t1)) {
    // Slopes from the start and the midpoint, both strictly inside the
    // stretch's own linear piece (a step at t1 must not leak in).
    const double tm = 0.5 * (t0 + t1);
    const ModelParameters mid = schedule_.at(tm);
    for (const ParameterSpec& spec : parameter_registry()) {
      if (spec.is_flag()) continue;
      const double v0 = spec.get(params_);
      const double vm = spec.get(mid);
      if (v0 != vm) ramps_.push_back(Ramp{&spec, v0, (vm - v0) / (tm - t0)});
    }
  }
  derived_ = Derived(params_);
  params_time_ = t0;
}

double SegmentParameters::slope(double ModelParameters::*field) const {
  for (const Ramp& r : ramps_)
    if (r.spec->field == field) return r.slope;
  return 0.0;
}

const ModelParameters& SegmentParameters::params(double t) {
  if (!ramps_.empty() && t != params_time_) {
    for (const Ramp& r : ramps_) r.spec->set(params_, r.start + r.slope * (t - segment_start_));
    derived_ = Derived(params_);
    params_time_ = t;
  }
  return params_;
}

const Derived& SegmentParameters::derived(double t) {
  params(t);
  return derived_;
}

}  // namespace swashtune
