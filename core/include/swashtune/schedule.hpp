// Parameters as piecewise-linear functions of time, built from events. The
// simulator integrates between corners (ramp starts and ends) so the solver
// never steps across a kink. Events may be appended while a run is under way
// (live sessions), as long as they do not start before the present time.
#pragma once

#include <limits>
#include <vector>

#include "swashtune/parameters.hpp"
#include "swashtune/scenario.hpp"

namespace swashtune {

class Schedule {
 public:
  explicit Schedule(const ModelParameters& initial) : initial_(initial) {}

  // Adds an event. Events must come in non-decreasing time order; an event
  // supersedes whatever an earlier one on the same key was still doing.
  // Throws std::invalid_argument for an unknown or non-numeric key.
  void add(const Event& event);

  ModelParameters at(double t) const;

  // The first corner strictly after t (+infinity when none).
  double next_corner_after(double t) const;

  // True when some parameter changes anywhere in (t0, t1).
  bool varies_between(double t0, double t1) const;

  const ModelParameters& initial() const { return initial_; }

 private:
  struct Knot {
    double t;
    double value;
  };
  struct Track {
    const ParameterSpec* spec;
    std::vector<Knot> knots;  // times non-decreasing; equal times make a step
    double value_at(double t) const;
  };

  ModelParameters initial_;
  std::vector<Track> tracks_;
};

}  // namespace swashtune
