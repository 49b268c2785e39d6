// How swashtune-cli shows quantities in the unit system chosen with --units
// (si, metric, us): shared by the subcommands.
#pragma once

#include <cmath>
#include <cstdio>
#include <string>
#include <string_view>

#include "swashtune/parameters.hpp"
#include "swashtune/results_io.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/units.hpp"

namespace swashtune::cli {

struct PressureUnit {
  const char* name;
  double per_pascal;
};

inline PressureUnit pressure_unit(UnitSystem units) {
  switch (units) {
    case UnitSystem::si:
      return {"Pa", 1.0};
    case UnitSystem::metric:
      return {"bar", 1e-5};
    case UnitSystem::us:
      return {"psi", convert(1.0, "Pa", "psi")};
  }
  return {"Pa", 1.0};
}

// A length as the unit system shows it (spool travel: mm or in).
inline PressureUnit length_unit(UnitSystem units) {
  switch (units) {
    case UnitSystem::si:
      return {"m", 1.0};
    case UnitSystem::metric:
      return {"mm", 1e3};
    case UnitSystem::us:
      return {"in", convert(1.0, "m", "in")};
  }
  return {"m", 1.0};
}

// The unit a parameter is shown in: its registry metric or US display unit
// ("L", "%", "psi"), the stored unit for si or where none is given.
struct ShownUnit {
  std::string name;  // empty for a plain number
  double per_stored;
  std::string format(double stored, int digits = 6) const {
    if (!std::isfinite(stored)) return "(unknown)";
    char buffer[64];
    std::snprintf(buffer, sizeof buffer, "%.*g", digits, stored * per_stored);
    return name.empty() ? std::string(buffer) : std::string(buffer) + " " + name;
  }
};

inline ShownUnit parameter_unit(const ParameterSpec& spec, UnitSystem units) {
  std::string_view shown = units == UnitSystem::us       ? spec.us_unit
                           : units == UnitSystem::metric ? spec.metric_unit
                                                         : spec.unit;
  if (shown.empty()) shown = spec.unit;
  if (shown == "-") return {"", 1.0};
  return {std::string(shown), convert(1.0, spec.unit, shown)};
}

inline UnitSystem units_option(const std::string& name) {
  const auto units = parse_unit_system(name);
  if (!units) throw ScenarioError("--units: expected si, metric or us, got \"" + name + "\"");
  return *units;
}

}  // namespace swashtune::cli
