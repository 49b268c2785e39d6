// Quantities of a sample by name, through core's trace columns
// ("discharge_pressure", "swash_angle", "load_flow", ...), so that the views
// never depend on where a quantity sits in the model's state vector.
#pragma once

#include <string_view>

#include "swashtune/simulator.hpp"

namespace swashtune::ui {

using SampleReader = double (*)(const Sample&);

// The reader of a trace column; nullptr when core has no such column.
SampleReader column_reader(std::string_view quantity);
// Its value in stored (SI) units; NaN when core has no such column.
double column_value(const Sample& sample, std::string_view quantity);

}  // namespace swashtune::ui
