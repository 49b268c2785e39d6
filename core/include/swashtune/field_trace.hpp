// Pressure (and optionally flow) recorded on a machine, read from a CSV file
// so it can be analysed and laid over a simulated trace.
#pragma once

#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

namespace swashtune {

struct FieldTrace {
  std::string source;                                     // file name, for messages and legends
  std::vector<double> time;                               // s, strictly increasing
  std::vector<double> pressure;                           // Pa (gauge)
  std::vector<double> flow;                               // m^3/s; empty when the file has none
  std::string time_header, pressure_header, flow_header;  // the columns used
};

// Which columns to use and in which units; anything not given is read from
// the header row (names such as "time_s", "t [ms]", "pressure (psi)",
// "discharge_pressure_bar", "p_bar", "flow [L/min]", "Q_gpm").
struct FieldTraceOptions {
  std::optional<std::string> time_column;  // header name or 1-based column number
  std::optional<std::string> pressure_column;
  std::optional<std::string> flow_column;    // "none" to ignore a flow column
  std::optional<std::string> time_unit;      // e.g. "ms"
  std::optional<std::string> pressure_unit;  // e.g. "psi"; gauge pressure assumed
  std::optional<std::string> flow_unit;      // e.g. "L/min"
};

class FieldTraceError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Reads a CSV: comma, semicolon or tab separated (detected), decimal point or
// decimal comma (detected; a decimal comma needs ';' or tab separators), one
// header row, blank lines and lines starting with '#' ignored. Every error
// names the file and the row (1-based line number) and what was wrong:
// text in a number, time not increasing, a missing column, an unknown unit,
// an empty file. Throws FieldTraceError.
FieldTrace read_field_trace(const std::string& path, const FieldTraceOptions& options = {});
FieldTrace parse_field_trace(const std::string& text, const std::string& source_name,
                             const FieldTraceOptions& options = {});

}  // namespace swashtune
