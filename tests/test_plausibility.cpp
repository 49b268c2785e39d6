// Legal but implausible input gets a warning naming file:line, key, the
// value as read and its likely meaning; a run that peaks above the line's
// rating or 1.5 times the setting gets a caution with the safety words.
#include <gtest/gtest.h>

#include <filesystem>

#include "swashtune/metrics.hpp"
#include "swashtune/plausibility.hpp"
#include "swashtune/safety.hpp"

using namespace swashtune;

namespace {

std::vector<std::string> warnings_of(const std::string& text) { return parse_scenario(text, "press.toml").warnings; }

bool any_contains(const std::vector<std::string>& lines, const std::string& part) {
  for (const std::string& l : lines)
    if (l.find(part) != std::string::npos) return true;
  return false;
}

}  // namespace

// 3000 psi = 3000 x 6894.757293168 Pa (NIST SP 811) = 206.84 bar.
TEST(Plausibility, APsiFigureWrittenAsAPlainNumber) {
  const auto w = warnings_of("[compensator]\nsetting = 3000\n");
  ASSERT_EQ(w.size(), 1u);
  EXPECT_EQ(w[0],
            "press.toml:2: compensator.setting = 3000: 3000 Pa = 0.03 bar is far below what pump compensators are set "
            "to (5 to 700 bar); did you mean 3000 psi = 206.8 bar?");
}

TEST(Plausibility, ABarFigureWrittenAsAPlainNumberOffersEveryLikelyUnit) {
  const auto w = warnings_of("\n[compensator]\nsetting = 210\n");
  ASSERT_EQ(w.size(), 1u);
  // 210 bar, or 210 psi = 14.48 bar; 210 MPa = 2100 bar is no compensator setting.
  EXPECT_NE(w[0].find("press.toml:3: compensator.setting = 210: 210 Pa = 0.0021 bar"), std::string::npos) << w[0];
  EXPECT_NE(w[0].find("did you mean 210 bar or 210 psi = 14.48 bar?"), std::string::npos) << w[0];
}

TEST(Plausibility, AnExplicitUnitOutsideWhatPumpsUse) {
  // No relief valve: one fitted below the setting would add its own warning.
  const auto w = warnings_of("[compensator]\nsetting = \"2000 bar\"\n[relief]\nsetting = \"none\"\n");
  ASSERT_EQ(w.size(), 1u);
  EXPECT_EQ(w[0],
            "press.toml:2: compensator.setting = \"2000 bar\": 2000 bar is far above what pump compensators are set to "
            "(5 to 700 bar); check the value");
  EXPECT_FALSE(any_contains(warnings_of("[compensator]\nsetting = \"4 bar\"\n"), "did you mean"));
}

TEST(Plausibility, PlausibleValuesAreQuiet) {
  EXPECT_TRUE(warnings_of("[compensator]\nsetting = \"3000 psi\"\n").empty());
  EXPECT_TRUE(warnings_of("[compensator]\nsetting = 21000000\n[line]\ntank_pressure = 0\n").empty());
  EXPECT_TRUE(warnings_of("[pump]\nspeed = 0\n").empty());  // a stopped pump is a study, not a slip
  for (const auto& entry : std::filesystem::directory_iterator(std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios"))
    if (entry.path().extension() == ".toml") {
      EXPECT_TRUE(load_scenario(entry.path().string()).warnings.empty()) << entry.path();
    }
}

TEST(Plausibility, OtherCommonSlips) {
  // 30 rev/s = 1800 rev/min; 1 m^3 where 1 L was meant; 2 Pa of tank pressure.
  const auto w = warnings_of("[pump]\nspeed = 30\n[line]\nvolume = 1\ntank_pressure = 2\n");
  ASSERT_EQ(w.size(), 3u);
  EXPECT_NE(w[0].find("press.toml:2: pump.speed = 30: 30 rev/min is far below"), std::string::npos) << w[0];
  EXPECT_NE(w[0].find("did you mean 30 rev/s = 1800 rev/min?"), std::string::npos) << w[0];
  EXPECT_NE(w[1].find("press.toml:4: line.volume = 1: 1 m^3 = 1000 L is far above"), std::string::npos) << w[1];
  EXPECT_NE(w[1].find("did you mean 1 L?"), std::string::npos) << w[1];
  EXPECT_NE(w[2].find("did you mean 2 bar or 2 psi = 0.1379 bar?"), std::string::npos) << w[2];
}

TEST(Plausibility, EventTargetsAndRelations) {
  const auto w = warnings_of(
      "[scenario]\nsample_interval = 0.5\n[relief]\nsetting = \"180 bar\"\n\n[[events]]\nat = 0.1\n"
      "set = \"compensator.setting\"\nto = 3000\n");
  ASSERT_EQ(w.size(), 3u);
  EXPECT_NE(w[0].find("press.toml:9: events[0].to: compensator.setting = 3000: 3000 Pa"), std::string::npos) << w[0];
  EXPECT_TRUE(any_contains(w,
                           "press.toml:4: relief.setting = \"180 bar\": the relief valve cracks at 180 bar, below "
                           "the compensator setting of 210 bar"));
  EXPECT_TRUE(any_contains(w,
                           "press.toml:2: scenario.sample_interval = 0.5: only 3 samples over the 1 s run; did "
                           "you mean 0.5 ms?"));
}

TEST(Plausibility, RatedPressureIsNoneByDefaultAndTakesAValue) {
  EXPECT_TRUE(std::isinf(default_parameters().rated_pressure));
  const Scenario s = parse_scenario("[line]\nrated_pressure = \"250 bar\"\n", "x");
  EXPECT_DOUBLE_EQ(s.parameters.rated_pressure, 250e5);
  EXPECT_TRUE(std::isinf(parse_scenario("[line]\nrated_pressure = \"none\"\n", "x").parameters.rated_pressure));
  EXPECT_EQ(parse_scenario(scenario_to_toml(s), "y").parameters.rated_pressure, 250e5);
}

namespace {

Scenario slam(double setting, double line_volume) {
  Scenario s;
  s.parameters.setting = setting;
  s.parameters.line_volume = line_volume;
  s.events = {Event{0.1, "load.opening", 0.0, 0.005, 0}};
  s.settings.duration = 0.3;
  return s;
}

}  // namespace

TEST(PeakCautions, AboveTheRatedPressureOrOneAndAHalfTimesTheSetting) {
  // The demo's slam peaks near 246 bar (model.md: 240-250 bar): within 1.5 x 210 bar.
  Scenario s = slam(210e5, 1e-3);
  RunResult r = run_scenario(s);
  EXPECT_TRUE(peak_cautions(s, r).empty());
  s.parameters.rated_pressure = 220e5;
  const auto rated = peak_cautions(s, r);
  ASSERT_EQ(rated.size(), 2u);
  EXPECT_NE(rated[0].find("above the line's rated pressure of 220.0 bar (3191 psi)"), std::string::npos) << rated[0];
  EXPECT_EQ(rated[1], safety_notice_short);
  // A low setting and a small line: the spike goes far past 1.5 times the setting.
  s = slam(60e5, 0.1e-3);
  r = run_scenario(s);
  ASSERT_GT(r.peak_discharge_pressure, 1.5 * 60e5);
  const auto high = peak_cautions(s, r);
  ASSERT_EQ(high.size(), 2u);
  EXPECT_NE(high[0].find("more than 1.5 times the compensator setting of 60.0 bar"), std::string::npos) << high[0];
  EXPECT_NE(high[0].find("after the event at 0.1 s on load.opening"), std::string::npos) << high[0];
}
