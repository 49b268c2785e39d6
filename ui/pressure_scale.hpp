// Swashtune's own colour scale for pressure on a circuit diagram: from a cool
// slate at tank pressure through teal and sand to a brick red at the top of
// the scale, and a deep plum above it (over the scale, not a normal state).
// Monotonic in lightness from the sand stop on, so a printout in grey still
// orders the lines; the stops are ours, not any standard's.
#pragma once

#include <QColor>
#include <vector>

namespace swashtune::ui {

// `fraction` of the scale's top: 0 at tank pressure, 1 at the top; above 1.05 plum.
QColor pressure_colour(double fraction);

// The top of the scale for a machine: 15 % above the highest pressure it is set
// to reach (compensator setting, or the relief valve's cracking pressure
// plus override when one is fitted), rounded up to a round figure (Pa).
double pressure_scale_top(double compensator_setting, double relief_setting, double relief_override);

// Round tick values for a legend of the scale, from 0 to `top`, in the shown unit.
std::vector<double> pressure_scale_ticks(double top_shown);

}  // namespace swashtune::ui
