// The version 1 default pump (tests/data/v1/pump.toml), for the unit tests
// whose closed-form answers assume the plain v1 plant.
#pragma once

#include "swashtune/scenario.hpp"

inline swashtune::ModelParameters v1_pump() {
  static const swashtune::ModelParameters p =
      swashtune::load_scenario(std::string(SWASHTUNE_SOURCE_DIR) + "/tests/data/v1/pump.toml").parameters;
  return p;
}

// The v1 plant under a study's own changes: every parameter in which the v1
// pump differs from today's default pump is put back to its v1 value.
inline swashtune::ModelParameters with_v1_plant(swashtune::ModelParameters p) {
  const swashtune::ModelParameters v1 = v1_pump(), now = swashtune::default_parameters();
  for (const swashtune::ParameterSpec& s : swashtune::parameter_registry())
    if (s.get(v1) != s.get(now)) s.set(p, s.get(v1));
  return p;
}
