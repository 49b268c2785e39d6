// A volume of oil (the line, the control chamber, the control port) with
// cavitation and air release: the fluid element of the v2 model.
//
// Vapour floor: each volume's pressure state psi is the pressure while the
// oil is liquid; below vapour pressure the pressure stays at p_v and the
// state goes on integrating the flow deficit, so that (p_v - psi) V / beta
// is the volume of the vapour cavity. This is the discrete vapour cavity
// model of water hammer (Wylie and Streeter, Fluid Transients in Systems,
// 1993, ch. 8) in lumped form; the switch is smoothed over a few kPa so the
// stiff integrator and the Jacobian see a smooth right-hand side. Without
// cavitation (fluid.cavitation = false) the pressure is psi (v1).
//
// Air release: below the saturation pressure p_sat the oil can hold only
// alpha p_abs / p_sat of air (Henry's law, alpha the air dissolved at
// saturation as volume at atmospheric pressure per oil volume), so the
// rest comes out of solution with a first-order lag (release time) and
// dissolves again, more slowly (absorption time), above it. The released
// air r (as volume at atmospheric pressure per node volume) adds to the
// entrained air in the effective bulk modulus and, as it comes out, to the
// volume balance of the node.
#pragma once

#include <cmath>

#include "swashtune/fluid.hpp"
#include "swashtune/parameters.hpp"

namespace swashtune {

// w ln(1 + e^(z/w)): a max(0, z) rounded over a width w; exact (to double
// precision) for |z| > 40 w. T may be an automatic-differentiation scalar.
template <class T>
T smooth_positive_part(const T& z, double w) {
  using std::exp;
  using std::log;
  const T s = z / w;
  if (s > 40.0) return z;
  if (s < -40.0) return T(0.0);
  return T(w * log(T(1.0 + exp(s))));
}

// Air taken at atmospheric pressure, at the gauge pressure p (p V^n =
// const): the absolute pressure (floored as in fluid.hpp) and the factor
// (p_atm / p_abs)^(1/n) by which its volume shrinks. Computed once per
// volume and shared by the bulk modulus and the release rate.
template <class T>
struct AirAtPressure {
  T absolute;
  T expansion;
};

template <class T>
AirAtPressure<T> air_at_pressure(const T& gauge_pressure, double polytropic_index) {
  using std::pow;
  T p_abs = gauge_pressure + atmospheric_pressure;
  if (p_abs < minimum_absolute_pressure) p_abs = T(minimum_absolute_pressure);
  return {p_abs, T(pow(T(atmospheric_pressure / p_abs), 1.0 / polytropic_index))};
}

// Effective bulk modulus with a free-air fraction x (at atmospheric
// pressure) that may itself be a state: fluid.hpp's law with x a T, at the
// air's state `at` of the volume's pressure.
template <class T>
T bulk_modulus_with_air(const AirAtPressure<T>& at, double beta_oil, const T& air_fraction, double polytropic_index) {
  if (air_fraction == 0.0) return T(beta_oil);
  const T air = air_fraction * at.expansion;
  const T oil = 1.0 - air_fraction;
  const T compliance = (oil / beta_oil + air / (polytropic_index * at.absolute)) / (oil + air);
  return 1.0 / compliance;
}

struct CavitationElement {
  bool on = false;
  double vapour_gauge = 0.0;         // p_v - p_atm, Pa
  double dissolved_air = 0.0;        // alpha
  double saturation_absolute = 0.0;  // Pa
  double release_rate = 0.0;         // 1/s
  double absorption_rate = 0.0;      // 1/s
  double polytropic_index = 1.4;

  static constexpr double floor_width = 2e3;        // Pa over which the vapour floor is rounded
  static constexpr double saturation_width = 0.01;  // of p_sat, rounding of Henry's law's kink
  static constexpr double direction_width = 1e-7;   // of alpha, the switch between release and absorption

  CavitationElement() = default;
  explicit CavitationElement(const ModelParameters& p)
      : on(p.cavitation),
        vapour_gauge(p.vapour_pressure - atmospheric_pressure),
        dissolved_air(p.dissolved_air),
        saturation_absolute(p.saturation_pressure),
        release_rate(1.0 / p.air_release_time),
        absorption_rate(1.0 / p.air_absorption_time),
        polytropic_index(p.polytropic_index) {}

  // The pressure of a volume whose state is psi (gauge, Pa).
  template <class T>
  T pressure(const T& psi) const {
    if (!on) return psi;
    return T(vapour_gauge + smooth_positive_part(T(psi - vapour_gauge), floor_width));
  }

  // Released air at equilibrium with the pressure p (gauge).
  template <class T>
  T equilibrium_air(const T& p) const {
    const T deficit = 1.0 - (p + atmospheric_pressure) / saturation_absolute;
    return dissolved_air * smooth_positive_part(deficit, saturation_width);
  }

  // dr/dt of the released air r at pressure p.
  template <class T>
  T air_rate(const T& p, const T& r) const {
    using std::exp;
    const T gap = equilibrium_air(p) - r;
    // Release when below equilibrium, absorption above, blended smoothly.
    const T s = gap / (direction_width * dissolved_air + 1e-15);
    const T releasing = s > 40.0 ? T(1.0) : (s < -40.0 ? T(0.0) : T(1.0 / (1.0 + exp(T(-s)))));
    return gap * (absorption_rate + (release_rate - absorption_rate) * releasing);
  }

  // Volume per second that air coming out of solution adds to a volume V at
  // pressure p (the released air expands to the local pressure).
  template <class T>
  T released_volume_rate(const AirAtPressure<T>& at, const T& r_rate, const T& volume) const {
    return volume * r_rate * at.expansion;
  }
};

}  // namespace swashtune
