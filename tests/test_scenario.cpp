// Scenario files: loading, error messages, writing back (core/src/scenario*.cpp).

#include <gtest/gtest.h>

#include <cctype>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <limits>
#include <sstream>
#include <string>
#include <vector>

#include "swashtune/parameters.hpp"
#include "swashtune/scenario.hpp"

namespace {

using namespace swashtune;

constexpr double pi = 3.14159265358979323846;
constexpr double kPsi = 6894.757293168;  // Pa, NIST SP 811

const std::string kBadDir = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/bad/";

double default_of(const char* key) { return find_parameter(key)->default_value; }

// The message of the ScenarioError that `f` throws; fails the test if none.
template <class F>
std::string error_of(F&& f) {
  try {
    f();
  } catch (const ScenarioError& e) {
    return e.what();
  } catch (const std::exception& e) {
    ADD_FAILURE() << "expected a ScenarioError, got another exception: " << e.what();
    return {};
  }
  ADD_FAILURE() << "expected a ScenarioError, nothing was thrown";
  return {};
}

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

// A unique scratch directory for files the tests write.
std::filesystem::path scratch_dir() {
  const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
  const std::filesystem::path dir =
      std::filesystem::temp_directory_path() / ("swashtune-test-scenario-" + std::string(info->name()));
  std::filesystem::create_directories(dir);
  return dir;
}

void write_text(const std::filesystem::path& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary);
  out << text;
}

// ---------------------------------------------------------------- good files

const char* const kGoodScenario = R"(# a study with unit strings everywhere
[scenario]
name = "Closing the valve"
description = "Fast closure, then reopening"
duration = "2 s"
sample_interval = "1 ms"

[solver]
rtol = 1e-7
transition_pressure = "0.2 bar"

[pump]
displacement = "45 cm^3/rev"
speed = "1500 rpm"
max_swash_angle = "15 deg"

[bias_spring]
rate = "20 kN/m"

[compensator]
setting = "3000 psi"
flow_forces = false

[line]
volume = "1.2 L"

[load]
opening = 1  # an integer is a number too

[[events]]
at = "0.5 s"
set = "load.opening"
to = 1.0

[[events]]
at = "100 ms"
set = "load.opening"
to = 0
ramp = "5 ms"

[[events]]
at = "0.5 s"
set = "compensator.setting"
to = "200 bar"
)";

TEST(Scenario, GoodFileLoads) {
  const Scenario s = parse_scenario(kGoodScenario, "good.toml");
  EXPECT_EQ(s.name, "Closing the valve");
  EXPECT_EQ(s.description, "Fast closure, then reopening");
  EXPECT_DOUBLE_EQ(s.settings.duration, 2.0);
  EXPECT_DOUBLE_EQ(s.settings.sample_interval, 1e-3);
  EXPECT_DOUBLE_EQ(s.settings.rtol, 1e-7);

  const ModelParameters& p = s.parameters;
  EXPECT_DOUBLE_EQ(p.transition_pressure, 2e4);
  EXPECT_DOUBLE_EQ(p.displacement, 45e-6);
  EXPECT_DOUBLE_EQ(p.speed, 1500.0);  // stored in rev/min
  EXPECT_DOUBLE_EQ(p.max_swash_angle, 15.0 * pi / 180.0);
  EXPECT_DOUBLE_EQ(p.bias_rate, 20e3);
  EXPECT_DOUBLE_EQ(p.setting, 3000.0 * kPsi);
  EXPECT_FALSE(p.flow_forces);
  EXPECT_DOUBLE_EQ(p.line_volume, 1.2e-3);
  EXPECT_DOUBLE_EQ(p.opening, 1.0);
}

TEST(Scenario, MissingKeysTakeTheirDefaults) {
  const Scenario s = parse_scenario(kGoodScenario, "good.toml");
  const ModelParameters& p = s.parameters;
  EXPECT_EQ(p.density, default_of("fluid.density"));
  EXPECT_EQ(p.bulk_modulus, default_of("fluid.bulk_modulus"));
  EXPECT_EQ(p.control_piston_diameter, default_of("control_piston.diameter"));
  EXPECT_EQ(p.spool_diameter, default_of("compensator.spool_diameter"));
  EXPECT_EQ(p.valve_area, default_of("load.valve_area"));
  EXPECT_EQ(s.settings.atol, find_setting("solver.atol")->default_value);
  EXPECT_EQ(s.settings.max_step, find_setting("solver.max_step")->default_value);

  // An empty file is the default scenario.
  const Scenario empty = parse_scenario("", "empty.toml");
  for (const ParameterSpec& spec : parameter_registry())
    EXPECT_EQ(spec.get(empty.parameters), spec.default_value) << spec.key;
  for (const SettingSpec& spec : setting_registry())
    EXPECT_EQ(spec.get(empty.settings), spec.default_value) << spec.key;
  EXPECT_TRUE(empty.events.empty());
}

TEST(Scenario, EventsAreSortedStablyWithTheirLines) {
  const Scenario s = parse_scenario(kGoodScenario, "good.toml");
  ASSERT_EQ(s.events.size(), 3u);
  // The 100 ms event comes first; the two at 0.5 s keep their file order.
  EXPECT_DOUBLE_EQ(s.events[0].at, 0.1);
  EXPECT_EQ(s.events[0].target, "load.opening");
  EXPECT_DOUBLE_EQ(s.events[0].to, 0.0);
  EXPECT_DOUBLE_EQ(s.events[0].ramp, 5e-3);
  EXPECT_EQ(s.events[1].target, "load.opening");
  EXPECT_DOUBLE_EQ(s.events[1].ramp, 0.0);  // ramp left out: a step
  EXPECT_EQ(s.events[2].target, "compensator.setting");
  EXPECT_DOUBLE_EQ(s.events[2].to, 200e5);  // converted with the target's unit
  EXPECT_LT(s.events[1].source_line, s.events[0].source_line);
  EXPECT_LT(s.events[0].source_line, s.events[2].source_line);
  EXPECT_GT(s.events[1].source_line, 1);
}

TEST(Scenario, SortEventsIsStable) {
  std::vector<Event> events;
  const double times[] = {0.3, 0.1, 0.3, 0.0, 0.1, 0.3};
  for (int i = 0; i < 6; ++i) events.push_back(Event{times[i], "load.opening", 0.0, 0.0, i + 1});
  sort_events(events);
  const int expected_lines[] = {4, 2, 5, 1, 3, 6};
  for (int i = 0; i < 6; ++i) EXPECT_EQ(events[i].source_line, expected_lines[i]) << "position " << i;
}

TEST(Scenario, LoadScenarioReadsAFile) {
  const auto path = scratch_dir() / "study.toml";
  write_text(path, kGoodScenario);
  const Scenario from_file = load_scenario(path.string());
  const Scenario from_text = parse_scenario(kGoodScenario, "x.toml");
  EXPECT_EQ(from_file.name, from_text.name);
  EXPECT_EQ(from_file.parameters.setting, from_text.parameters.setting);
  EXPECT_EQ(from_file.events.size(), from_text.events.size());
  std::filesystem::remove_all(path.parent_path());
}

// ----------------------------------------------------------------- bad files

struct BadCase {
  const char* file;
  const char* key;       // the key the message must name
  const char* fragment;  // and a part of what it says
};

std::ostream& operator<<(std::ostream& out, const BadCase& c) { return out << c.file; }

// The line marked "# <- error" in a file; 0 when there is none.
int marked_line(const std::string& path) {
  std::ifstream in(path);
  std::string text;
  for (int line = 1; std::getline(in, text); ++line)
    if (contains(text, "# <- error")) return line;
  return 0;
}

class BadScenario : public ::testing::TestWithParam<BadCase> {};

TEST_P(BadScenario, MessageNamesFileLineAndKey) {
  const BadCase& c = GetParam();
  const std::string path = kBadDir + c.file;
  const int line = marked_line(path);
  ASSERT_GT(line, 0) << path << " has no \"# <- error\" marker";

  const std::string message = error_of([&] { load_scenario(path); });
  EXPECT_TRUE(contains(message, path + ":" + std::to_string(line) + ":")) << message;
  EXPECT_TRUE(contains(message, c.key)) << message;
  EXPECT_TRUE(contains(message, c.fragment)) << message;

  // The same text under another name gives the same message under that name.
  std::ifstream in(path);
  std::stringstream text;
  text << in.rdbuf();
  const std::string renamed = error_of([&] { parse_scenario(text.str(), "renamed.toml"); });
  EXPECT_TRUE(contains(renamed, "renamed.toml:" + std::to_string(line) + ":")) << renamed;
}

INSTANTIATE_TEST_SUITE_P(
    Files, BadScenario,
    ::testing::Values(BadCase{"unknown_key.toml", "line.volme", "did you mean \"line.volume\"?"},
                      BadCase{"unknown_section.toml", "pumps", "unknown section"},
                      BadCase{"wrong_unit.toml", "compensator.setting", "expected a pressure"},
                      BadCase{"negative_volume.toml", "line.volume", "> 0 m^3"},
                      BadCase{"opening_out_of_range.toml", "load.opening", ">= 0 and <= 1, got 1.5"},
                      BadCase{"malformed.toml", "", "malformed TOML"},
                      BadCase{"event_unknown_target.toml", "events[1].set", "unknown parameter \"load.openning\""},
                      BadCase{"event_on_flag.toml", "events[0].set", "on/off switch"},
                      BadCase{"event_on_setting.toml", "events[0].set", "run setting"},
                      BadCase{"event_negative_ramp.toml", "events[0].ramp", ">= 0 s"},
                      BadCase{"event_after_end.toml", "events[0].at", "scenario.duration"},
                      BadCase{"event_value_out_of_range.toml", "events[0].to", "<= 1"},
                      BadCase{"event_missing_to.toml", "events[0]", "missing key \"to\""},
                      BadCase{"flag_as_string.toml", "compensator.flow_forces",
                              "expected true or false, got the string \"yes\""},
                      BadCase{"table_for_number.toml", "pump.displacement", "got a table"},
                      BadCase{"name_not_string.toml", "scenario.name", "expected a string"},
                      BadCase{"key_outside_section.toml", "duration", "did you mean \"scenario.duration\"?"},
                      BadCase{"inconsistent_underlap.toml", "compensator.underlap", "spool_travel"},
                      BadCase{"too_many_samples.toml", "scenario.sample_interval", "samples"}),
    [](const ::testing::TestParamInfo<BadCase>& info) {
      std::string name = info.param.file;
      name = name.substr(0, name.find('.'));
      for (char& ch : name)
        if (!std::isalnum(static_cast<unsigned char>(ch))) ch = '_';
      return name;
    });

TEST(Scenario, WrongUnitSaysWhatWasFound) {
  const std::string message = error_of([] { load_scenario(kBadDir + "wrong_unit.toml"); });
  EXPECT_TRUE(contains(message, "\"210 kg\"")) << message;
  EXPECT_TRUE(contains(message, "mass")) << message;
}

TEST(Scenario, MalformedTomlGivesLineAndColumn) {
  const std::string message = error_of([] { parse_scenario("[pump]\nspeed = 1800 rpm\n", "m.toml"); });
  // "m.toml:2:COLUMN: malformed TOML: ..."
  ASSERT_TRUE(contains(message, "m.toml:2:")) << message;
  const std::string after = message.substr(std::string("m.toml:2:").size());
  EXPECT_TRUE(!after.empty() && std::isdigit(static_cast<unsigned char>(after[0]))) << message;
  EXPECT_TRUE(contains(message, "malformed TOML")) << message;
  // So is text that is not UTF-8.
  EXPECT_TRUE(contains(error_of([] { parse_scenario("[scenario]\nname = \"\xff\"\n", "u.toml"); }), "u.toml:2:"));
  // Duplicate keys are malformed TOML too.
  EXPECT_TRUE(contains(error_of([] { parse_scenario("[load]\nopening = 1\nopening = 0\n", "d.toml"); }), "d.toml:3:"));
}

TEST(Scenario, MissingFileIsAnError) {
  const std::string path = kBadDir + "does_not_exist.toml";
  const std::string message = error_of([&] { load_scenario(path); });
  EXPECT_TRUE(contains(message, path)) << message;
  EXPECT_TRUE(contains(message, "cannot open")) << message;
  // A directory is not a scenario either (it must not load as an empty one).
  EXPECT_TRUE(contains(error_of([] { load_scenario(kBadDir); }), "cannot open"));
}

TEST(Scenario, MoreBadValues) {
  struct Inline {
    const char* text;
    const char* key;
    const char* fragment;
  };
  const Inline cases[] = {
      {"[pump]\nspeed = [1800]\n", "pump.speed", "got an array"},
      {"[pump]\nspeed = true\n", "pump.speed", "got true"},
      {"[pump]\nspeed = \"1800 kg\"\n", "pump.speed", "rotational speed"},
      {"[pump]\nspeed = \"fast\"\n", "pump.speed", "\"fast\""},
      {"[pump]\nspeed = \"1e999 rpm\"\n", "pump.speed", "out of range"},
      {"[pump]\nspeed = nan\n", "pump.speed", "got nan"},
      {"[pump]\nspeed = inf\n", "pump.speed", "got inf"},
      {"[pump]\nmax_swash_angle = \"45 deg\"\n", "pump.max_swash_angle", "got \"45 deg\" = 0.785"},
      {"[compensator]\nflow_forces = 1\n", "compensator.flow_forces", "expected true or false"},
      {"[scenario]\nduration = 0\n", "scenario.duration", "> 0 s"},
      {"[scenario]\ndescription = [\"a\"]\n", "scenario.description", "expected a string"},
      {"[solver]\nrtol = \"1e-3 s\"\n", "solver.rtol", "plain number"},
      {"[solver]\ntransition_pressure = -1\n", "solver.transition_pressure", ">= 1 Pa"},
      {"[pump]\nvolume = 1\n", "pump.volume", "did you mean \"line.volume\"?"},
      {"[pump.extra]\nx = 1\n", "pump.extra", "unknown key"},
      {"[compensator]\nsetting = \"50 bar\"\n[line]\ntank_pressure = \"60 bar\"\n", "inline.toml:4: line.tank_pressure",
       "compensator.setting"},
      {"[events]\nat = 1\n", "events", "array of tables"},
      {"events = [1, 2]\n", "events[0]", "expected a table"},
      {"[[events]]\nat = 0.1\nset = \"load.opening\"\nto = 0\nrmp = 1\n", "events[0].rmp", "did you mean \"ramp\"?"},
      {"[[events]]\nat = 0.1\nset = 3\nto = 0\n", "events[0].set", "expected a string"},
      {"[[events]]\nat = 0.1\nset = \"load.opening\"\nto = \"0 bar\"\n", "events[0].to", "plain number"},
      {"[[events]]\nat = \"-1 s\"\nset = \"load.opening\"\nto = 0\n", "events[0].at", ">= 0 s"},
      {"[[events]]\nat = \"1 m\"\nset = \"load.opening\"\nto = 0\n", "events[0].at", "expected a time"},
      {"[[events]]\nat = 0.1\nset = \"load.opening\"\nto = 0\nramp = nan\n", "events[0].ramp", "got nan"},
      {"[[events]]\nat = 0.1\nset = \"load.opening\"\n", "events[0]", "missing key \"to\""},
  };
  for (const Inline& c : cases) {
    SCOPED_TRACE(c.text);
    const std::string message = error_of([&] { parse_scenario(c.text, "inline.toml"); });
    EXPECT_TRUE(contains(message, "inline.toml:")) << message;
    EXPECT_TRUE(contains(message, c.key)) << message;
    EXPECT_TRUE(contains(message, c.fragment)) << message;
  }
}

TEST(Scenario, ReportsTheFirstProblemInTheFile) {
  // toml++ keeps keys sorted; the loader must still report line 2 first.
  const std::string message = error_of([] { parse_scenario("[pump]\nzpeed = 1\naspeed = 2\n", "order.toml"); });
  EXPECT_TRUE(contains(message, "order.toml:2: pump.zpeed")) << message;
}

// ---------------------------------------------------------------- validate_event

TEST(Scenario, ValidateEvent) {
  Scenario s;
  s.settings.duration = 2.0;
  const Event good{1.0, "load.opening", 0.25, 0.01, 0};
  EXPECT_NO_THROW(validate_event(good, s, "here:3: events[0]"));
  EXPECT_NO_THROW(validate_event(Event{2.0, "pump.speed", 0.0, 0.0, 0}, s, "w"));  // at the very end

  const auto message = [&](Event e) { return error_of([&] { validate_event(e, s, "demo.toml:14: events[2]"); }); };
  Event e = good;
  e.target = "load.openning";
  EXPECT_EQ(message(e).rfind("demo.toml:14: events[2].set: unknown parameter \"load.openning\"", 0), 0u) << message(e);
  EXPECT_TRUE(contains(message(e), "did you mean \"load.opening\"?"));
  e.target = "compensator.flow_forces";
  EXPECT_TRUE(contains(message(e), "events[2].set"));
  e.target = "scenario.duration";
  EXPECT_TRUE(contains(message(e), "run setting"));

  e = good;
  e.to = -0.5;
  EXPECT_TRUE(contains(message(e), "events[2].to"));
  e.to = std::numeric_limits<double>::quiet_NaN();
  EXPECT_TRUE(contains(message(e), "events[2].to"));

  e = good;
  e.at = -1e-9;
  EXPECT_TRUE(contains(message(e), "events[2].at"));
  e.at = 2.0 + 1e-9;
  EXPECT_TRUE(contains(message(e), "events[2].at"));
  e.at = std::numeric_limits<double>::infinity();
  EXPECT_TRUE(contains(message(e), "events[2].at"));

  e = good;
  e.ramp = -1e-3;
  EXPECT_TRUE(contains(message(e), "events[2].ramp"));
  e.ramp = std::numeric_limits<double>::infinity();
  EXPECT_TRUE(contains(message(e), "events[2].ramp"));
}

// ---------------------------------------------------------------- writing

// A scenario in which every parameter and setting differs from its default,
// with values that need all 17 digits to survive a round trip.
Scenario unusual_scenario() {
  Scenario s;
  s.name = "Quotes \" and \\ backslashes,\ttabs,\nnew lines, \x01 and \xc3\xa9";
  s.description = "line one\nline two \"quoted\"";
  for (const ParameterSpec& spec : parameter_registry()) {
    if (spec.is_flag()) {
      spec.set(s.parameters, spec.default_value != 0.0 ? 0.0 : 1.0);
      continue;
    }
    if (spec.is_choice()) {  // the first word that is not the default
      spec.set(s.parameters, spec.choices[0].value != spec.default_value ? spec.choices[0].value : spec.choices[1].value);
      continue;
    }
    // A point inside the range that is no short decimal.
    const double lo = spec.range.min, hi = spec.range.max;
    spec.set(s.parameters, lo + (hi - lo) * (1.0 / 3.0));
  }
  s.parameters.underlap = s.parameters.spool_travel / 7.0;  // must stay inside the travel
  s.parameters.line_volume = default_parameters().line_volume;  // the line is given by its geometry
  s.parameters.line_reaches = 5;                                // a whole number
  for (const SettingSpec& spec : setting_registry()) {
    const double lo = spec.range.min, hi = spec.range.max;
    spec.set(s.settings, lo + (hi - lo) * (1.0 / 7.0));
  }
  s.settings.duration = 0.1 + 0.2;  // 0.30000000000000004
  s.settings.sample_interval = 1e-4 / 3.0;
  s.events = {
      Event{0.1, "load.opening", 1.0 / 3.0, 5e-3, 0},
      Event{0.1, "compensator.setting", 2e7 + 1.0 / 7.0, 0.0, 0},
      Event{0.25, "pump.speed", 1234.5678901234567, 1e-3 / 3.0, 0},
  };
  return s;
}

void expect_same(const Scenario& a, const Scenario& b) {
  EXPECT_EQ(a.name, b.name);
  EXPECT_EQ(a.description, b.description);
  for (const ParameterSpec& spec : parameter_registry())
    EXPECT_EQ(spec.get(a.parameters), spec.get(b.parameters)) << spec.key;
  for (const SettingSpec& spec : setting_registry()) EXPECT_EQ(spec.get(a.settings), spec.get(b.settings)) << spec.key;
  ASSERT_EQ(a.events.size(), b.events.size());
  for (std::size_t i = 0; i < a.events.size(); ++i) {
    SCOPED_TRACE("event " + std::to_string(i));
    EXPECT_EQ(a.events[i].at, b.events[i].at);
    EXPECT_EQ(a.events[i].target, b.events[i].target);
    EXPECT_EQ(a.events[i].to, b.events[i].to);
    EXPECT_EQ(a.events[i].ramp, b.events[i].ramp);
  }
}

TEST(Scenario, TomlRoundTripIsExact) {
  const Scenario original = unusual_scenario();
  const std::string toml = scenario_to_toml(original);
  Scenario back;
  ASSERT_NO_THROW(back = parse_scenario(toml, "written.toml")) << toml;
  expect_same(original, back);
  // Writing again gives the same text.
  EXPECT_EQ(scenario_to_toml(back), toml);
}

TEST(Scenario, TomlWritesOnlyChangedParameters) {
  Scenario s;
  s.parameters.line_volume = 2e-3;
  const std::string toml = scenario_to_toml(s);
  EXPECT_TRUE(contains(toml, "[line]\nvolume = 0.002\n")) << toml;
  EXPECT_FALSE(contains(toml, "[fluid]")) << toml;
  EXPECT_FALSE(contains(toml, "tank_pressure")) << toml;
  EXPECT_FALSE(contains(toml, "[[events]]")) << toml;
  // All run settings are written, changed or not.
  for (const SettingSpec& spec : setting_registry()) {
    const std::string key(spec.key);
    EXPECT_TRUE(contains(toml, "\n" + key.substr(key.find('.') + 1) + " = ")) << key;
  }
  expect_same(s, parse_scenario(toml, "written.toml"));
  // The default scenario round-trips too.
  expect_same(Scenario{}, parse_scenario(scenario_to_toml(Scenario{}), "default.toml"));
}

TEST(Scenario, TomlRoundTripOfAFile) {
  const Scenario s = parse_scenario(kGoodScenario, "good.toml");
  expect_same(s, parse_scenario(scenario_to_toml(s), "again.toml"));
}

// A small JSON syntax checker (RFC 8259): enough to be sure a strict reader
// such as Python's json.load accepts the text.
class JsonChecker {
 public:
  explicit JsonChecker(const std::string& text) : t_(text) {}
  bool valid() {
    space();
    if (!value()) return false;
    space();
    return i_ == t_.size();
  }

 private:
  bool value() {
    if (i_ >= t_.size()) return false;
    switch (t_[i_]) {
      case '{':
        return object();
      case '[':
        return array();
      case '"':
        return string();
      case 't':
        return word("true");
      case 'f':
        return word("false");
      case 'n':
        return word("null");
      default:
        return number();
    }
  }
  bool object() {
    ++i_;
    space();
    if (take('}')) return true;
    for (;;) {
      space();
      if (!string()) return false;
      space();
      if (!take(':')) return false;
      space();
      if (!value()) return false;
      space();
      if (take('}')) return true;
      if (!take(',')) return false;
    }
  }
  bool array() {
    ++i_;
    space();
    if (take(']')) return true;
    for (;;) {
      space();
      if (!value()) return false;
      space();
      if (take(']')) return true;
      if (!take(',')) return false;
    }
  }
  bool string() {
    if (!peek('"')) return false;
    for (++i_; i_ < t_.size(); ++i_) {
      const auto c = static_cast<unsigned char>(t_[i_]);
      if (c == '"') {
        ++i_;
        return true;
      }
      if (c < 0x20) return false;
      if (c == '\\') {
        if (++i_ >= t_.size()) return false;
        const char e = t_[i_];
        if (e == 'u') {
          for (int k = 0; k < 4; ++k)
            if (++i_ >= t_.size() || !std::isxdigit(static_cast<unsigned char>(t_[i_]))) return false;
        } else if (std::string("\"\\/bfnrt").find(e) == std::string::npos) {
          return false;
        }
      }
    }
    return false;
  }
  bool number() {
    const std::size_t start = i_;
    if (peek('-')) ++i_;
    if (peek('0')) {
      ++i_;
    } else if (!digits()) {
      return false;
    }
    if (peek('.')) {
      ++i_;
      if (!digits()) return false;
    }
    if (peek('e') || peek('E')) {
      ++i_;
      if (peek('+') || peek('-')) ++i_;
      if (!digits()) return false;
    }
    return i_ > start;
  }
  bool digits() {
    const std::size_t start = i_;
    while (i_ < t_.size() && std::isdigit(static_cast<unsigned char>(t_[i_]))) ++i_;
    return i_ > start;
  }
  bool word(const char* w) {
    const std::string s(w);
    if (t_.compare(i_, s.size(), s) != 0) return false;
    i_ += s.size();
    return true;
  }
  bool peek(char c) const { return i_ < t_.size() && t_[i_] == c; }
  bool take(char c) {
    if (!peek(c)) return false;
    ++i_;
    return true;
  }
  void space() {
    while (i_ < t_.size() && std::string(" \t\n\r").find(t_[i_]) != std::string::npos) ++i_;
  }

  const std::string& t_;
  std::size_t i_ = 0;
};

TEST(Scenario, JsonCheckerRejectsBrokenJson) {
  // The checker itself must be able to fail, or the next test proves nothing.
  EXPECT_TRUE(JsonChecker(R"({"a": [1, -2.5e-3, true, null], "b": "x\"\n"})").valid());
  for (const char* bad : {"{", R"({"a": 1,})", R"({"a": nan})", R"({"a": 01})", "{\"a\": \"\n\"}", R"({"a": inf})",
                          R"([1 2])", R"({"a": 1.})"})
    EXPECT_FALSE(JsonChecker(bad).valid()) << bad;
}

TEST(Scenario, JsonIsValidAndComplete) {
  const Scenario s = unusual_scenario();
  const std::string json = scenario_to_json(s);
  EXPECT_TRUE(JsonChecker(json).valid()) << json;
  for (const char* key : {"\"scenario\"", "\"name\"", "\"duration_s\"", "\"sample_interval_s\"", "\"solver\"",
                          "\"rtol\"", "\"atol\"", "\"max_step_s\"", "\"parameters\"", "\"initial_state\": null",
                          "\"events\"", "\"at_s\"", "\"target\"", "\"to\"", "\"ramp_s\""})
    EXPECT_TRUE(contains(json, key)) << key;
  for (const ParameterSpec& spec : parameter_registry())
    EXPECT_TRUE(contains(json, "\"" + std::string(spec.key) + "\": ")) << spec.key;
  // Flags are JSON booleans; unusual_scenario() switched flow forces off.
  EXPECT_TRUE(contains(json, "\"compensator.flow_forces\": false")) << json;
  // Strings are escaped: no raw new line or control byte inside the name.
  EXPECT_TRUE(contains(json, R"(Quotes \" and \\ backslashes,\ttabs,\nnew lines, \u0001 and)")) << json;
  // The pump speed stays in rev/min, as stored.
  EXPECT_TRUE(contains(json, "\"target\": \"pump.speed\", \"to\": 1234.56789012345")) << json;

  // Not-a-number cannot be written as a JSON number.
  Scenario odd;
  odd.parameters.opening = std::numeric_limits<double>::quiet_NaN();
  EXPECT_TRUE(JsonChecker(scenario_to_json(odd)).valid());
  EXPECT_TRUE(JsonChecker(scenario_to_json(Scenario{})).valid());
}

}  // namespace
