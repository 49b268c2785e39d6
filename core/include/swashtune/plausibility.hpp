// Input that is legal but probably not meant, and results a person must be
// warned about. The rules are one table of data here, so the command line,
// the desktop and the Python module show the same words.
//
// A value inside the registry's range can still be far outside what pumps
// use (a 2000 bar compensator setting), or be a plain number that reads like
// a figure in another unit (setting = 3000 is 3000 Pa = 0.03 bar; 3000 psi
// was meant). Each rule names a typical span (common practice, from memory:
// figures of industrial and mobile hydraulics, not of any one product) and
// the units a plain number was most likely meant in.
#pragma once

#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "swashtune/metrics.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune {

struct PlausibilityRule {
  std::string_view key;                 // registry key
  double low, high;                     // typical span, stored units
  bool zero_is_plausible;               // 0 means "none" or "off" and is fine
  bool plain_numbers_only;              // only a plain number outside the span is suspect
  std::string_view what;                // "pump compensators are set to"
  std::string_view display_unit;        // the unit the message shows values in
  std::vector<std::string_view> slips;  // units a plain number was probably meant in, likeliest first
};

const std::vector<PlausibilityRule>& plausibility_rules();
const PlausibilityRule* find_plausibility_rule(std::string_view key);

// The warning for `value` (stored units) of `key` as written (`as_read`:
// "3000", or "\"2000 bar\"" with its quotes), or nullopt when it is
// plausible. `where` is "file:line". For example
//   press.toml:12: compensator.setting = 3000: 3000 Pa = 0.03 bar is far below
//   what pump compensators are set to (5 to 700 bar); did you mean 3000 psi = 206.8 bar?
std::optional<std::string> plausibility_warning(const std::string& where, std::string_view key, double value,
                                                bool plain_number, const std::string& as_read);

// How a value was written in a scenario file.
struct WrittenValue {
  int line = 0;
  bool plain_number = false;
  std::string as_read;
};

// Warnings about combinations of values (a relief valve set below the
// compensator, a run sampled too coarsely to show anything), each naming the
// file and line of the key it is about; `written` holds the keys the file set.
std::vector<std::string> relation_warnings(const Scenario& scenario, const std::string& source,
                                           const std::map<std::string, WrittenValue, std::less<>>& written);

// Cautions for a run whose discharge pressure went above the line's rated
// pressure (line.rated_pressure, when given) or above 1.5 times the
// compensator setting in force: one sentence each, with the pressures in
// bar and psi, ending in the usual safety words (safety.hpp). Empty when the
// run stayed below both.
std::vector<std::string> peak_cautions(const Scenario& scenario, const RunResult& result);

}  // namespace swashtune
