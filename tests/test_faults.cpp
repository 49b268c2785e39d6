// Fault conditions change the model in the physically expected direction and
// size, and leave it integrable.
#include <gtest/gtest.h>

#include <cmath>

#include "v1_pump.hpp"
#include "swashtune/analysis.hpp"
#include "swashtune/fluid.hpp"
#include "swashtune/metrics.hpp"

using namespace swashtune;

namespace {

ModelParameters deadhead() {
  ModelParameters p = v1_pump();
  p.opening = 0.0;
  return p;
}

State steady(const ModelParameters& p) {
  const OperatingPoint op = steady_state(p, default_settings());
  EXPECT_TRUE(op.converged);
  return op.condition.x;
}

}  // namespace

// Worn pump: at no flow the pump must make up its own leakage, so it holds a
// larger angle; the extra geometric flow equals the extra leakage (continuity).
TEST(Faults, WornPumpHoldsALargerAngleAtDeadhead) {
  ModelParameters p = deadhead();
  const State healthy = steady(p);
  p.fault_leakage_factor = 5.0;
  const State worn = steady(p);
  EXPECT_GT(worn[state::swash_angle], 2.0 * healthy[state::swash_angle]);
  const Flows f = flows(p, worn);
  EXPECT_NEAR(f.geometric, f.leakage + f.to_control, 1e-9);
  EXPECT_NEAR(f.leakage, 5.0 * p.leakage_coefficient * worn[state::discharge_pressure], 1e-12);
}

// Aerated oil: the line is softer. With the swash held at full stroke and the
// line closed, dp/dt = beta_e(p) Q / V (Merritt 1967) with beta_e from the
// entrained-air law at the present pressure.
TEST(Faults, EntrainedAirSoftensTheLineByTheAirLaw) {
  ModelParameters p = v1_pump();
  p.fault_entrained_air = 0.02;
  p.opening = 0.0;
  p.leakage_coefficient = 0.0;
  State x = zero_state(layout_of(p));
  x[state::discharge_pressure] = 20e5;
  x[state::swash_angle] = p.max_swash_angle;
  x[state::spool_position] = -p.spool_travel;
  const State rates = derivatives(p, StopModes{Stop::upper, Stop::lower}, x);
  // model.md's air law worked by hand: v_a = x_a (p_atm / p_abs)^(1/n),
  // 1/beta_e = ((1 - x_a)/beta_oil + v_a/(n p_abs)) / ((1 - x_a) + v_a).
  const double p_abs = 20e5 + 101325.0, x_a = 0.02, n = p.polytropic_index;
  const double v_a = x_a * std::pow(101325.0 / p_abs, 1.0 / n);
  const double beta = ((1 - x_a) + v_a) / ((1 - x_a) / p.bulk_modulus + v_a / (n * p_abs));
  EXPECT_LT(beta, 0.5 * p.bulk_modulus);  // 2 % air at 20 bar: far softer than oil
  EXPECT_NEAR(rates[state::discharge_pressure] / (beta * p.displacement * p.speed / 60 / p.line_volume), 1.0, 1e-12);
}

// Weak bias spring: the control piston balances the bias moment, so the
// control pressure at deadhead scales with the spring's strength.
TEST(Faults, WeakBiasSpringLowersControlPressure) {
  ModelParameters p = deadhead();
  const State healthy = steady(p);
  p.fault_bias_strength = 0.5;
  const State weak = steady(p);
  EXPECT_NEAR(weak[state::control_pressure] / healthy[state::control_pressure], 0.5, 0.02);
}

// Fatigued compensator spring: preload lost, so the no-flow pressure falls
// with it (the setting drifts down).
TEST(Faults, SpringFatigueLowersTheDeadheadPressure) {
  ModelParameters p = deadhead();
  p.fault_setting_drift = 0.1;
  EXPECT_NEAR(steady(p)[state::discharge_pressure] / (0.9 * p.setting), 1.0, 0.01);
}

// Raised case pressure: with the pump at full stroke the control chamber
// drains to the case, so it sits at the case pressure.
TEST(Faults, CasePressureHoldsTheControlChamberUp) {
  ModelParameters p = v1_pump();
  p.fault_case_pressure = 5e5;
  const State x = steady(p);
  EXPECT_NEAR(x[state::control_pressure], 5e5, 1e3);
}

// Clogged bleed: no bleed flow at all; worn: the orifice law through the
// enlarged area, Q = Cd f_b pi/4 d_b^2 sqrt(2 dp / rho) (Merritt 1967).
TEST(Faults, BleedFactorScalesTheBleedArea) {
  ModelParameters p = deadhead();
  p.temperature = 40.0;  // density as given
  const State x = steady(p);
  p.fault_bleed_area_factor = 0.0;
  EXPECT_EQ(flows(p, x).bleed, 0.0);
  p.fault_bleed_area_factor = 3.0;
  const double dp = x[state::control_pressure] - p.tank_pressure;
  ASSERT_GT(dp, 100 * p.transition_pressure);  // far into the turbulent law
  const double expected = p.spool_discharge_coefficient * 3.0 * pi / 4 * p.bleed_diameter * p.bleed_diameter *
                          std::sqrt(2 * dp / p.density);
  EXPECT_NEAR(flows(p, x).bleed / expected, 1.0, 1e-4);
}

// Undersized discharge volume: a stiffer line, less gain margin.
TEST(Faults, UndersizedLineLowersTheGainMargin) {
  ModelParameters p = deadhead();
  const StabilityReport healthy = analyse_stability(p, default_settings());
  p.fault_line_volume_factor = 0.3;
  const StabilityReport small = analyse_stability(p, default_settings());
  ASSERT_TRUE(healthy.margins.gain_margin_db && small.margins.gain_margin_db);
  EXPECT_LT(*small.margins.gain_margin_db, *healthy.margins.gain_margin_db - 3.0);
}

// Sticky spool: the friction law opposes motion, saturates at the Coulomb
// level, peaks at the breakaway level near zero speed, and a valve slam with
// it integrates without stalling.
TEST(Faults, StickySpoolFrictionIsSmoothAndIntegrable) {
  ModelParameters p = v1_pump();
  p.fault_spool_friction = 10.0;
  const Derived d(p);
  EXPECT_NEAR(spool_friction(d, 0.5), -10.0, 1e-6);
  EXPECT_NEAR(spool_friction(d, -0.5), 10.0, 1e-6);
  EXPECT_EQ(spool_friction(d, 0.0), 0.0);
  EXPECT_GT(-spool_friction(d, 5 * friction_smoothing_speed), 10.0 * 1.3);  // near breakaway
  Scenario s;
  s.parameters = p;
  s.events = {Event{0.1, "load.opening", 0.0, 0.005, 0}, Event{0.6, "load.opening", 1.0, 0.005, 0}};
  const RunResult r = run_scenario(s);
  EXPECT_LT(r.stats.steps, 200000);
  EXPECT_GT(r.peak_discharge_pressure, 200e5);
  // Friction holds the spool off its balance: the no-flow pressure differs
  // from the healthy one, but within the friction band F_s / A_s.
  const double band = d.breakaway_friction / d.sensing_area;
  const double p_noflow = trace_value_at(r.trace, 0.55, discharge_pressure_of);
  EXPECT_LT(std::abs(p_noflow - p.setting), band + 0.02 * p.setting);
}
