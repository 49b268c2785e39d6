// The model's building blocks against outside laws and hand-worked values.
#include <gtest/gtest.h>

#include <cmath>

#include "swashtune/fluid.hpp"
#include "swashtune/model.hpp"
#include "swashtune/parameters.hpp"
#include "v1_pump.hpp"

using namespace swashtune;

namespace {
double classic_orifice(double cd, double area, double dp, double rho) { return cd * area * std::sqrt(2.0 * dp / rho); }
}  // namespace

// Q = Cd A sqrt(2 dp / rho), Merritt, Hydraulic Control Systems, 1967, ch. 3.
// Computed from that law: Cd 0.61, d = 1 mm, dp = 100 bar,
// rho = 870 -> 4.36 L/min.
TEST(OrificeLaw, MatchesClassicTurbulentLawFarAboveTransition) {
  const double area = pi / 4.0 * 1e-3 * 1e-3;
  const double q = orifice_flow(0.61, area, 100e5, 870.0, 1e4);
  EXPECT_NEAR(q * 6e4, 4.36, 0.005);
  for (double dp : {1e6, 5e6, 2e7, 3.5e7}) {
    const double classic = classic_orifice(0.7, 20e-6, dp, 870.0);
    // The regularised law differs by (1 + (dp_tr/dp)^2)^(-1/4): < 3e-5 at 10 bar.
    EXPECT_NEAR(orifice_flow(0.7, 20e-6, dp, 870.0, 1e4) / classic, 1.0, 3e-5) << dp;
    EXPECT_NEAR(orifice_flow(0.7, 20e-6, -dp, 870.0, 1e4) / classic, -1.0, 3e-5) << dp;
  }
}

TEST(OrificeLaw, IsLaminarAndFiniteNearZeroDrop) {
  // Near dp = 0 the law is linear in dp, so its slope (the Jacobian entry) is finite.
  const double k = 0.7 * 20e-6 * std::sqrt(2.0 / 870.0) / std::sqrt(1e4);
  EXPECT_NEAR(orifice_flow(0.7, 20e-6, 1.0, 870.0, 1e4), k * 1.0, 1e-12);
  EXPECT_EQ(orifice_flow(0.7, 20e-6, 0.0, 870.0, 1e4), 0.0);
}

// model.md's effective bulk modulus, worked by hand at two pressures for
// 1 % air at atmospheric pressure, n = 1.4, beta_oil = 1.6 GPa:
//   10 bar gauge: p_abs = 1.101325 MPa, v_a = 0.01 (0.101325/1.101325)^(1/1.4) = 1.8191e-3,
//     1/beta = (0.99/1.6e9 + 1.8191e-3/(1.4 x 1.101325e6)) / (0.99 + 1.8191e-3) = 1.8134e-9 -> 0.5514 GPa
//   100 bar gauge: p_abs = 10.101325 MPa, v_a = 3.7358e-4,
//     1/beta = (6.1875e-10 + 2.6417e-11) / 0.99037358 = 6.5144e-10 -> 1.5351 GPa
TEST(BulkModulus, EntrainedAirAtTwoPressuresMatchesHandWork) {
  EXPECT_NEAR(effective_bulk_modulus(10e5, 1.6e9, 0.01, 1.4) / 1e9, 0.5514, 0.0002);
  EXPECT_NEAR(effective_bulk_modulus(100e5, 1.6e9, 0.01, 1.4) / 1e9, 1.5351, 0.0002);
  EXPECT_EQ(effective_bulk_modulus(100e5, 1.6e9, 0.0, 1.4), 1.6e9);
}

// The same law in the series-compliance form of Merritt (Hydraulic Control
// Systems, 1967, ch. 2; from memory): 1/beta_e = 1/beta_oil + (V_air/V)/(n p_abs).
// Computed from it for 1 % air by volume at 7.1 MPa absolute:
// 0.492 GPa isothermal, 0.613 GPa adiabatic. model.md states its air
// fraction at atmospheric pressure, so give it the fraction x_a that has
// shrunk to 1 % of the mixture at 7.1 MPa: with s = (p_atm/p_abs)^(1/n),
// x_a s / ((1 - x_a) + x_a s) = 0.01  ->  x_a = 0.01 / (0.99 s + 0.01).
// The two forms differ only in counting the oil as 99 % or 100 % of the
// volume, which moves the result by under 0.5 %.
TEST(BulkModulus, AgreesWithSeriesComplianceFormAtPressure) {
  const double p_abs = 7.1e6;
  for (auto [n, expected] : {std::pair{1.0, 0.492}, std::pair{1.4, 0.613}}) {
    const double s = std::pow(atmospheric_pressure / p_abs, 1.0 / n);
    const double x_a = 0.01 / (0.99 * s + 0.01);
    const double beta = effective_bulk_modulus(p_abs - atmospheric_pressure, 1.6e9, x_a, n);
    EXPECT_NEAR(beta / 1e9 / expected, 1.0, 0.005) << "n = " << n;
  }
}

// With no air the line is a pure capacitance: dp/dt = beta Q / V (Merritt 1967).
TEST(Model, LineRatesFollowHydraulicCapacitance) {
  ModelParameters p = v1_pump();
  p.leakage_coefficient = 0.0;
  p.opening = 0.0;
  State x = zero_state(layout_of(p));
  x[state::swash_angle] = p.max_swash_angle;
  x[state::spool_position] = -p.spool_travel;  // compensator closed to the line
  StopModes modes{Stop::upper, Stop::lower};
  const State dx = derivatives(p, modes, x);
  const double q = p.displacement * p.speed / 60.0;
  EXPECT_NEAR(dx[state::discharge_pressure] / (p.bulk_modulus * q / p.line_volume), 1.0, 1e-12);
  EXPECT_EQ(dx[state::swash_angle], 0.0);  // held on its stop
}

// Forward-mode automatic differentiation agrees with central differences.
TEST(Model, JacobianMatchesFiniteDifferences) {
  ModelParameters p = v1_pump();
  p.air_fraction = 0.005;
  State x(state::core_size);
  x << 200e5, 25e5, 0.05, 1.5, 2e-5, 0.01;
  const StopModes modes;
  const Derived d(p);
  const Jacobian j = jacobian(p, d, modes, x);
  State scale(state::core_size);
  scale << 10.0, 10.0, 1e-7, 1e-5, 1e-10, 1e-7;
  for (int c = 0; c < state::core_size; ++c) {
    State up = x, down = x;
    up[c] += scale[c];
    down[c] -= scale[c];
    const State fd = (derivatives(p, modes, up) - derivatives(p, modes, down)) / (2.0 * scale[c]);
    for (int r = 0; r < state::core_size; ++r)
      EXPECT_NEAR(j(r, c), fd[r], 1e-5 * std::max(1.0, std::abs(fd[r]))) << "row " << r << " col " << c;
  }
}

// Steady flow force, computed from Merritt's
// F = 2 Cd Cv w x dp cos(69 deg) (ch. 5; from memory), 13.7 N for a 10 mm
// spool with a full-circumference port open 0.1 mm at 100 bar, Cd 0.61.
TEST(Model, FlowForceMatchesMerrittsLaw) {
  ModelParameters p = v1_pump();
  p.spool_discharge_coefficient = 0.61;
  p.port_width = pi * 0.010;
  p.underlap = 0.0;
  State x = zero_state(layout_of(p));
  x[state::discharge_pressure] = 100e5;
  x[state::spool_position] = 0.1e-3;
  const Derived d(p);
  const Flows f = flows<double>(p, d, x);
  EXPECT_NEAR(-spool_flow_force<double>(d, f), 13.7, 0.1);
}
