#include "study_loading.hpp"

#include <iostream>

namespace swashtune::cli {

bool strict_input = false;

Scenario load_study(const std::string& path) {
  Scenario scenario = load_scenario(path);
  for (const std::string& warning : scenario.warnings) std::cerr << "warning: " << warning << "\n";
  if (strict_input && !scenario.warnings.empty())
    throw ScenarioError(path + ": --strict: " + std::to_string(scenario.warnings.size()) +
                        " warning(s) about the input (above); correct the file, or leave out --strict to go on");
  return scenario;
}

}  // namespace swashtune::cli
