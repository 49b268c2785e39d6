// Recordings from a machine: a logger's CSV export read row by row in
// bounded memory (scan_field_trace), or held whole for fitting and display
// (read_field_trace). Layouts as loggers write them: time in seconds or ms,
// time-of-day or date-time stamps (midnight roll-over), a sample index with
// a rate; gauge or absolute pressures; several pressure channels.
#pragma once

#include <array>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

namespace swashtune {

// What a recorded column holds, besides the time.
enum class FieldChannel { pressure, control_pressure, load_pressure, flow, speed };
inline constexpr int kFieldChannels = 5;
inline constexpr std::array<FieldChannel, kFieldChannels> kAllFieldChannels = {
    FieldChannel::pressure, FieldChannel::control_pressure, FieldChannel::load_pressure, FieldChannel::flow,
    FieldChannel::speed};
const char* channel_name(FieldChannel c);    // "pump outlet pressure", "control pressure", ...
const char* channel_option(FieldChannel c);  // the command-line option that chooses it: "--pressure-column", ...
inline int index_of(FieldChannel c) { return static_cast<int>(c); }

// Which columns to use and how to read them. Anything not given comes from
// the header row and the lines above it (a logger's preamble).
struct FieldTraceOptions {
  std::optional<std::string> time_column;      // header name or 1-based column number
  std::optional<std::string> pressure_column;  // the pump outlet (discharge) pressure
  std::optional<std::string> control_column;   // control (stroking) pressure
  std::optional<std::string> load_column;      // load (actuator) pressure
  std::optional<std::string> flow_column;      // "none" to ignore a flow column
  std::optional<std::string> speed_column;     // shaft speed; "none" to ignore
  std::optional<std::string> time_unit;        // e.g. "ms"
  std::optional<std::string> pressure_unit;    // for every pressure column, e.g. "psi", "bar(a)"
  std::optional<std::string> flow_unit;        // e.g. "L/min"
  std::optional<double> sample_rate;           // Hz: time = index / rate (index column or row count)
  std::optional<double> atmospheric_pressure;  // Pa, to convert absolute columns to gauge
  // read_field_trace only: rows outside [from, to] (s, the recording's time)
  // are read and checked but not kept; more than max_samples kept is refused.
  std::optional<double> from, to;
  std::size_t max_samples = std::size_t{1} << 24;
};

// The standard atmosphere (ISO 2533), used for absolute columns when neither
// an option nor the file states the atmospheric pressure.
inline constexpr double kStandardAtmosphere = 101325.0;  // Pa

class FieldTraceError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// How the file was read: the columns used, their units, the time format.
struct FieldLayout {
  char separator = ',';
  bool decimal_comma = false;
  std::size_t header_line = 0;  // 1-based
  std::string time_header;      // empty when time comes from the row count
  // "seconds", "time of day", "date and time", "sample index", "row count"
  std::string time_format;
  std::string clock_start;                            // the first row's stamp as written, for stamped files
  std::optional<double> clock_origin;                 // s after midnight of the first stamp (time 0)
  std::optional<double> sample_rate;                  // Hz, when the time is an index or a row count
  std::string sample_rate_source;                     // "--rate" or "line 3"
  std::array<std::string, kFieldChannels> header;     // empty when the channel is absent
  std::array<std::string, kFieldChannels> unit;       // as written or given ("bar(a)")
  std::array<bool, kFieldChannels> absolute{};        // converted from absolute to gauge
  double atmospheric_pressure = kStandardAtmosphere;  // Pa
  std::string atmosphere_source;                      // "--atmosphere", "line 2", or "standard atmosphere"
  std::vector<std::string> unused_columns;            // header names of columns not read
  bool has(FieldChannel c) const { return !header[index_of(c)].empty(); }
  bool any_absolute() const;
};

// A stretch of missing samples: the interval before `line` is more than 1.5
// times the nominal interval.
struct FieldGap {
  std::size_t line = 0;  // the row after the gap
  double from = 0.0;     // s, time of the row before
  double to = 0.0;       // s, time of the row after
};

struct FieldReadReport {
  std::string source;
  FieldLayout layout;
  std::size_t rows = 0;                     // data rows in the file
  std::size_t kept = 0;                     // handed on (time strictly increasing)
  std::size_t repeated = 0;                 // dropped: the same time stamp as the row before
  std::vector<std::size_t> repeated_lines;  // the first few of them
  std::size_t gaps = 0;
  std::vector<FieldGap> gap_list;  // the first few
  FieldGap largest_gap;
  double nominal_interval = 0.0;  // s, median of the first intervals
  double first_time = 0.0, last_time = 0.0;
  std::size_t midnight_rollovers = 0;
  std::uint64_t bytes = 0;  // of the file read
  bool stopped = false;     // the sink stopped the reading before the end of the file
  std::vector<std::string> notes;
};

// One data row, in SI (pressures gauge, speed in rev/min); NaN where the
// channel is absent.
struct FieldRow {
  std::size_t line = 0;
  double time = 0.0;
  std::array<double, kFieldChannels> value{};
  double operator[](FieldChannel c) const { return value[index_of(c)]; }
};

// Called for every kept row, in order; return false to stop reading.
using FieldRowSink = std::function<bool(const FieldRow&)>;

// Streams a file (or text) through `sink` in memory independent of its
// length. Separators ',' ';' tab, decimal point or comma, a preamble above
// the header (sample rate, atmospheric pressure), '#' comments and blank
// lines are all detected. Rows with a repeated time stamp are dropped and
// counted; a time that goes back is an error (a time of day that goes back
// by more than 12 h rolls over midnight). Every error names the file and the
// line, and the option that fixes it where one does. Throws FieldTraceError.
FieldReadReport scan_field_trace(const std::string& path, const FieldTraceOptions& options, const FieldRowSink& sink);
FieldReadReport scan_field_text(const std::string& text, const std::string& source_name,
                                const FieldTraceOptions& options, const FieldRowSink& sink);

// A recording held in memory: every kept row inside options.from/to.
struct FieldTrace {
  std::string source;                                     // file name, for messages and legends
  std::vector<double> time;                               // s, strictly increasing
  std::vector<double> pressure;                           // Pa gauge, pump outlet
  std::vector<double> control_pressure, load_pressure;    // Pa gauge; empty when absent
  std::vector<double> flow;                               // m^3/s; empty when absent
  std::vector<double> speed;                              // rev/min; empty when absent
  std::string time_header, pressure_header, flow_header;  // the columns used
  FieldReadReport report;
  const std::vector<double>& channel(FieldChannel c) const;
};

// Throws FieldTraceError, also when more than options.max_samples rows would
// be kept (the message says how to choose a part with from/to).
FieldTrace read_field_trace(const std::string& path, const FieldTraceOptions& options = {});
FieldTrace parse_field_trace(const std::string& text, const std::string& source_name,
                             const FieldTraceOptions& options = {});

// A time option as the user wrote it: a duration ("100ms", "2.5 s"; a bare
// number is refused, since seconds and milliseconds are both plausible), or,
// when the recording has clock stamps, a time of day ("14:02:07.3") taken
// against the first stamp. Throws FieldTraceError naming `option`.
double parse_time_option(const std::string& text, const std::string& option, const FieldLayout* layout = nullptr);

// "14:02:07.3501" for a recording time, when the layout has clock stamps;
// empty otherwise.
std::string clock_time(const FieldLayout& layout, double t);

}  // namespace swashtune
