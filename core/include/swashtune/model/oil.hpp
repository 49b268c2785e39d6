// The oil's viscosity and density at its temperature.
//
// Kinematic viscosity follows the Walther form of ASTM D341,
//   log10 log10(nu + 0.7) = A - B log10 T   (nu in mm^2/s, T in K),
// through the viscosities at 40 degC and 100 degC. The 100 degC viscosity is
// given, or found from the ISO 3448 grade (nu at 40 degC) and the viscosity
// index by inverting ASTM D2270 (its Table 1 of L and H values below
// 70 mm^2/s, its equations above). Density falls with a constant volumetric
// thermal expansion coefficient from its value at 40 degC.
#pragma once

namespace swashtune {

inline constexpr double reference_temperature_c = 40.0;  // degC, where the model's coefficients are given

// ASTM D2270 viscosity index of an oil with these viscosities (mm^2/s) at
// 40 and 100 degC (procedure A up to VI 100, procedure B above). Throws
// std::domain_error when nu_100 < 2 mm^2/s (the standard's range).
double viscosity_index(double nu_40, double nu_100);

// The 100 degC viscosity (mm^2/s) of an oil with viscosity nu_40 at 40 degC
// and the given viscosity index (inverse of viscosity_index()). Throws
// std::domain_error when no oil of that index has that 40 degC viscosity.
double viscosity_at_100c_from_index(double nu_40, double index);

// Kinematic viscosity (mm^2/s) at temperature t_c (degC) by ASTM D341
// through nu_40 and nu_100 (T = t + 273.15).
double walther_viscosity(double nu_40, double nu_100, double t_c);

// The oil at one temperature, relative to 40 degC.
struct OilState {
  double kinematic_viscosity = 0.0;  // mm^2/s at the temperature
  double viscosity_at_100c = 0.0;    // mm^2/s, given or from the index
  double density = 0.0;              // kg/m^3 at the temperature
  // Dynamic viscosity over its value at 40 degC: viscous damping scales
  // with it, laminar leakage with its inverse.
  double viscosity_ratio = 1.0;
};

// nu_100 <= 0 means "not given: from the index". Results are cached for the
// last inputs (a temperature ramp recomputes only the Walther step).
OilState oil_state(double grade_nu_40, double index, double nu_100, double density_40, double expansion_per_k,
                   double temperature_c);

}  // namespace swashtune
