// The troubleshooting demos do what their stories say, judged by the
// oscillation analysis and the linear stability analysis together.
#include <gtest/gtest.h>

#include "swashtune/analysis.hpp"
#include "swashtune/metrics.hpp"

using namespace swashtune;

namespace {
const std::string dir = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/";
}

// A linearly unstable loop must hunt: the nonlinear run settles into a
// sustained oscillation near the unstable mode's frequency. The metering
// edges saturate, so the limit cycle runs below the linear frequency; within
// 25 % is what a linear prediction is good for.
TEST(Troubleshooting, UnstableLoopHuntsNearTheUnstableModesFrequency) {
  const Scenario s = load_scenario(dir + "hunting-oversized-damping-orifice.toml");
  const StabilityReport linear = analyse_stability(s.parameters, s.settings);
  ASSERT_FALSE(linear.stable);
  ASSERT_TRUE(linear.dominant);
  ASSERT_LT(linear.dominant->damping_ratio, 0.0);
  const RunResult run = run_scenario(s);
  const auto metrics = event_metrics(s, run);
  ASSERT_EQ(metrics.size(), 1u);
  const OscillationReport& o = metrics[0].oscillation;
  EXPECT_EQ(o.kind, OscillationKind::sustained);
  EXPECT_NEAR(o.frequency_hz / linear.dominant->damped_frequency_hz, 1.0, 0.25)
      << "limit cycle " << o.frequency_hz << " Hz, linear unstable mode " << linear.dominant->damped_frequency_hz
      << " Hz";
  EXPECT_GT(o.peak_to_peak, 0.5e5);  // a real swing, not numerical noise
}

TEST(Troubleshooting, RemedyIsStableAndStopsHunting) {
  const Scenario s = load_scenario(dir + "hunting-remedy.toml");
  EXPECT_TRUE(analyse_stability(s.parameters, s.settings).stable);
  const RunResult run = run_scenario(s);
  const OscillationReport o = event_metrics(s, run)[0].oscillation;
  EXPECT_TRUE(o.kind == OscillationKind::settled || o.kind == OscillationKind::settling) << to_string(o.kind);
}

// Stick-slip: a sticky spool makes the no-flow pressure wander in a slow
// cycle although the linear loop (friction is zero at rest) is stable.
TEST(Troubleshooting, StickySpoolHuntsSlowly) {
  const Scenario s = load_scenario(dir + "sticky-spool.toml");
  const RunResult run = run_scenario(s);
  const OscillationReport o = event_metrics(s, run)[0].oscillation;
  EXPECT_EQ(o.kind, OscillationKind::sustained);
  EXPECT_GT(o.frequency_hz, 5.0);
  EXPECT_LT(o.frequency_hz, 100.0);  // far below the loop's own modes (hundreds of Hz)
  EXPECT_GT(o.peak_to_peak, 5e5);
}

// Aerated oil: the softer line delays the rise when the valve shuts.
TEST(Troubleshooting, AeratedOilRisesMoreSlowly) {
  const Scenario air = load_scenario(dir + "aerated-oil.toml");
  const Scenario clean = load_scenario(dir + "valve-slam.toml");
  const RunResult a = run_scenario(air), c = run_scenario(clean);
  // Pressure 8 ms after the closure starts: well up in clean oil, lagging with air.
  const double t = 0.108;
  EXPECT_LT(trace_value_at(a.trace, t, discharge_pressure_of), 0.8 * trace_value_at(c.trace, t, discharge_pressure_of));
}
