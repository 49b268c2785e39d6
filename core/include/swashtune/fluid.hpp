// Fluid properties: effective bulk modulus with entrained air.
#pragma once

#include <cmath>

namespace swashtune {

inline constexpr double atmospheric_pressure = 101325.0;  // Pa, standard atmosphere
inline constexpr double minimum_absolute_pressure = 1e3;  // Pa, floor of the air model

// Effective bulk modulus of oil carrying a volume fraction x_a of undissolved
// air (measured at atmospheric pressure), the air following p V^n = const:
//   v_a(p)   = x_a (p_atm / p_abs)^(1/n)
//   1/beta_e = ((1 - x_a)/beta_oil + v_a/(n p_abs)) / ((1 - x_a) + v_a)
// (series compliances of oil and air; Merritt, Hydraulic Control Systems,
// 1967, ch. 2). T may be an automatic-differentiation scalar.
template <class T>
T effective_bulk_modulus(const T& gauge_pressure, double beta_oil, double air_fraction, double polytropic_index) {
  if (air_fraction <= 0.0) return T(beta_oil);
  using std::pow;
  T p_abs = gauge_pressure + atmospheric_pressure;
  if (p_abs < minimum_absolute_pressure) p_abs = T(minimum_absolute_pressure);
  const T air = air_fraction * pow(atmospheric_pressure / p_abs, 1.0 / polytropic_index);
  const double oil = 1.0 - air_fraction;
  const T compliance = (oil / beta_oil + air / (polytropic_index * p_abs)) / (oil + air);
  return 1.0 / compliance;
}

}  // namespace swashtune
