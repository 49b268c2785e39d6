#include "swashtune/results_io.hpp"

#include <cmath>
#include <cstdio>
#include <sstream>

#include "swashtune/units.hpp"
#include "text_helpers.hpp"

namespace swashtune {

std::optional<UnitSystem> parse_unit_system(std::string_view name) {
  if (name == "si") return UnitSystem::si;
  if (name == "metric") return UnitSystem::metric;
  if (name == "us") return UnitSystem::us;
  return std::nullopt;
}

const std::vector<TraceColumn>& trace_columns() {
  using S = const Sample&;
  // clang-format off
  static const std::vector<TraceColumn> columns = {
    {"time", "s", "s", "s", [](S s) { return s.time; }},
    {"discharge_pressure", "Pa", "bar", "psi", [](S s) { return s.x[state::discharge_pressure]; }},
    {"control_pressure", "Pa", "bar", "psi", [](S s) { return s.x[state::control_pressure]; }},
    {"swash_angle", "rad", "deg", "deg", [](S s) { return s.x[state::swash_angle]; }},
    {"swash_velocity", "rad/s", "deg/s", "deg/s", [](S s) { return s.x[state::swash_velocity]; }},
    {"spool_position", "m", "mm", "in", [](S s) { return s.x[state::spool_position]; }},
    {"spool_velocity", "m/s", "mm/s", "in/s", [](S s) { return s.x[state::spool_velocity]; }},
    {"pump_flow", "m^3/s", "L/min", "gpm", [](S s) { return s.pump_flow; }},
    {"load_flow", "m^3/s", "L/min", "gpm", [](S s) { return s.load_flow; }},
    {"leakage_flow", "m^3/s", "L/min", "gpm", [](S s) { return s.leakage_flow; }},
    {"control_flow", "m^3/s", "L/min", "gpm", [](S s) { return s.control_flow; }},
    {"load_opening", "-", "-", "-", [](S s) { return s.opening; }},
    {"compensator_setting", "Pa", "bar", "psi", [](S s) { return s.setting; }},
  };
  // clang-format on
  return columns;
}

namespace {

std::string_view unit_in(const TraceColumn& c, UnitSystem units) {
  switch (units) {
    case UnitSystem::si:
      return c.si_unit;
    case UnitSystem::metric:
      return c.metric_unit;
    case UnitSystem::us:
      return c.us_unit;
  }
  return c.si_unit;
}

// "m^3/s" -> "m3_s", "L/min" -> "L_min", "-" -> "" (interfaces.md's suffixes).
std::string unit_suffix(std::string_view unit) {
  std::string out;
  for (char ch : unit) {
    if (ch == '/')
      out += '_';
    else if (ch != '^' && ch != '-')
      out += ch;
  }
  return out;
}

}  // namespace

std::string column_header(const TraceColumn& column, UnitSystem units) {
  const std::string suffix = unit_suffix(unit_in(column, units));
  return suffix.empty() ? std::string(column.quantity) : std::string(column.quantity) + "_" + suffix;
}

std::string trace_csv(const std::vector<Sample>& trace, UnitSystem units) {
  const auto& columns = trace_columns();
  std::vector<double> factor;
  for (const TraceColumn& c : columns) factor.push_back(convert(1.0, c.si_unit, unit_in(c, units)));
  std::string out;
  out.reserve((trace.size() + 1) * columns.size() * 16);
  for (std::size_t i = 0; i < columns.size(); ++i) {
    if (i) out += ',';
    out += column_header(columns[i], units);
  }
  out += '\n';
  char buffer[32];
  for (const Sample& s : trace) {
    for (std::size_t i = 0; i < columns.size(); ++i) {
      if (i) out += ',';
      std::snprintf(buffer, sizeof buffer, "%.10g", columns[i].read(s) * factor[i]);
      out += buffer;
    }
    out += '\n';
  }
  return out;
}

std::string json_number(double value) {
  if (!std::isfinite(value)) return "null";
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.12g", value);
  return buffer;
}

std::string json_string(std::string_view text) { return detail::string_literal(text); }

std::string summary_json(const Scenario& scenario, const RunResult& result, const std::vector<EventMetrics>& events) {
  const Sample last = result.trace.empty() ? Sample{} : result.trace.back();
  std::ostringstream o;
  o << "{\n";
  o << "  \"scenario\": " << json_string(scenario.name) << ",\n";
  o << "  \"peak_discharge_pressure_Pa\": " << json_number(result.peak_discharge_pressure) << ",\n";
  o << "  \"final\": {\n";
  o << "    \"time_s\": " << json_number(last.time) << ",\n";
  o << "    \"discharge_pressure_Pa\": " << json_number(last.x[state::discharge_pressure]) << ",\n";
  o << "    \"swash_angle_rad\": " << json_number(last.x[state::swash_angle]) << ",\n";
  o << "    \"pump_flow_m3_s\": " << json_number(last.pump_flow) << ",\n";
  o << "    \"load_flow_m3_s\": " << json_number(last.load_flow) << "\n";
  o << "  },\n";
  o << "  \"events\": [";
  for (std::size_t i = 0; i < events.size(); ++i) {
    const EventMetrics& e = events[i];
    o << (i ? ",\n" : "\n");
    o << "    { \"time_s\": " << json_number(e.time) << ", \"target\": " << json_string(e.target)
      << ", \"peak_discharge_pressure_Pa\": " << json_number(e.peak_discharge_pressure)
      << ", \"overshoot_percent\": " << json_number(e.overshoot_percent)
      << ", \"settling_time_s\": " << json_number(e.settling_time)
      << ", \"swash_response_time_s\": " << json_number(e.swash_response_time) << " }";
  }
  o << (events.empty() ? "],\n" : "\n  ],\n");
  o << "  \"initial_state\": {\n";
  o << "    \"method\": \"integration to rest\",\n";
  o << "    \"settled\": " << (result.start.settled ? "true" : "false") << ",\n";
  o << "    \"simulated_time_s\": " << json_number(result.start.simulated_time) << "\n";
  o << "  },\n";
  const SolverStats& s = result.stats;
  o << "  \"solver\": {\n";
  o << "    \"method\": \"rosenbrock4 (Boost.Odeint), hard end stops\",\n";
  o << "    \"steps\": " << s.steps << ",\n";
  o << "    \"rejected_steps\": " << s.rejected_steps << ",\n";
  o << "    \"rhs_evaluations\": " << s.rhs_evaluations << ",\n";
  o << "    \"jacobian_evaluations\": " << s.jacobian_evaluations << ",\n";
  o << "    \"stop_events\": " << s.stop_events << ",\n";
  o << "    \"wall_time_s\": " << json_number(s.wall_time_s) << "\n";
  o << "  }\n";
  o << "}\n";
  return o.str();
}

}  // namespace swashtune
