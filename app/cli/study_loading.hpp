// How swashtune-cli's subcommands read a scenario: load_scenario, with its
// warnings on stderr; with --strict a warning ends the command (exit 2).
#pragma once

#include <string>

#include "swashtune/scenario.hpp"

namespace swashtune::cli {

extern bool strict_input;  // set by --strict
Scenario load_study(const std::string& path);

}  // namespace swashtune::cli
