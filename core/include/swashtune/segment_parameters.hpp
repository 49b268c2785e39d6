// The parameters within one stretch between schedule corners, where every
// scheduled parameter is linear in time: evaluated cheaply at any t without
// ever seeing a step that happens at the stretch's end. Shared by the
// integrator and the CVODE benchmark peer.
#pragma once

#include <vector>

#include "swashtune/model.hpp"
#include "swashtune/schedule.hpp"

namespace swashtune {

class SegmentParameters {
 public:
  explicit SegmentParameters(const Schedule& schedule);

  // Starts the stretch [t0, t1) (t1 may be +infinity: nothing changes).
  void begin(double t0, double t1);

  const ModelParameters& params(double t);
  const Derived& derived(double t);
  bool ramping() const { return !ramps_.empty(); }
  // d/dt of one parameter within the stretch (0 when it does not ramp).
  double slope(double ModelParameters::*field) const;

 private:
  struct Ramp {
    const ParameterSpec* spec;
    double start;
    double slope;
  };
  const Schedule& schedule_;
  double segment_start_ = 0.0;
  std::vector<Ramp> ramps_;
  ModelParameters params_;
  Derived derived_;
  double params_time_ = 0.0;
};

}  // namespace swashtune
