// The simulator against laws and facts of the trade, and its own contracts
// (schedule, end stops, running in pieces).
#include <gtest/gtest.h>

#include <cmath>

#include "swashtune/live_session.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/schedule.hpp"
#include "swashtune/simulator.hpp"
#include "v1_pump.hpp"

using namespace swashtune;

namespace {

// The valve slam on the v1 pump, whose behaviour model.md describes.
Scenario valve_slam() {
  Scenario s;
  s.parameters = v1_pump();
  s.settings.duration = 1.0;
  s.events = {Event{0.1, "load.opening", 0.0, 0.005, 0}, Event{0.6, "load.opening", 1.0, 0.005, 0}};
  return s;
}

double pressure_at(const RunResult& r, double t) { return trace_value_at(r.trace, t, discharge_pressure_of); }

}  // namespace

TEST(Schedule, RampsStepsAndSupersedes) {
  Schedule schedule(v1_pump());
  schedule.add(Event{0.1, "load.opening", 0.0, 0.1, 0});   // 1 -> 0 over 0.1 s
  schedule.add(Event{0.15, "load.opening", 0.8, 0.0, 0});  // step while the ramp is half done
  EXPECT_DOUBLE_EQ(schedule.at(0.05).opening, 1.0);
  EXPECT_NEAR(schedule.at(0.125).opening, 0.75, 1e-12);
  EXPECT_NEAR(schedule.at(0.1499999).opening, 0.5, 1e-5);
  EXPECT_DOUBLE_EQ(schedule.at(0.15).opening, 0.8);
  EXPECT_DOUBLE_EQ(schedule.at(0.3).opening, 0.8);  // the superseded ramp end (0.2 s) is gone
  EXPECT_DOUBLE_EQ(schedule.next_corner_after(0.0), 0.1);
  EXPECT_DOUBLE_EQ(schedule.next_corner_after(0.1), 0.15);
  EXPECT_TRUE(std::isinf(schedule.next_corner_after(0.15)));
  EXPECT_TRUE(schedule.varies_between(0.1, 0.15));
  EXPECT_FALSE(schedule.varies_between(0.15, 1.0));
  EXPECT_THROW(schedule.add(Event{0.2, "compensator.flow_forces", 0.0, 0.0, 0}), std::invalid_argument);
}

// Swash held at full stroke, load closed, compensator shut off from the line:
// dp/dt = beta Q / V (hydraulic capacitance, Merritt, Hydraulic Control
// Systems, 1967): 60 L/min into a closed 1 L at 1.4 GPa gives 14 bar/ms
// (computed from that law).
TEST(Simulator, PressureBuildUpFollowsCapacitanceLaw) {
  ModelParameters p = v1_pump();
  p.bulk_modulus = 1.4e9;
  p.line_volume = 1e-3;
  p.displacement = 60e-3 / p.speed;  // 60 L/min at full stroke
  p.leakage_coefficient = 0.0;
  p.opening = 0.0;
  p.setting = 1e9;  // the spool never opens, so the plate stays on its stop
  RunSettings settings = default_settings();
  settings.sample_interval = 0.1e-3;
  InitialCondition start;
  start.x = zero_state(layout_of(p));  // a default State has no entries to set
  start.x[state::swash_angle] = p.max_swash_angle;
  start.x[state::spool_position] = -p.spool_travel;
  start.modes = StopModes{Stop::upper, Stop::lower};
  Simulator sim(p, settings, start);
  std::vector<Sample> trace;
  sim.advance_to(1e-3, [&](const Sample& s) { trace.push_back(s); });
  ASSERT_EQ(trace.size(), 11u);
  for (const Sample& s : trace) {
    if (s.time == 0.0) continue;
    const double rate_bar_per_ms = s.x[state::discharge_pressure] / 1e5 / (s.time * 1e3);
    EXPECT_NEAR(rate_bar_per_ms / 14.0, 1.0, 0.005) << "t = " << s.time;
  }
}

// Fact of the trade (common practice): at no flow a pressure-compensated
// pump holds its setting and strokes back to near-zero displacement;
// internal leakage and the control circuit's bleed make it hold a small
// angle (a few percent of full stroke; from memory).
TEST(Simulator, DeadheadHoldsSettingAtNearZeroStroke) {
  Scenario s;
  s.parameters.opening = 0.0;
  s.settings.duration = 0.2;
  const RunResult r = run_scenario(s);
  ASSERT_TRUE(r.start.converged);
  const Sample& last = r.trace.back();
  const double p = last.x[state::discharge_pressure];
  EXPECT_NEAR(p / s.parameters.setting, 1.0, 0.02);
  const double angle = last.x[state::swash_angle];
  EXPECT_GT(angle, 0.0);                                  // leakage keeps it off the stop
  EXPECT_LT(angle, 0.10 * s.parameters.max_swash_angle);  // but near zero stroke
  // Everything it makes goes to leakage and the control circuit.
  EXPECT_NEAR(last.pump_flow, last.control_flow, 1e-7);
  EXPECT_NEAR(last.load_flow, 0.0, 1e-12);
  // Without leakage and bleed it strokes back further.
  Scenario tight = s;
  tight.parameters.leakage_coefficient = 0.0;
  const RunResult rt = run_scenario(tight);
  EXPECT_LT(rt.trace.back().x[state::swash_angle], angle);
}

// Common practice: with an easy flow path the pump stays at full stroke and
// the circuit sets the pressure, so turning the compensator changes nothing
// you can see; at no flow the pressure follows the setting.
TEST(Simulator, SettingOnlyShowsAtNoFlow) {
  Scenario s;
  s.settings.duration = 1.0;
  s.events = {Event{0.1, "compensator.setting", 140e5, 0.1, 0},   // turned down under flow
              Event{0.4, "load.opening", 0.0, 0.02, 0},           // flow blocked
              Event{0.6, "compensator.setting", 180e5, 0.1, 0}};  // turned up at no flow
  const RunResult r = run_scenario(s);
  const double before = pressure_at(r, 0.1);
  EXPECT_LT(before, 10e5);
  for (double t : {0.15, 0.2, 0.3, 0.39}) {
    EXPECT_NEAR(pressure_at(r, t), before, 0.01e5) << "t = " << t;  // within 0.01 bar
    EXPECT_NEAR(trace_value_at(r.trace, t, swash_angle_of), s.parameters.max_swash_angle, 1e-9);
  }
  EXPECT_NEAR(pressure_at(r, 0.59) / 140e5, 1.0, 0.02);  // the lowered setting only shows now
  EXPECT_NEAR(pressure_at(r, 1.0) / 180e5, 1.0, 0.02);
}

// model.md allows any end-stop method if penetration stays below 0.1 % of
// the travel; hard stops should give none at all.
TEST(Simulator, HardStopsDoNotPenetrate) {
  const Scenario s = valve_slam();
  const RunResult r = run_scenario(s);
  const ModelParameters& p = s.parameters;
  bool swash_reached_zero = false, spool_reached_top = false;
  for (const Sample& x : r.trace) {
    EXPECT_GE(x.x[state::swash_angle], -1e-9 * p.max_swash_angle);
    EXPECT_LE(x.x[state::swash_angle], p.max_swash_angle * (1 + 1e-9));
    EXPECT_LE(std::abs(x.x[state::spool_position]), p.spool_travel * (1 + 1e-9));
    swash_reached_zero |= x.x[state::swash_angle] == 0.0;
    spool_reached_top |= x.x[state::spool_position] == p.spool_travel;
  }
  EXPECT_TRUE(swash_reached_zero);
  EXPECT_TRUE(spool_reached_top);
  EXPECT_GT(r.stats.stop_events, 0);
}

// model.md's sanity description of the defaults (not an oracle): peak about
// 240-250 bar, settles near 210 bar, back to full stroke within about 20 ms.
TEST(Simulator, ValveSlamLooksLikeTheReferenceDescription) {
  const Scenario s = valve_slam();
  const RunResult r = run_scenario(s);
  const auto m = event_metrics(s, r);
  ASSERT_EQ(m.size(), 2u);
  EXPECT_GT(m[0].peak_discharge_pressure, 235e5);
  EXPECT_LT(m[0].peak_discharge_pressure, 255e5);
  EXPECT_NEAR(pressure_at(r, 0.55) / 210e5, 1.0, 0.02);
  ASSERT_TRUE(m[0].settling_time && m[1].swash_response_time);
  EXPECT_LT(*m[0].settling_time, 0.06);
  EXPECT_LT(*m[1].swash_response_time, 0.025);
  EXPECT_NEAR(trace_value_at(r.trace, 0.65, swash_angle_of), s.parameters.max_swash_angle, 1e-6);
}

// A live session advances in small pieces and adds events as it goes; the
// trace must not depend on how the run was cut.
TEST(Simulator, RunningInPiecesGivesTheSameTrace) {
  const Scenario s = valve_slam();
  const RunResult whole = run_scenario(s);
  Simulator sim(s.parameters, s.settings, whole.start.condition);
  std::vector<Sample> pieces;
  auto sink = [&](const Sample& x) { pieces.push_back(x); };
  double t = 0.0;
  std::size_t next_event = 0;
  while (t < s.settings.duration - 1e-12) {
    t = std::min(t + 0.0137, s.settings.duration);
    while (next_event < s.events.size() && s.events[next_event].at <= t) {
      // Add each event only once the run has nearly reached it, as a user would.
      sim.advance_to(s.events[next_event].at, sink);
      sim.add_event(s.events[next_event++]);
    }
    sim.advance_to(t, sink);
  }
  ASSERT_EQ(pieces.size(), whole.trace.size());
  for (std::size_t i = 0; i < pieces.size(); ++i) {
    ASSERT_DOUBLE_EQ(pieces[i].time, whole.trace[i].time);
    EXPECT_NEAR(pieces[i].x[state::discharge_pressure], whole.trace[i].x[state::discharge_pressure], 0.2e5)
        << "t = " << pieces[i].time;
  }
  EXPECT_THROW(sim.add_event(Event{0.5, "load.opening", 0.5, 0.0, 0}), std::invalid_argument);
}

// A live session records every change as an event at the present time;
// saved as a scenario (through the TOML writer and reader) and replayed it
// gives the same trace.
TEST(LiveSession, SavedAndReplayedGivesTheSameTrace) {
  Scenario s;
  LiveSession live(s);
  std::vector<Sample> trace;
  auto sink = [&](const Sample& x) { trace.push_back(x); };
  // A person's session in uneven pieces: close fast, turn the setting, reopen.
  live.advance(0.0503, sink);
  live.change("load.opening", 0.0, 0.005);
  live.advance(0.1017, sink);
  live.change("compensator.setting", 180e5, 0.0);
  live.advance(0.0731, sink);
  live.change("load.opening", 1.0, 0.01);
  live.advance(0.0649, sink);
  EXPECT_THROW(live.change("load.opening", 1.5), ScenarioError);
  EXPECT_THROW(live.change("no.such.key", 1.0), ScenarioError);

  const Scenario saved = parse_scenario(scenario_to_toml(live.to_scenario()), "saved.toml");
  ASSERT_EQ(saved.events.size(), 3u);
  EXPECT_EQ(saved.events[1].at, live.to_scenario().events[1].at);  // times survive the text exactly
  const RunResult replay = run_scenario(saved);
  ASSERT_EQ(replay.trace.size(), trace.size());
  double worst = 0.0;
  for (std::size_t i = 0; i < trace.size(); ++i) {
    ASSERT_DOUBLE_EQ(replay.trace[i].time, trace[i].time);
    worst =
        std::max(worst, std::abs(replay.trace[i].x[state::discharge_pressure] - trace[i].x[state::discharge_pressure]));
  }
  // Within 0.1 % of the setting: the integrator's own tolerance, not a model difference.
  EXPECT_LT(worst, 1e-3 * s.parameters.setting);
  EXPECT_GT(replay.peak_discharge_pressure, 200e5);  // the session did slam the valve
}

// A person who takes over a scripted key does not cancel the script: the
// study's later events on that key still act, and the saved session (with
// the script's events still to come) replays to the same trace.
TEST(LiveSession, ScriptGoesOnAfterALiveChangeAndIsSaved) {
  Scenario s;
  s.settings.duration = 0.4;
  s.events = {Event{0.1, "load.opening", 0.0, 0.005, 0}, Event{0.3, "load.opening", 1.0, 0.005, 0}};
  LiveSession live(s);
  std::vector<Sample> trace;
  auto sink = [&](const Sample& x) { trace.push_back(x); };
  live.advance(0.0523, sink);
  live.change("load.opening", 0.5, 0.0);  // before the scripted slam
  live.advance(0.1131, sink);
  live.change("load.opening", 0.2, 0.0);  // between the two scripted events
  live.advance(0.0517, sink);
  const Scenario mid = live.to_scenario();
  // The script's event at 0.3 s is still to come: kept, and the run lasts as scripted.
  ASSERT_EQ(mid.events.size(), 4u);
  EXPECT_EQ(mid.events.back().at, 0.3);
  EXPECT_EQ(mid.settings.duration, 0.4);
  live.advance(0.15, sink);  // past 0.3 s: the script reopened the valve
  EXPECT_EQ(live.parameters_now().opening, 1.0);

  const Scenario saved = parse_scenario(scenario_to_toml(live.to_scenario()), "saved.toml");
  const RunResult replay = run_scenario(saved);
  double worst = 0.0;
  for (const Sample& x : trace)
    worst = std::max(
        worst, std::abs(trace_value_at(replay.trace, x.time, discharge_pressure_of) - x.x[state::discharge_pressure]));
  EXPECT_LT(worst, 1e-3 * s.parameters.setting);  // the integrator's tolerance
  // The session's clock is on a 0.1 us grid: its times are short decimals.
  const std::string text = scenario_to_toml(live.to_scenario());
  EXPECT_NE(text.find("at = 0.0523\n"), std::string::npos) << text;
  EXPECT_NE(text.find("at = 0.1654\n"), std::string::npos) << text;
  EXPECT_NE(text.find("duration = 0.3671\n"), std::string::npos) << text;
}

TEST(LiveSession, ResetReturnsToTheSteadyState) {
  Scenario s;
  LiveSession live(s);
  live.advance(0.02, nullptr);
  live.change("load.opening", 0.0, 0.005);
  live.advance(0.01, nullptr);
  ModelParameters now = live.parameters_now();
  live.reset(now);
  EXPECT_EQ(live.time(), 0.0);
  EXPECT_TRUE(live.to_scenario().events.empty());
  EXPECT_NEAR(live.state()[state::discharge_pressure] / s.parameters.setting, 1.0, 0.02);  // deadhead
  EXPECT_EQ(live.state(), live.start().condition.x);
}
