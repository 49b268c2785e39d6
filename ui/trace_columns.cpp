#include "trace_columns.hpp"

#include <limits>

#include "swashtune/results_io.hpp"

namespace swashtune::ui {

SampleReader column_reader(std::string_view quantity) {
  for (const TraceColumn& c : trace_columns())
    if (c.quantity == quantity) return c.read;
  if (quantity == valve_end_pressure_column().quantity) return valve_end_pressure_column().read;
  return nullptr;
}

double column_value(const Sample& sample, std::string_view quantity) {
  const SampleReader read = column_reader(quantity);
  return read ? read(sample) : std::numeric_limits<double>::quiet_NaN();
}

}  // namespace swashtune::ui
