// The guard in front of toml++ (core/src/toml_guard.cpp): input that Debian's
// toml++ 3.3.0 answers with undefined behaviour is refused with a message
// naming the line, the column and the character; everything the project
// writes or ships still loads. The fuzzer's reproducers (tests/fuzz/
// regressions/scenario/) are loaded here too: each must be refused or read,
// never crash (the sanitizer build runs this with toml++'s assertions on).
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "swashtune/scenario.hpp"

namespace fs = std::filesystem;
using swashtune::parse_scenario;
using swashtune::ScenarioError;

namespace {

// The message for `text`, or "" when it loads.
std::string refusal(const std::string& text) {
  try {
    parse_scenario(text, "study.toml");
  } catch (const ScenarioError& e) {
    return e.what();
  }
  return "";
}

std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

}  // namespace

// The cases of the issue: a lone non-ASCII letter, a unit typed outside the
// quotes, an empty header key, a bracket closed by a brace.
TEST(TomlGuard, RefusesWhatReachesUndefinedBehaviourInTomlPlusPlus) {
  EXPECT_EQ(refusal("[pump]\n\n# speed of the shaft\nspeed = 1800 \xC2\xB0\n"),
            "study.toml:4:14: malformed TOML: line 4, column 14: '\xC2\xB0' (U+00B0) outside a string; write units "
            "inside quotes, e.g. \"1800 rpm\"");
  EXPECT_EQ(refusal("\xCE\xBB\n"),
            "study.toml:1:1: malformed TOML: line 1, column 1: '\xCE\xBB' (U+03BB) in a name; keys and section names "
            "are plain ASCII (letters, digits, _ and -)");
  EXPECT_EQ(refusal("[.]\n"),
            "study.toml:1:2: malformed TOML: line 1, column 2: expected a section name (letters, digits, _ or -, or a "
            "quoted name), found '.'");
  EXPECT_EQ(refusal("t=[}\n"),
            "study.toml:1:4: malformed TOML: line 1, column 4: '}' does not close the '[' opened at line 1, column 3");
}

TEST(TomlGuard, NamesLineColumnAndCharacterForCommonSlips) {
  struct Case {
    const char* text;
    const char* expected;  // part of the message
  };
  const Case cases[] = {
      {"[pump]\nspeed = 1800 rpm\n",
       "2:14: malformed TOML: line 2, column 14: expected the end of the line after the "
       "value, found 'r'; write units inside quotes"},
      {"[load]\nopening = \xE2\x80\x9C"
       "0.5\xE2\x80\x9D\n",
       "line 2, column 11: '\xE2\x80\x9C' (U+201C) is a typographic quote"},
      {"[line]\nvolume =\xC2\xA0\"1 L\"\n", "line 2, column 9: '\xC2\xA0' (U+00A0) is a no-break or thin space"},
      {"[line]\nvolume = \xE2\x88\x92"
       "1\n",
       "line 2, column 10: '\xE2\x88\x92' (U+2212) is a dash, not a minus sign"},
      {"[pump]\nspeed = 1800 \xB0\n", "line 2, column 14: byte 0xB0 is not UTF-8"},
      {"[pump]\r\nspeed = 1\rx\n", "line 2, column 10: a carriage return without a line feed"},
      {"[pump]\nspeed = \x01\n", "line 2, column 9: control character U+0001"},
      {"[a..b]\n", "line 1, column 4: expected a section name"},
      {"[a]]\n", "line 1, column 4: expected the end of the line after the section header, found ']'"},
      {"[[events]\n", "line 1, column 10: expected ']]' to close the section header"},
      {"a = [1, 2\n", "line 1, column 5: the '[' opened here is never closed"},
      {"a = {x = 1]\n", "line 1, column 11: ']' does not close the '{' opened at line 1, column 5"},
      {"a = {x = 1\n", "must close on its line"},
      {"a = \"open\n", "line 1, column 5: the string opened here is not closed on its line"},
      {"a = '''never\n", "line 1, column 5: the ''' string opened here is never closed"},
      {"a = \"\\q\"\n", "line 1, column 6: unknown escape '\\q'"},
      {"a = \"\\uD800\"\n", "line 1, column 6: \\u escape of U+D800, which is not a Unicode character"},
      {"a = \"\\u12\"\n", "\\u needs 4 hexadecimal digits, found '\"'"},
      {"= 3\n", "line 1, column 1: expected a key"},
      {"a. = 3\n", "line 1, column 4: expected a key"},
      {"a 3\n", "line 1, column 3: expected '=' after the key, found '3'"},
      {"[pump]\ndisplacement = = 3\n", "line 2, column 16: expected a value"},
      {"[scenario]\nduration = 1979-05-27T:007\n",
       "line 2, column 12: '1979-05-27T:007' has the form of a date or time, which no scenario key takes"},
      {"[scenario]\nduration = 07:32:00\n", "line 2, column 12: '07:32:00' has the form of a date or time"},
      {"a =\n",
       "line 1, column 4: expected a value (a number, a string in quotes, true or false), found the end of "
       "the line"},
  };
  for (const Case& c : cases) {
    const std::string message = refusal(c.text);
    EXPECT_NE(message.find(c.expected), std::string::npos) << c.text << "\n  got: " << message;
    EXPECT_EQ(message.rfind("study.toml:", 0), 0u) << message;
  }
}

// Valid TOML of every shape the guard lets through reaches toml++ and the
// scenario reader, which then speaks for itself.
TEST(TomlGuard, LetsWellFormedTomlThrough) {
  const std::string accepted[] = {
      "",
      "# a comment only\n",
      "\xEF\xBB\xBF[pump]\nspeed = \"1800 rpm\" # \xC2\xB0 in a comment is fine\n",
      "[scenario]\nname = \"Pr\xC3\xBC"
      "fstand \\\"3\\\" \\u00B0\"\ndescription = '''\nline one\n\"quoted\"\n'''\n",
      "[scenario]\ndescription = \"\"\"a \\\n   b\"\"\"\"\"\n",
      "[ compensator ]\nsetting = 2.1e7\n\n[ \"line\" ]\nvolume = 1_0e-4\n",
      "events = [ { at = 0.1, set = \"load.opening\", to = 0.0 },\n  # second\n  { at = 0.5, set = \"load.opening\", "
      "to = 1.0, ramp = \"5 ms\" }, ]\n",
      "[[events]]\nat = \"0.1 s\"\nset = 'load.opening'\nto = 0\n",
  };
  for (const std::string& text : accepted) EXPECT_EQ(refusal(text), "") << text;
  // Shapes the guard passes and the reader refuses with its own message.
  EXPECT_EQ(refusal("[line]\nvolume = 1e-3\n[pump]\nleakage_coefficient = 2.5E-12\n"), "");  // an exponent's sign is no date
  EXPECT_NE(refusal("[pump]\nspeed = 1.2.3\n").find("study.toml:2:"), std::string::npos);
}

TEST(TomlGuard, EveryShippedScenarioAndEveryWrittenOnePasses) {
  for (const auto& entry : fs::recursive_directory_iterator(fs::path(SWASHTUNE_SOURCE_DIR) / "scenarios")) {
    if (entry.path().extension() != ".toml" || entry.path().filename() == "malformed.toml") continue;
    const std::string message = refusal(slurp(entry.path()));
    EXPECT_EQ(message.find("malformed TOML: line"), std::string::npos) << entry.path() << ": " << message;
  }
  swashtune::Scenario s = parse_scenario(slurp(fs::path(SWASHTUNE_SOURCE_DIR) / "scenarios" / "valve-slam.toml"), "x");
  s.name =
      "Pr\xC3\xBC"
      "fstand \"7\"\tA\\B";
  s.description = "line one\nline two \xC2\xB0";
  const swashtune::Scenario back = parse_scenario(swashtune::scenario_to_toml(s), "written.toml");
  EXPECT_EQ(back.name, s.name);
  EXPECT_EQ(back.description, s.description);
  EXPECT_EQ(back.events.size(), s.events.size());
}

TEST(TomlGuard, AnEmptyFileLoadsAsTheDefaultStudyWithAWarning) {
  for (const char* text : {"", "\n\n", "# nothing yet\n"}) {
    const swashtune::Scenario s = parse_scenario(text, "empty.toml");
    ASSERT_EQ(s.warnings.size(), 1u) << text;
    EXPECT_EQ(s.warnings[0].rfind("empty.toml: the file sets nothing", 0), 0u) << s.warnings[0];
  }
  EXPECT_TRUE(parse_scenario("[pump]\nspeed = \"1800 rpm\"\n", "x").warnings.empty());
}

// Reproducers found by the fuzzer (tests/fuzz/): refused with a message or
// read, never a crash or a sanitizer report.
TEST(TomlGuard, FuzzReproducersAreRefusedCleanly) {
  const fs::path dir = fs::path(SWASHTUNE_SOURCE_DIR) / "tests" / "fuzz" / "regressions" / "scenario";
  int files = 0;
  for (const auto& entry : fs::directory_iterator(dir)) {
    if (entry.path().extension() != ".toml") continue;
    ++files;
    const std::string message = refusal(slurp(entry.path()));
    EXPECT_NE(message, "") << entry.path() << " now loads; was it not a reproducer of a refusal?";
  }
  EXPECT_GT(files, 0);
}
