// Event metrics (interfaces.md, "Event metrics v2") against signals with
// known answers, against a brute-force reading of the same points, on the
// demos, and independent of how long the run is (issue: the same event gave
// other figures in a 10 h run because the kept trace was thinned).
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "v1_pump.hpp"
#include "swashtune/event_window.hpp"
#include "swashtune/metrics.hpp"

using namespace swashtune;

namespace {

const std::string demos = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/";

EventMetrics only_event(const std::string& file, std::size_t index = 0) {
  const Scenario s = load_scenario(demos + file);
  const RunResult r = run_scenario(s);
  return event_metrics(s, r).at(index);
}

}  // namespace

// The staircases against the obvious O(n^2) reading of the same points: the
// last time a signal was above a level (the crossing between that point and
// the next, linearly interpolated) and the first time it reached one.
TEST(Staircase, AgreesWithBruteForceOnRandomSignals) {
  std::mt19937_64 g(7);
  const auto unit = [&] { return static_cast<double>(g() >> 11) * 0x1.0p-53; };
  for (int trial = 0; trial < 200; ++trial) {
    std::vector<double> t, v;
    double time = 0.0;
    for (int i = 0; i < 300; ++i) {
      time += 0.001 + 0.01 * unit();
      t.push_back(time);
      v.push_back(std::sin(0.3 * i) * std::exp(-0.01 * i) + 0.2 * unit());
    }
    detail::Staircase suffix_max(true, 1, 1e-12), prefix_max(false, 1, 1e-12);
    for (std::size_t i = 0; i < t.size(); ++i) {
      suffix_max.add(t[i], v[i]);
      prefix_max.add(t[i], v[i]);
    }
    const double level = -0.5 + unit();
    // Brute force: the last point above the level and the crossing after it.
    std::optional<double> last;
    for (std::size_t i = 0; i < t.size(); ++i)
      if (v[i] > level) last = i + 1 < t.size() ? t[i] + (v[i] - level) / (v[i] - v[i + 1]) * (t[i + 1] - t[i]) : t[i];
    const auto got = suffix_max.last_above(level);
    ASSERT_EQ(got.has_value(), last.has_value()) << trial;
    if (last) {
      EXPECT_NEAR(*got, *last, 1e-12) << trial;
    }
    std::optional<double> first;
    for (std::size_t i = 0; i < t.size() && !first; ++i)
      if (v[i] >= level) first = i == 0 ? t[0] : t[i - 1] + (level - v[i - 1]) / (v[i] - v[i - 1]) * (t[i] - t[i - 1]);
    const auto reached = prefix_max.first_reaching(level);
    ASSERT_EQ(reached.has_value(), first.has_value()) << trial;
    if (first) {
      EXPECT_NEAR(*reached, *first, 1e-12) << trial;
    }
  }
}

// Memory stays bounded whatever the length: a signal that creeps down for
// ten million points makes a record at every point, yet the staircase keeps
// at most its capacity and its answers stay on the safe side (never early)
// and within the coarsened resolution.
TEST(Staircase, StaysBoundedOnALongCreep) {
  detail::Staircase s(true, 1, 1e-9);
  const long long n = 10'000'000;
  for (long long i = 0; i < n; ++i) s.add(static_cast<double>(i), 1.0 - static_cast<double>(i) / n);
  EXPECT_LE(s.size(), detail::Staircase::capacity);
  const double level = 0.25;  // crossed at i = 0.75 n
  const auto t = s.last_above(level);
  ASSERT_TRUE(t);
  EXPECT_GE(*t, 0.75 * n - 1.0);
  EXPECT_LE(*t, 0.75 * n + s.resolution() * n + 1.0);
  EXPECT_LT(s.resolution(), 1e-3);  // still far finer than any settling band
}

// A first-order approach p = 1 - exp(-t/tau) enters the band of +-b around
// its final value f where 1 - exp(-t/tau) = f - b; a ramp of the angle from
// 0 to 1 over 0.1 s reaches 10 % and 90 % at 10 ms and 90 ms (the points are
// fewer than a staircase's capacity, so the answers are exact up to the
// linear interpolation between points, which is exact for the ramp).
TEST(EventWindow, FirstOrderStepAndLinearRamp) {
  const double tau = 0.01, end = 0.2;
  const int points = 2000;
  EventWindow w(0.0, end, 1.0, 1.0, OscillationOptions{});
  for (int i = 0; i <= points; ++i) {
    const double t = end * i / points;
    w.observe(t, 1.0 - std::exp(-t / tau), std::min(t / 0.1, 1.0), false);
  }
  w.finish();
  const double final_value = 1.0 - std::exp(-end / tau);
  const double band = 0.02 * final_value;
  const double exact = -tau * std::log(1.0 - final_value + band);
  // Linear interpolation between points 0.1 ms apart: error below slope x h^2 / 8 / tau.
  EXPECT_NEAR(w.settled_from(final_value - band, final_value + band), exact, 1e-7);
  const auto t10 = w.angle_first_reaching(0.1, true), t90 = w.angle_first_reaching(0.9, true);
  ASSERT_TRUE(t10 && t90);
  EXPECT_NEAR(*t10, 0.01, 1e-12);
  EXPECT_NEAR(*t90, 0.09, 1e-12);
  EXPECT_FALSE(w.angle_first_reaching(1.5, true));
  EXPECT_NEAR(w.pressure_span_after(0.15), final_value - (1.0 - std::exp(-0.15 / tau)), 1e-12);
}

// Far more records than the capacity (a slow ramp of 10^6 points): bounded,
// and the first passage is late by at most the coarsened resolution's worth.
TEST(EventWindow, LongRampIsBoundedAndNeverEarly) {
  detail::Staircase s(false, 1, 1e-9);
  const int n = 1'000'000;
  for (int i = 0; i <= n; ++i) s.add(static_cast<double>(i) / n, static_cast<double>(i) / n);
  EXPECT_LE(s.size(), detail::Staircase::capacity);
  const auto t = s.first_reaching(0.5);
  ASSERT_TRUE(t);
  EXPECT_GE(*t, 0.5 - 1e-12);
  EXPECT_LE(*t, 0.5 + s.resolution() + 1e-6);
}

// The valve-slam demo: a rise with overshoot and a settling time, then a
// fall reported as undershoot (overshoot null), with the swash's response
// and travel times.
TEST(EventMetrics, RiseAndFallOfTheValveSlam) {
  const Scenario s = load_scenario(demos + "valve-slam.toml");
  const auto m = event_metrics(s, run_scenario(s));
  ASSERT_EQ(m.size(), 2u);
  ASSERT_TRUE(m[0].overshoot_percent && m[0].settling_time && m[0].swash_response_time && m[0].swash_travel_time);
  EXPECT_FALSE(m[0].undershoot_percent);
  EXPECT_GT(*m[0].overshoot_percent, 5.0);
  EXPECT_NEAR(m[0].band, 0.02 * m[0].change, 1e-9 * m[0].change);  // the step's own 2 %
  EXPECT_GT(*m[0].settling_time, 0.005);
  EXPECT_LT(*m[0].settling_time, 0.15);
  EXPECT_LT(*m[0].swash_travel_time, *m[0].swash_response_time);
  EXPECT_FALSE(m[1].overshoot_percent);
  ASSERT_TRUE(m[1].undershoot_percent && m[1].settling_time);
  EXPECT_GE(*m[1].undershoot_percent, 0.0);
  EXPECT_TRUE(m[0].note.empty() && m[1].note.empty());
}

// A setting turned while the flow is open changes nothing: null figures and
// a note, not an "overshoot of 65 %".
TEST(EventMetrics, AnEventThatChangesNothingHasNoFigures) {
  const EventMetrics m = only_event("setting-under-flow.toml", 0);
  EXPECT_EQ(m.note, note_no_change);
  EXPECT_FALSE(m.overshoot_percent || m.undershoot_percent || m.settling_time);
  EXPECT_FALSE(m.swash_response_time || m.swash_travel_time);  // the pump stays at full stroke
}

// The hunting demo: the window ends in a limit cycle larger than the band,
// so there is no settling time (not 0.0 ms, nor the window's length), and the
// 2 bar nudge hardly moves the swash, so no swash figures (not 0.0 ms).
TEST(EventMetrics, HuntingHasNoSettlingTime) {
  const EventMetrics m = only_event("hunting-oversized-damping-orifice.toml");
  EXPECT_EQ(m.note, note_hunting);
  EXPECT_FALSE(m.settling_time);
  EXPECT_EQ(m.oscillation.kind, OscillationKind::sustained);
  EXPECT_GT(m.oscillation.peak_to_peak, 2.0 * m.band);
  EXPECT_FALSE(m.swash_response_time);
  // Its remedy settles, with a figure inside the window.
  const EventMetrics remedy = only_event("hunting-remedy.toml");
  EXPECT_TRUE(remedy.note.empty()) << remedy.note;
  ASSERT_TRUE(remedy.settling_time);
  EXPECT_GT(*remedy.settling_time, 0.001);
  EXPECT_LT(*remedy.settling_time, 0.5 * (remedy.window_end - remedy.time));
}

// The same event in a 1 s and a 10 h run gives the same figures, though the
// 10 h run keeps only a thinned trace (as the command line does: every
// 32nd sample or sparser, none of them inside the transient).
TEST(EventMetrics, SameEventSameFiguresInAOneSecondAndATenHourRun) {
  // The v1 pump is at rest 0.9 s after the event; today's default pump still
  // reabsorbs released air (2 s time constant) and creeps in its friction band.
  Scenario s;
  s.parameters = v1_pump();
  s.settings.sample_interval = 0.02;
  s.settings.max_step = 1.0;  // long steps once settled, so ten hours take seconds
  s.events = {Event{0.1, "load.opening", 0.0, 0.005, 0}};
  RunOptions options;
  options.max_trace_samples = 1u << 16;
  s.settings.duration = 1.0;
  const RunResult short_run = run_scenario(s, options);
  const EventMetrics a = event_metrics(s, short_run).at(0);
  s.settings.duration = 36000.0;
  const RunResult long_run = run_scenario(s, options);
  const EventMetrics b = event_metrics(s, long_run).at(0);
  ASSERT_GE(long_run.trace_stride, 16);
  ASSERT_GT(long_run.trace[1].time, 0.2);  // the kept trace cannot see the transient

  ASSERT_TRUE(a.settling_time && a.overshoot_percent && a.swash_response_time && a.swash_travel_time);
  ASSERT_TRUE(b.settling_time && b.overshoot_percent && b.swash_response_time && b.swash_travel_time) << b.note;
  EXPECT_EQ(a.peak_discharge_pressure, b.peak_discharge_pressure);
  // The final value (at 1 s or at 10 h) differs by what is left of the
  // transient after 0.9 s; every figure agrees to far better than a sample.
  EXPECT_NEAR(a.final_discharge_pressure, b.final_discharge_pressure, 1e-4 * a.final_discharge_pressure);
  EXPECT_NEAR(*a.settling_time, *b.settling_time, 1e-4);
  EXPECT_NEAR(*a.overshoot_percent, *b.overshoot_percent, 0.01);
  EXPECT_NEAR(*a.swash_response_time, *b.swash_response_time, 1e-6);
  EXPECT_NEAR(*a.swash_travel_time, *b.swash_travel_time, 1e-6);
  std::printf(
      "1 s run: settling %.4f ms, overshoot %.3f %%; 10 h run: settling %.4f ms, overshoot %.3f %% "
      "(trace stride %lld)\n",
      *a.settling_time * 1e3, *a.overshoot_percent, *b.settling_time * 1e3, *b.overshoot_percent,
      long_run.trace_stride);
}
