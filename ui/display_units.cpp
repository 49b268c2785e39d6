#include "display_units.hpp"

#include "swashtune/units.hpp"

namespace swashtune::ui {
namespace {

DisplayQuantity quantity(const char* si_unit, const char* shown) {
  return DisplayQuantity{QString::fromUtf8(shown), convert(1.0, si_unit, shown), convert(1.0, shown, si_unit)};
}

}  // namespace

double DisplayQuantity::to_si(double shown) const {
  return decimal_clean(inverse != 0.0 ? shown * inverse : shown / factor);
}

DisplayUnits DisplayUnits::make(UnitSystem system) {
  DisplayUnits u;
  u.system = system;
  const bool us = system == UnitSystem::us;
  const bool si = system == UnitSystem::si;
  u.pressure = quantity("Pa", si ? "Pa" : us ? "psi" : "bar");
  u.flow = quantity("m^3/s", si ? "m^3/s" : us ? "gpm" : "L/min");
  u.angle = quantity("rad", si ? "rad" : "deg");
  u.length = quantity("m", si ? "m" : us ? "in" : "mm");
  u.speed = quantity("rev/min", "rev/min");
  return u;
}

DisplayQuantity parameter_display(const ParameterSpec& spec, UnitSystem system) {
  const std::string_view shown = system == UnitSystem::us       ? spec.us_unit
                                 : system == UnitSystem::metric ? spec.metric_unit
                                                                : spec.unit;
  if (shown.empty() || shown == "-") return DisplayQuantity{QString(), 1.0};
  return DisplayQuantity{QString::fromUtf8(shown.data(), static_cast<int>(shown.size())),
                         convert(1.0, spec.unit, shown), convert(1.0, shown, spec.unit)};
}

}  // namespace swashtune::ui
