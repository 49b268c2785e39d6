// Operating points, linearisation and margins against laws, textbook
// results and the nonlinear model itself.
#include <gtest/gtest.h>

#include <Eigen/Eigenvalues>
#include <cmath>

#include "swashtune/analysis.hpp"
#include "swashtune/metrics.hpp"

using namespace swashtune;

namespace {

ModelParameters deadhead() {
  ModelParameters p = default_parameters();
  p.opening = 0.0;
  return p;
}

}  // namespace

// A volume fed by a fixed flow and drained by a laminar restriction R has the
// single eigenvalue -beta / (V R) (hydraulic capacitance, Merritt, Hydraulic
// Control Systems, 1967). Here: the swash held at full stroke (fixed flow),
// the compensator closed to the line, the load valve deep in the laminar
// region of the orifice law (dp << dp_tr), where Q = Cd A sqrt(2/rho) dp / sqrt(dp_tr).
TEST(Linearisation, FedVolumeWithLaminarDrainHasEigenvalueMinusBetaOverVR) {
  ModelParameters p = default_parameters();
  p.transition_pressure = 1e6;  // 10 bar laminar region
  p.displacement = 1e-7;        // 3 mL/s: a few hundred Pa across the valve
  p.leakage_coefficient = 0.0;
  p.opening = 1.0;
  const OperatingPoint op = steady_state(p, default_settings());
  ASSERT_TRUE(op.converged);
  ASSERT_EQ(op.condition.modes.swash, Stop::upper);
  ASSERT_EQ(op.condition.modes.spool, Stop::lower);
  const double dp = op.condition.x[state::discharge_pressure];
  ASSERT_LT(dp, 1e-2 * p.transition_pressure);  // the law is then linear to within (dp/dp_tr)^2
  const double resistance =
      std::sqrt(p.transition_pressure) / (p.valve_discharge_coefficient * p.valve_area * std::sqrt(2.0 / p.density));
  const double expected = -p.bulk_modulus / (p.line_volume * resistance);
  const LinearModel m = linearise(p, op.condition);
  const std::vector<Mode> modes = modes_of(m.closed_loop(), m.scale);
  double nearest = modes.front().eigenvalue.real();
  for (const Mode& mode : modes)
    if (std::abs(mode.eigenvalue.real() - expected) < std::abs(nearest - expected)) nearest = mode.eigenvalue.real();
  EXPECT_NEAR(nearest / expected, 1.0, 1e-3);
  EXPECT_FALSE(m.loop_active);  // spool on its stop: no feedback path
  EXPECT_FALSE(loop_margins(m).gain_margin_db.has_value());
}

// The spool alone (hydraulics frozen, no flow forces) is a mass-spring-
// damper: natural frequency sqrt(k/m), damping ratio b / (2 sqrt(k m))
// (any vibration text, e.g. Thomson & Dahleh, Theory of Vibration with Applications).
TEST(Linearisation, SpoolAloneIsMassSpringDamper) {
  ModelParameters p = deadhead();
  p.flow_forces = false;
  const OperatingPoint op = steady_state(p, default_settings());
  ASSERT_EQ(op.condition.modes.spool, Stop::free);
  const LinearModel m = linearise(p, op.condition);
  const int n = static_cast<int>(m.states.size());
  const int spool = n - 2;  // the spool's position and velocity come last
  ASSERT_EQ(m.states[spool], state::spool_position);
  const Eigen::MatrixXd block = m.closed_loop().block(spool, spool, 2, 2);
  const std::vector<Mode> modes = modes_of(block, m.scale.segment(spool, 2));
  ASSERT_EQ(modes.size(), 2u);
  const double omega = std::sqrt(p.spool_spring_rate / p.spool_mass);
  EXPECT_NEAR(modes[0].natural_frequency_hz, omega / (2 * pi), 1e-9 * omega);
  EXPECT_NEAR(modes[0].damping_ratio, p.spool_damping / (2 * std::sqrt(p.spool_spring_rate * p.spool_mass)), 1e-12);
}

// Classical margins on a loop with a known answer: L(s) = K / (s/w0 + 1)^3
// has its phase crossover at w = sqrt(3) w0, where |L| = K/8, so the gain
// margin is 20 log10(8/K) (Routh-Hurwitz; e.g. Ogata, Modern Control
// Engineering). With K = 2 the gain crossover is where (w/w0)^2 + 1 = 2^(2/3),
// and the phase margin 180 - 3 atan(w/w0).
TEST(Margins, ThirdOrderLagHasTextbookMargins) {
  const double w0 = 2 * pi * 100.0, k = 2.0;
  LinearModel m;
  m.states = {0, 1, 2};
  // Three first-order lags in series; G = -L so B carries -K.
  m.a = Eigen::MatrixXd::Zero(3, 3);
  m.a << -w0, 0, 0, w0, -w0, 0, 0, w0, -w0;
  m.b = Eigen::VectorXd::Zero(3);
  m.b[0] = -k * w0;
  m.c = Eigen::RowVectorXd::Zero(3);
  m.c[2] = 1.0;
  m.scale = Eigen::VectorXd::Ones(3);
  m.loop_active = true;
  const LoopMargins margins = loop_margins(m);
  ASSERT_TRUE(margins.gain_margin_db && margins.phase_margin_deg);
  EXPECT_NEAR(*margins.gain_margin_db, 20 * std::log10(8.0 / k), 1e-6);
  EXPECT_NEAR(*margins.phase_crossover_frequency_hz, std::sqrt(3.0) * 100.0, 1e-6);
  const double wc = std::sqrt(std::pow(k, 2.0 / 3.0) - 1.0);
  EXPECT_NEAR(*margins.crossover_frequency_hz, wc * 100.0, 1e-6);
  EXPECT_NEAR(*margins.phase_margin_deg, 180.0 - 3.0 * std::atan(wc) * 180.0 / pi, 1e-6);
}

// The dominant mode predicted at deadhead must be what the nonlinear model
// does after a small disturbance: frequency from the spacing of the peaks,
// damping ratio from the logarithmic decrement d = ln(x_n / x_n+1),
// zeta = d / sqrt(4 pi^2 + d^2) (Thomson & Dahleh, Theory of Vibration with
// Applications). A small line volume makes the mode lightly damped and
// clearly the slowest to decay, so the other modes are gone when measuring.
TEST(Linearisation, DominantModeMatchesLogarithmicDecrementOfTheNonlinearModel) {
  ModelParameters p = deadhead();
  p.line_volume = 0.25e-3;
  RunSettings settings = default_settings();
  settings.rtol = settings.atol = 1e-9;
  settings.sample_interval = 10e-6;
  settings.max_step = 1e-4;
  const StabilityReport before = analyse_stability(p, settings);
  ASSERT_TRUE(before.dominant);
  const Mode predicted = *before.dominant;

  // Nudge the setting by 0.2 bar (0.1 %) and watch the pressure ring.
  const double step = 0.2e5;
  Simulator sim(p, settings, before.operating_point.condition);
  sim.add_event(Event{0.0, "compensator.setting", p.setting + step, 0.0, 0});
  std::vector<Sample> trace;
  sim.advance_to(0.12, [&](const Sample& s) { trace.push_back(s); });
  ModelParameters after = p;
  after.setting += step;
  const double settled = steady_state(after, settings).condition.x[state::discharge_pressure];

  // Peaks of |p_d - settled| after the faster modes have died (t > 20 ms),
  // located by a parabola through the three samples around each maximum.
  std::vector<double> peak_times, peak_sizes;
  for (std::size_t i = 1; i + 1 < trace.size(); ++i) {
    if (trace[i].time < 0.02) continue;
    const double a = std::abs(trace[i - 1].x[0] - settled), b = std::abs(trace[i].x[0] - settled),
                 c = std::abs(trace[i + 1].x[0] - settled);
    if (b > a && b >= c) {
      const double offset = 0.5 * (a - c) / (a - 2 * b + c);
      peak_times.push_back(trace[i].time + offset * settings.sample_interval);
      peak_sizes.push_back(b - 0.25 * (a - c) * offset);
    }
  }
  ASSERT_GE(peak_sizes.size(), 10u);
  // Peaks of |x| come every half period.
  const std::size_t n = peak_sizes.size() - 1;
  const double half_period = (peak_times[n] - peak_times[0]) / static_cast<double>(n);
  const double measured_frequency = 1.0 / (2.0 * half_period);
  const double decrement = 2.0 * std::log(peak_sizes[0] / peak_sizes[n]) / static_cast<double>(n);
  const double measured_damping = decrement / std::sqrt(4 * pi * pi + decrement * decrement);
  EXPECT_NEAR(measured_frequency / predicted.damped_frequency_hz, 1.0, 0.05) << measured_frequency << " Hz measured";
  EXPECT_NEAR(measured_damping / predicted.damping_ratio, 1.0, 0.05) << measured_damping << " measured";
}

// The steady deadhead pressure equals the end of a long run with the valve
// closed, within 0.1 %.
TEST(SteadyState, DeadheadPressureEqualsEndOfLongRun) {
  Scenario s;
  s.settings.duration = 3.0;
  s.settings.sample_interval = 1e-3;
  s.events = {Event{0.1, "load.opening", 0.0, 0.005, 0}};
  const RunResult r = run_scenario(s);
  const Characteristic ch = steady_characteristic(s.parameters, s.settings, 3);
  EXPECT_NEAR(ch.deadhead_pressure / r.trace.back().x[state::discharge_pressure], 1.0, 1e-3);
}

// Newton and integration to rest must find the same equilibrium, whether the
// compensator regulates or the pump sits at full stroke.
TEST(SteadyState, NewtonAgreesWithIntegrationToRest) {
  for (double opening : {0.0, 0.05, 0.12, 0.5, 1.0}) {
    ModelParameters p = default_parameters();
    p.opening = opening;
    const OperatingPoint op = steady_state(p, default_settings());
    EXPECT_EQ(op.method, SteadyMethod::newton) << opening;
    const SettledStart settled = settle_by_integration(p, default_settings());
    ASSERT_TRUE(settled.settled);
    const State scale = state_scale(p);
    for (int i : {0, 1, 2, 4})
      EXPECT_NEAR(op.condition.x[i] / scale[i], settled.condition.x[i] / scale[i], 1e-4)
          << "opening " << opening << " state " << i;
    EXPECT_EQ(op.condition.modes, settled.condition.modes) << opening;
  }
}

// Fact of the trade (common practice): a flat cut-off compensator regulates
// within a few percent of its setting between the start of destroke and
// deadhead; pressure falls and flow rises as the load opens.
TEST(SteadyState, CharacteristicIsFlatCutOffThenOrifice) {
  const ModelParameters p = default_parameters();
  const Characteristic ch = steady_characteristic(p, default_settings(), 41);
  ASSERT_TRUE(ch.cut_in_pressure);
  EXPECT_LE(*ch.cut_in_pressure, ch.deadhead_pressure);
  EXPECT_NEAR(*ch.cut_in_pressure / p.setting, 1.0, 0.03);
  EXPECT_NEAR(ch.deadhead_pressure / p.setting, 1.0, 0.03);
  for (std::size_t i = 1; i < ch.points.size(); ++i) {
    EXPECT_LE(ch.points[i].discharge_pressure, ch.points[i - 1].discharge_pressure * (1 + 1e-9));
    EXPECT_GE(ch.points[i].load_flow, ch.points[i - 1].load_flow);
  }
  // Fully open: full stroke, the valve's orifice law sets the pressure.
  const CharacteristicPoint& open = ch.points.back();
  EXPECT_NEAR(open.swash_angle, p.max_swash_angle, 1e-12);
  const double q = open.load_flow;
  const double orifice_dp = p.density / 2 * std::pow(q / (p.valve_discharge_coefficient * p.valve_area), 2);
  EXPECT_NEAR(open.discharge_pressure / orifice_dp, 1.0, 1e-3);
}

TEST(StabilityMap, AxesParseWithUnitsAndRefuseBadInput) {
  const Axis a = parse_axis("line.volume=0.5 L:2 L:4");
  ASSERT_EQ(a.values.size(), 4u);
  EXPECT_NEAR(a.values.front(), 0.5e-3, 1e-15);
  EXPECT_NEAR(a.values.back(), 2e-3, 1e-15);
  EXPECT_THROW(parse_axis("line.volume=0.5 L:2 L"), ScenarioError);
  EXPECT_THROW(parse_axis("line.volume=0.5 kg:2 L:3"), ScenarioError);
  EXPECT_THROW(parse_axis("load.opening=0:2:3"), ScenarioError);  // outside 0..1
  EXPECT_THROW(parse_axis("compensator.flow_forces=0:1:2"), ScenarioError);
  EXPECT_THROW(parse_axis("line.volume=1:2:0"), ScenarioError);
}

// Smaller trapped volume, stiffer line, less margin (a fact the map must show).
TEST(StabilityMap, SmallerLineVolumeLowersGainMargin) {
  const Axis x = parse_axis("load.opening=0:0:1");
  const Axis y = parse_axis("line.volume=0.25 L:2 L:3");
  const StabilityMap map = stability_map(default_parameters(), default_settings(), x, y);
  ASSERT_EQ(map.points.size(), 3u);
  for (const MapPoint& m : map.points) ASSERT_TRUE(m.solved && m.gain_margin_db);
  EXPECT_LT(*map.points[0].gain_margin_db, *map.points[1].gain_margin_db);
  EXPECT_LT(*map.points[1].gain_margin_db, *map.points[2].gain_margin_db);
}

// With the feedback opened at the sensing area the flow forces still feel
// p_d: at the demo's deadhead they make the opened loop unstable by
// themselves, which the report must say (margins then need Nyquist's reading).
TEST(Margins, ReportsUnstablePolesOfTheOpenedLoop) {
  ModelParameters p = deadhead();
  const StabilityReport with_forces = analyse_stability(p, default_settings());
  EXPECT_TRUE(with_forces.stable);
  EXPECT_EQ(with_forces.open_loop_unstable_poles, 1);
  p.flow_forces = false;
  const StabilityReport without = analyse_stability(p, default_settings());
  EXPECT_EQ(without.open_loop_unstable_poles, 0);
  // Independent count from the open-loop matrix itself.
  const Eigen::VectorXcd poles = Eigen::EigenSolver<Eigen::MatrixXd>(without.model.scale.cwiseInverse().asDiagonal() *
                                                                     without.model.a * without.model.scale.asDiagonal())
                                     .eigenvalues();
  EXPECT_TRUE((poles.real().array() < 0.0).all());
}
