// Operating points, linearisation and margins against laws, textbook
// results and the nonlinear model itself.
#include <gtest/gtest.h>

#include <Eigen/Eigenvalues>
#include <cmath>
#include <cstdio>
#include <random>

#include "swashtune/analysis.hpp"
#include "swashtune/metrics.hpp"
#include "v1_pump.hpp"

using namespace swashtune;

namespace {

ModelParameters deadhead() {
  ModelParameters p = v1_pump();
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
  ModelParameters p = v1_pump();
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
    ModelParameters p = v1_pump();
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
  const ModelParameters p = v1_pump();
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
  // Grid values are the decimals they stand for: no last-bit noise in a map or sweep row.
  const Axis fine = parse_axis("line.volume=1 L:1.25 L:3");
  EXPECT_EQ(fine.values, (std::vector<double>{0.001, 0.001125, 0.00125}));
  const Axis setting = parse_axis("compensator.setting=150 bar:250 bar:11");
  for (std::size_t i = 0; i < setting.values.size(); ++i) EXPECT_EQ(setting.values[i], (150.0 + 10.0 * i) * 1e5);
  EXPECT_THROW(parse_axis("load.opening=0:2:3"), ScenarioError);  // outside 0..1
  EXPECT_THROW(parse_axis("compensator.flow_forces=0:1:2"), ScenarioError);
  EXPECT_THROW(parse_axis("line.volume=1:2:0"), ScenarioError);
}

// Smaller trapped volume, stiffer line, less margin (a fact the map must show).
TEST(StabilityMap, SmallerLineVolumeLowersGainMargin) {
  const Axis x = parse_axis("load.opening=0:0:1");
  const Axis y = parse_axis("line.volume=0.25 L:2 L:3");
  const StabilityMap map = stability_map(v1_pump(), default_settings(), x, y);
  ASSERT_EQ(map.points.size(), 3u);
  for (const MapPoint& m : map.points) ASSERT_TRUE(m.solved && m.gain_margin_db);
  EXPECT_LT(*map.points[0].gain_margin_db, *map.points[1].gain_margin_db);
  EXPECT_LT(*map.points[1].gain_margin_db, *map.points[2].gain_margin_db);
}

// The loop break of interfaces.md ("Stability v2"): u replaces the swash
// angle in the tangent law Q_g = D_max N/60 tan(u)/tan(a_max) and nothing
// else. So B is the law's derivative on the discharge-pressure row only,
// dp_d/dt = beta_e/V_d (... + Q_g), dQ_g/du = D_max N/60 (1 + tan^2 u)/tan(a_max)
// (model.md), C picks the angle, and closing u = a gives back the model's
// own Jacobian.
TEST(LoopBreak, OpensOnlyTheTangentLaw) {
  const ModelParameters p = deadhead();
  const OperatingPoint op = steady_state(p, default_settings());
  ASSERT_EQ(op.condition.modes.swash, Stop::free);
  const LinearModel m = linearise(p, op.condition);
  ASSERT_TRUE(m.loop_active);
  const State& x = op.condition.x;
  const double a = x[state::swash_angle];
  const double beta =
      effective_bulk_modulus(x[state::discharge_pressure], p.bulk_modulus, p.air_fraction, p.polytropic_index);
  const double expected_b = beta / p.line_volume * p.displacement * p.speed / 60.0 * (1.0 + std::tan(a) * std::tan(a)) /
                            std::tan(p.max_swash_angle);
  for (int r = 0; r < m.b.size(); ++r) {
    if (m.states[r] == state::discharge_pressure)
      EXPECT_NEAR(m.b[r] / expected_b, 1.0, 1e-12);
    else
      EXPECT_EQ(m.b[r], 0.0) << "row " << r;
    EXPECT_EQ(m.c[r], m.states[r] == state::swash_angle ? 1.0 : 0.0);
  }
  const Jacobian full = jacobian(p, Derived(p), op.condition.modes, x);
  const Eigen::MatrixXd closed = m.closed_loop();
  for (int r = 0; r < closed.rows(); ++r)
    for (int c = 0; c < closed.cols(); ++c) {
      const double want = full(m.states[r], m.states[c]);
      EXPECT_NEAR(closed(r, c), want, 1e-12 * std::abs(want) + 1e-300) << r << "," << c;
    }
}

namespace {

// n equal first-order lags w0/(s + w0) in series with gain K: L(s) = K / (s/w0 + 1)^n,
// realised as G = -L.
LinearModel lag_chain(int n, double k, double w0) {
  LinearModel m;
  m.a = Eigen::MatrixXd::Zero(n, n);
  for (int i = 0; i < n; ++i) {
    m.states.push_back(i);
    m.a(i, i) = -w0;
    if (i > 0) m.a(i, i - 1) = w0;
  }
  m.b = Eigen::VectorXd::Zero(n);
  m.b[0] = -k * w0;
  m.c = Eigen::RowVectorXd::Zero(n);
  m.c[n - 1] = 1.0;
  m.scale = Eigen::VectorXd::Ones(n);
  m.loop_active = true;
  return m;
}

}  // namespace

// Every crossing, not just the first: L(s) = K / (s/w0 + 1)^7 has phase
// -7 atan(w/w0), so it lies on the negative real axis at -180 deg and again
// at -540 deg, at w = w0 tan(180/7 deg) and w0 tan(540/7 deg), where
// |L| = K cos^7(angle); |L| = 1 at w = w0 sqrt(K^(2/7) - 1). With K = 4 the
// closed loop is unstable: 1 + L = 0 needs K^(1/7) cos(180/7 deg) > 1
// (root locus of a repeated pole; e.g. Ogata, Modern Control Engineering),
// here 1.219 x 0.901 = 1.098, so the first gain margin is negative.
TEST(Margins, ReportsEveryCrossingOfASevenfoldLag) {
  const double w0 = 2 * pi * 100.0, k = 4.0;
  const LoopMargins m = loop_margins(lag_chain(7, k, w0));
  ASSERT_EQ(m.phase_crossovers.size(), 2u);
  ASSERT_EQ(m.gain_crossovers.size(), 1u);
  const double angles[2] = {pi / 7.0, 3.0 * pi / 7.0};
  for (int i = 0; i < 2; ++i) {
    EXPECT_NEAR(m.phase_crossovers[i].frequency_hz, 100.0 * std::tan(angles[i]), 1e-7);
    EXPECT_NEAR(m.phase_crossovers[i].gain_margin_db, -20.0 * std::log10(k * std::pow(std::cos(angles[i]), 7)), 1e-7);
  }
  const double wc = std::sqrt(std::pow(k, 2.0 / 7.0) - 1.0);
  EXPECT_NEAR(m.gain_crossovers[0].frequency_hz, 100.0 * wc, 1e-7);
  double pm = 180.0 - 7.0 * std::atan(wc) * 180.0 / pi;
  EXPECT_NEAR(m.gain_crossovers[0].phase_margin_deg, pm, 1e-6);
  EXPECT_LT(pm, 0.0);
  // The smallest of each, and the frequency it belongs to.
  EXPECT_EQ(*m.gain_margin_db, m.phase_crossovers[0].gain_margin_db);
  EXPECT_LT(*m.gain_margin_db, 0.0);
  EXPECT_EQ(*m.phase_crossover_frequency_hz, m.phase_crossovers[0].frequency_hz);
  EXPECT_EQ(*m.crossover_frequency_hz, m.gain_crossovers[0].frequency_hz);
}

// Modulus margin of L = K / (s/w0 + 1)^2: |1 + L|^2 = ((1 - u + K)^2 + 4u) / (1 + u)^2
// with u = (w/w0)^2 (algebra on the definition); its minimum is found here by
// a fine scan of that closed form, not of the code's own evaluation of L.
TEST(Margins, ModulusMarginOfADoubleLag) {
  const double w0 = 2 * pi * 50.0, k = 9.0;
  const LoopMargins m = loop_margins(lag_chain(2, k, w0));
  ASSERT_TRUE(m.modulus_margin && m.modulus_margin_frequency_hz);
  const auto distance = [&](double u) { return std::sqrt((std::pow(1 - u + k, 2) + 4 * u) / std::pow(1 + u, 2)); };
  double best = 1e9, best_u = 0.0;
  for (double u = 0.0; u < 1e4; u *= 1.0 + 1e-6, u += 1e-9)
    if (distance(u) < best) {
      best = distance(u);
      best_u = u;
    }
  EXPECT_NEAR(*m.modulus_margin, best, 1e-9);
  EXPECT_NEAR(*m.modulus_margin_frequency_hz / (50.0 * std::sqrt(best_u)), 1.0, 1e-4);
  EXPECT_TRUE(m.phase_crossovers.empty());  // the phase only tends to -180 deg
}

namespace {

// Closed-loop minus open-loop unstable poles, from the eigenvalues.
int pole_difference(const StabilityReport& r) { return r.closed_loop_unstable_poles - r.open_loop_unstable_poles; }

}  // namespace

// The Nyquist criterion: L(jw) encircles -1 clockwise as many times as the
// closed loop has unstable poles more than the opened loop (H. Nyquist,
// "Regeneration theory", Bell Syst. Tech. J. 11, 1932). The encirclements
// are counted from the frequency response, the poles from eigenvalues.
TEST(Nyquist, EncirclementsEqualUnstablePoleDifferenceOnTheDemos) {
  const std::string dir = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/";
  int checked = 0;
  for (const char* name : {"hunting-oversized-damping-orifice.toml", "hunting-remedy.toml", "sticky-spool.toml",
                           "valve-slam.toml", "aerated-oil.toml", "setting-under-flow.toml"})
    for (double opening : {-1.0, 0.0, 0.05, 0.1}) {
      const Scenario s = load_scenario(dir + name);
      ModelParameters p = s.parameters;
      if (opening >= 0.0) p.opening = opening;
      const StabilityReport r = analyse_stability(p, s.settings);
      if (!r.model.loop_active) continue;
      const std::optional<int> n = nyquist_encirclements(r.model);
      ASSERT_TRUE(n) << name << " at opening " << p.opening;
      EXPECT_EQ(*n, pole_difference(r)) << name << " at opening " << p.opening;
      ++checked;
    }
  EXPECT_GE(checked, 12);
}

TEST(Nyquist, EncirclementsEqualUnstablePoleDifferenceAtRandomPoints) {
  std::mt19937_64 generator(20240611);
  const auto unit = [&] { return static_cast<double>(generator() >> 11) * 0x1.0p-53; };
  const auto log_between = [&](double lo, double hi) { return lo * std::pow(hi / lo, unit()); };
  int checked = 0, unstable = 0, open_unstable = 0, encircling = 0;
  for (int i = 0; i < 400 && checked < 60; ++i) {
    ModelParameters p = v1_pump();
    p.line_volume = log_between(0.1e-3, 5e-3);
    p.spool_damping = log_between(2.0, 100.0);
    p.spool_mass = log_between(3e-3, 0.03);
    p.setting = log_between(50e5, 350e5);
    p.opening = 0.15 * unit();
    p.bias_rate *= log_between(0.5, 2.0);
    p.spool_spring_rate = log_between(20e3, 200e3);
    p.swash_damping = log_between(0.2, 5.0);
    p.air_fraction = 0.02 * unit();
    p.flow_forces = unit() < 0.7;
    p.bleed_diameter = log_between(0.2e-3, 0.8e-3);
    const StabilityReport r = analyse_stability(p, default_settings());
    if (!r.model.loop_active || !r.operating_point.converged) continue;
    const std::optional<int> n = nyquist_encirclements(r.model);
    ASSERT_TRUE(n) << "point " << i;
    EXPECT_EQ(*n, pole_difference(r)) << "point " << i;
    ++checked;
    unstable += r.stable ? 0 : 1;
    open_unstable += r.open_loop_unstable_poles > 0 ? 1 : 0;
    encircling += *n != 0 ? 1 : 0;
  }
  EXPECT_GE(checked, 50);
  // The points must exercise the criterion, not only its trivial case.
  EXPECT_GT(unstable, 0);
  EXPECT_GT(encircling, 0);
  std::printf("checked %d points: %d unstable, %d with an unstable open loop, %d encircling -1\n", checked, unstable,
              open_unstable, encircling);
}

// Margins are stability margins only when the loop is active, the opened
// loop is stable and the model is linear enough; otherwise they are listed
// but flagged, with the reason in words.
TEST(Margins, SayWhenTheyDoNotApply) {
  const std::string dir = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/";
  const Scenario remedy = load_scenario(dir + "hunting-remedy.toml");
  const StabilityReport good = analyse_stability(remedy.parameters, remedy.settings);
  EXPECT_TRUE(good.stable);
  EXPECT_TRUE(good.margins_apply);
  EXPECT_TRUE(good.note.empty()) << good.note;
  ASSERT_TRUE(good.margins.gain_margin_db);
  EXPECT_GT(*good.margins.gain_margin_db, 0.0);

  // Full stroke: the swashplate rests on its stop, nothing to open.
  const Scenario slam = load_scenario(dir + "valve-slam.toml");
  const StabilityReport open = analyse_stability(slam.parameters, slam.settings);
  EXPECT_FALSE(open.model.loop_active);
  EXPECT_FALSE(open.margins_apply);
  EXPECT_FALSE(open.margins.gain_margin_db || open.margins.phase_margin_deg || open.margins.modulus_margin);
  EXPECT_NE(open.note.find("full stroke"), std::string::npos) << open.note;

  // Sticky spool: friction makes any linear model's margins meaningless.
  const Scenario sticky = load_scenario(dir + "sticky-spool.toml");
  ModelParameters p = sticky.parameters;
  p.opening = 0.0;
  const StabilityReport stick = analyse_stability(p, sticky.settings);
  EXPECT_TRUE(stick.dry_friction);
  EXPECT_TRUE(stick.dry_friction_dominates);
  EXPECT_FALSE(stick.margins_apply);
  EXPECT_NE(stick.note.find("stick-slip"), std::string::npos) << stick.note;
  EXPECT_NE(stick.note.find("oscillation analysis of a run"), std::string::npos) << stick.note;
}

// The plain-words reading follows the eigenvalues and the margins:
// 20 log10(4.5) = 13.06 dB is "4.5 times more gain".
TEST(Margins, ExplainedInPlainWords) {
  StabilityReport r;
  r.stable = true;
  r.model = lag_chain(3, 8.0 / 4.5, 2 * pi * 100.0);  // GM = 20 log10(8 / K) = 20 log10(4.5)
  r.margins = loop_margins(r.model);
  r.margins_apply = true;
  r.modes = modes_of(r.model.closed_loop(), r.model.scale);
  const std::vector<std::string> lines = explain_stability(r);
  ASSERT_GE(lines.size(), 4u);
  EXPECT_EQ(lines[0].rfind("Stable", 0), 0u) << lines[0];
  EXPECT_NE(lines[1].find("can take 4.5 times more gain (13.1 dB) before it hunts"), std::string::npos) << lines[1];
  r.margins_apply = false;
  r.note = "because";
  const std::vector<std::string> flagged = explain_stability(r);
  for (const std::string& line : flagged) EXPECT_EQ(line.find("times more gain"), std::string::npos) << line;
}

// Coulomb friction on the cradle makes the steady characteristic a band
// (a sliding friction adds its level against the motion: the quasi-static
// branches). Checked against the time integration of the full model, in
// which the friction follows the speed: the load valve closed slowly past
// an opening of 0.1 reads the rising branch there, opened slowly past it
// the falling branch.
TEST(SteadyState, CradleFrictionMakesABandThatSlowRampsFollow) {
  ModelParameters p = default_parameters();
  ASSERT_GT(p.swash_friction, 0.0);
  const RunSettings settings = default_settings();
  const Characteristic ch = steady_characteristic(p, settings, 11);  // openings 0, 0.1, ...
  ASSERT_EQ(ch.rising.size(), ch.points.size());
  ASSERT_TRUE(ch.deadhead_hysteresis);
  std::printf("deadhead: rising %.3f, middle %.3f, falling %.3f bar\n", ch.rising[0].discharge_pressure / 1e5,
              ch.points[0].discharge_pressure / 1e5, ch.falling[0].discharge_pressure / 1e5);
  EXPECT_GT(*ch.deadhead_hysteresis, 0.0);
  for (std::size_t i = 0; i < ch.points.size(); ++i) {
    EXPECT_GE(ch.rising[i].discharge_pressure, ch.points[i].discharge_pressure - 1.0);
    EXPECT_LE(ch.falling[i].discharge_pressure, ch.points[i].discharge_pressure + 1.0);
  }

  // Pressure where a ramp of the opening from `from` to `to` over `ramp`
  // seconds passes 0.1.
  auto pressure_passing = [&](double from, double to, double ramp) {
    ModelParameters start = p;
    start.opening = from;
    const OperatingPoint op = steady_state(start, settings);
    Simulator sim(start, settings, op.condition);
    sim.add_event(Event{0.0, "load.opening", to, ramp});
    sim.advance_to(ramp * (from - 0.1) / (from - to), nullptr);
    return sim.state()[state::discharge_pressure];
  };
  // A ramp lags the quasi-static state in proportion to its speed (the
  // control piston's flow and the viscous damping): runs 4 times slower
  // than each other, extrapolated to zero speed (Richardson), give the
  // quasi-static pressure. 16 s and 64 s for the 0.2 of opening are slow
  // against the loop's ~50 ms, yet the plate slides (0.01 rad/s, ten times
  // the friction's smoothing speed).
  auto quasi_static = [&](double from, double to) {
    const double fast = pressure_passing(from, to, 16.0), slow = pressure_passing(from, to, 64.0);
    std::printf("  ramp %.1f -> %.1f: %.4f bar in 16 s, %.4f bar in 64 s\n", from, to, fast / 1e5, slow / 1e5);
    return slow + (slow - fast) / 3.0;
  };
  const double closing = quasi_static(0.2, 0.0);
  const double opening = quasi_static(0.0, 0.2);
  const CharacteristicPoint& rising = ch.rising[1];
  const CharacteristicPoint& falling = ch.falling[1];
  ASSERT_NEAR(rising.load_opening, 0.1, 1e-12);
  std::printf("opening 0.1: closing %.5f bar, rising branch %.5f bar; opening %.5f bar, falling branch %.5f bar\n",
              closing / 1e5, rising.discharge_pressure / 1e5, opening / 1e5, falling.discharge_pressure / 1e5);
  const double band = rising.discharge_pressure - falling.discharge_pressure;
  EXPECT_GT(band, 0.5e5);
  EXPECT_NEAR(closing, rising.discharge_pressure, 50.0);  // Pa; 6 Pa achieved, the runs at rtol 1e-6
  EXPECT_NEAR(opening, falling.discharge_pressure, 50.0);
}
