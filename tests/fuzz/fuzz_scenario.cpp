// libFuzzer target: the scenario loader (the guard, toml++ built with its
// assertions on, the reader). Any input must load or be refused with a
// ScenarioError; anything else (a crash, an assertion, a sanitizer report,
// another exception) is a finding.
#include <cstddef>
#include <cstdint>
#include <string>

#include "swashtune/scenario.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const swashtune::Scenario scenario = swashtune::parse_scenario(text, "fuzz.toml");
    // What loads must write back as a file that loads again.
    swashtune::parse_scenario(swashtune::scenario_to_toml(scenario), "written.toml");
  } catch (const swashtune::ScenarioError&) {
  }
  return 0;
}
