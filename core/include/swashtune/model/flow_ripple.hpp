// The kinematic flow ripple of z pistons: each piston in the discharge half
// of its revolution delivers in proportion to sin(theta_j), so the
// geometric flow is the mean flow times
//   r(theta) = (pi / z) * sum_j max(0, sin(theta + 2 pi j / z)),
// whose mean is 1. Its ripple has the period 2 pi / (2z) of shaft angle for
// odd z, 2 pi / z for even z, and a peak-to-peak of (pi / 2z) tan(pi / 4z)
// (odd) or (pi / z) tan(pi / 2z) (even) of the mean flow (the kinematics of
// axial piston machines, e.g. Ivantysyn and Ivantysynova, Hydrostatic Pumps
// and Motors, 2001). It adds the shaft angle as a state; pump.flow_ripple =
// false removes it (v1: the mean flow).
#pragma once

#include <cmath>

#include "swashtune/model/layout.hpp"
#include "swashtune/parameters.hpp"

namespace swashtune {

struct FlowRippleElement {
  bool present = false;
  int pistons = 9;
  double shaft_speed = 0.0;  // rad/s

  FlowRippleElement() = default;
  explicit FlowRippleElement(const ModelParameters& p)
      : present(p.flow_ripple),
        pistons(static_cast<int>(std::lround(p.pistons))),
        shaft_speed(2.0 * 3.14159265358979323846 * p.speed / 60.0) {}

  void add_states(Layout& layout) const {
    if (present) layout.shaft_angle = layout.add();
  }

  template <class T>
  T factor(const T& shaft_angle) const {
    using std::sin;
    constexpr double two_pi = 2.0 * 3.14159265358979323846;
    T sum(0.0);
    for (int j = 0; j < pistons; ++j) {
      const T s = sin(T(shaft_angle + two_pi * j / pistons));
      if (s > 0.0) sum += s;
    }
    return T(3.14159265358979323846 / pistons * sum);
  }
};

}  // namespace swashtune
