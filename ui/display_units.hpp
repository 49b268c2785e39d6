// Units for showing numbers to a person: metric (bar, L/min, deg, mm) or US
// (psi, gpm, deg, in). The factors come from core's unit parser, so there is
// one place for every conversion.
#pragma once

#include <QString>

#include "swashtune/results_io.hpp"

namespace swashtune::ui {

struct DisplayQuantity {
  QString unit;          // as shown, e.g. "bar"
  double factor;         // shown value = SI value * factor
  double inverse = 0.0;  // SI value = shown value * inverse (exact for bar: 1e5); 0: 1 / factor
  double to_display(double si) const { return si * factor; }
  // A number a person typed is a decimal: so is its SI value (150 bar is 1.5e7 Pa, not 15000000.000000002).
  double to_si(double shown) const;
};

struct DisplayUnits {
  UnitSystem system = UnitSystem::metric;
  DisplayQuantity pressure;  // bar | psi
  DisplayQuantity flow;      // L/min | gpm
  DisplayQuantity angle;     // deg
  DisplayQuantity length;    // mm | in
  DisplayQuantity speed;     // rev/min (stored unit of pump.speed)

  static DisplayUnits make(UnitSystem system);  // si is shown as metric's SI cousins
};

// The shown unit and factor for a registry parameter (its metric_unit or
// us_unit; the stored unit when the display unit is "-").
DisplayQuantity parameter_display(const ParameterSpec& spec, UnitSystem system);

}  // namespace swashtune::ui
