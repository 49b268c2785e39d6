// A study: the machine's parameters, the run settings and the events that
// change parameters during the run. Scenario files (TOML) map onto it.
#pragma once

#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "swashtune/parameters.hpp"

namespace swashtune {

// At time `at` the parameter `target` moves linearly from the value it has
// then to `to` over `ramp` seconds (0: a step). A later event on the same
// key takes over from wherever an earlier ramp has got to.
struct Event {
  double at = 0.0;      // s
  std::string target;   // a numeric parameter key, e.g. "load.opening"
  double to = 0.0;      // in the parameter's stored unit
  double ramp = 0.0;    // s
  int source_line = 0;  // line in the scenario file, 0 when not from a file
};

struct Scenario {
  std::string name = "untitled";
  std::string description;
  ModelParameters parameters = default_parameters();
  RunSettings settings = default_settings();
  std::vector<Event> events;  // sorted by time (stable), see sort_events()
  // Things the loader accepted but the user probably did not mean (an empty
  // file, say), each a sentence naming the file; shown, never saved.
  std::vector<std::string> warnings;
};

// Bad input: the message names the source, the line and the key, what was
// expected and what was found, e.g.
//   press.toml:12: compensator.setting: expected a pressure, got "210 kg"
class ScenarioError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Orders events by time; events at the same time keep their file order.
void sort_events(std::vector<Event>& events);

// Why a parameter cannot change during a run (an event, a live change):
// it describes the line, or the value adds or removes a part of the model
// and its states. Empty when it can. A front end starts the run again
// instead.
struct FixedDuringARun {
  bool starts_with_part;  // about the value (else about the key)
  std::string text;
};
std::optional<FixedDuringARun> fixed_during_a_run(const ModelParameters& p, const std::string& key, double value);

// Checks an event against the registry and the run (known numeric key, value
// in range, times not negative). Throws ScenarioError prefixed with `where`.
void validate_event(const Event& event, const Scenario& scenario, const std::string& where);

// Reads a scenario file. Throws ScenarioError (missing file, malformed TOML,
// unknown section or key, wrong unit, value out of range, bad event).
Scenario load_scenario(const std::string& path);

// Parses scenario text; `source_name` is used in messages in place of a path.
Scenario parse_scenario(const std::string& text, const std::string& source_name);

// Writes a scenario as TOML (every parameter that differs from its default,
// all settings, all events) so that load_scenario() reads it back exactly.
std::string scenario_to_toml(const Scenario& scenario);

// The resolved scenario as JSON, values in the registry's stored units (SI,
// pump speed in rev/min): the input of independent cross-checks.
std::string scenario_to_json(const Scenario& scenario);

}  // namespace swashtune
