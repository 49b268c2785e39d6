// swashtune-bench --line: the cost of the distributed discharge line by its
// number of reaches, on one scenario with its line given by geometry.
#pragma once

#include <ostream>
#include <string>

namespace swashtune::bench {

struct LineBenchOptions {
  std::string scenario;
  double length = 3.2;         // m
  double bore = 0.02;          // m
  double repeat_time = 0.3;    // s of measured runs per row, for the median
};

// Prints the table; returns 0, or throws what the runs throw.
void run_line_bench(const LineBenchOptions& options, bool json, std::ostream& out);

}  // namespace swashtune::bench
