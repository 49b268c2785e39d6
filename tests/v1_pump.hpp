// The version 1 default pump (tests/data/v1/pump.toml), for the unit tests
// whose closed-form answers assume the plain v1 plant.
#pragma once

#include "swashtune/scenario.hpp"

inline swashtune::ModelParameters v1_pump() {
  static const swashtune::ModelParameters p =
      swashtune::load_scenario(std::string(SWASHTUNE_SOURCE_DIR) + "/tests/data/v1/pump.toml").parameters;
  return p;
}

