// Fault conditions change the model in the physically expected direction and
// size, and leave it integrable.
#include <gtest/gtest.h>

#include <cmath>

#include "swashtune/analysis.hpp"
#include "swashtune/fluid.hpp"
#include "swashtune/metrics.hpp"

using namespace swashtune;

namespace {

ModelParameters deadhead() {
  ModelParameters p = default_parameters();
  p.opening = 0.0;
  return p;
}

State steady(const ModelParameters& p) {
  const OperatingPoint op = steady_state(p, default_settings());
  EXPECT_TRUE(op.converged);
  return op.condition.x;
}

}  // namespace

// A healthy machine (every fault at its default) is model.md v1: the folded
// quantities equal the plain parameters.
TEST(Faults, DefaultsAreAHealthyMachine) {
  const ModelParameters p = default_parameters();
  const Derived d(p);
  EXPECT_EQ(d.leakage_coefficient, p.leakage_coefficient);
  EXPECT_EQ(d.air_fraction, p.air_fraction);
  EXPECT_EQ(d.bias_force_at_full_stroke, p.bias_force_at_full_stroke);
  EXPECT_EQ(d.bias_rate, p.bias_rate);
  EXPECT_EQ(d.setting, p.setting);
  EXPECT_EQ(d.line_volume, p.line_volume);
  EXPECT_EQ(d.case_pressure, p.tank_pressure);
  EXPECT_EQ(d.bleed_area, pi / 4 * p.bleed_diameter * p.bleed_diameter);
  EXPECT_EQ(d.coulomb_friction, 0.0);
}

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
  ModelParameters p = default_parameters();
  p.fault_entrained_air = 0.02;
  p.opening = 0.0;
  p.leakage_coefficient = 0.0;
  State x = zero_state(layout_of(p));
  x[state::discharge_pressure] = 20e5;
  x[state::swash_angle] = p.max_swash_angle;
  x[state::spool_position] = -p.spool_travel;
  const State rates = derivatives(p, StopModes{Stop::upper, Stop::lower}, x);
  const double beta = effective_bulk_modulus(20e5, p.bulk_modulus, 0.02, p.polytropic_index);
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
  ModelParameters p = default_parameters();
  p.fault_case_pressure = 5e5;
  const State x = steady(p);
  EXPECT_NEAR(x[state::control_pressure], 5e5, 1e3);
}

// Clogged bleed: no bleed flow at all; worn: more, by the orifice law's area.
TEST(Faults, BleedFactorScalesTheBleedArea) {
  ModelParameters p = deadhead();
  const State x = steady(p);
  const double healthy = flows(p, x).bleed;
  p.fault_bleed_area_factor = 0.0;
  EXPECT_EQ(flows(p, x).bleed, 0.0);
  p.fault_bleed_area_factor = 3.0;
  EXPECT_NEAR(flows(p, x).bleed / healthy, 3.0, 1e-12);
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
  ModelParameters p = default_parameters();
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
