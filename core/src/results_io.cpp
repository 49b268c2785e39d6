#include "swashtune/results_io.hpp"

#include <charconv>
#include <cmath>
#include <cstdio>
#include <limits>
#include <sstream>

#include "swashtune/plausibility.hpp"
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

// Reads state i of the sample (NaN when the sample has fewer states).
template <int i>
double state_at(const Sample& s) {
  return s.x.size() > i ? s.x[i] : std::numeric_limits<double>::quiet_NaN();
}

}  // namespace

std::vector<TraceColumn> optional_state_columns(const ModelParameters& p) {
  static constexpr double (*readers[])(const Sample&) = {state_at<6>, state_at<7>,  state_at<8>,
                                                         state_at<9>, state_at<10>, state_at<11>};
  const bool port = std::isfinite(p.control_orifice);
  std::vector<TraceColumn> out;
  const auto add = [&](std::string_view quantity, std::string_view si, std::string_view metric, std::string_view us) {
    out.push_back({quantity, si, metric, us, readers[out.size()]});
  };
  if (port) add("port_pressure", "Pa", "bar", "psi");
  if (p.cavitation) {
    add("released_air_line", "-", "-", "-");
    add("released_air_chamber", "-", "-", "-");
    if (port) add("released_air_port", "-", "-", "-");
  }
  if (p.flow_ripple) add("shaft_angle", "rad", "deg", "deg");
  if (has_distributed_line(p)) out.push_back(valve_end_pressure_column());
  return out;
}

const TraceColumn& valve_end_pressure_column() {
  static const TraceColumn column{"valve_end_pressure", "Pa", "bar", "psi",
                                  [](const Sample& s) { return s.valve_end_pressure; }};
  return column;
}

std::string_view column_unit(const TraceColumn& c, UnitSystem units) {
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

namespace {

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
  const std::string suffix = unit_suffix(column_unit(column, units));
  return suffix.empty() ? std::string(column.quantity) : std::string(column.quantity) + "_" + suffix;
}

TraceRowFormatter::TraceRowFormatter(UnitSystem units) : columns_(trace_columns()) {
  for (const TraceColumn& c : columns_) factors_.push_back(convert(1.0, c.si_unit, column_unit(c, units)));
  for (std::size_t i = 0; i < columns_.size(); ++i) {
    if (i) header_ += ',';
    header_ += column_header(columns_[i], units);
  }
  header_ += '\n';
}

TraceRowFormatter::TraceRowFormatter(UnitSystem units, const ModelParameters& parameters) : TraceRowFormatter(units) {
  header_.pop_back();  // the newline
  for (const TraceColumn& c : optional_state_columns(parameters)) {
    columns_.push_back(c);
    factors_.push_back(convert(1.0, c.si_unit, column_unit(c, units)));
    header_ += ',' + column_header(c, units);
  }
  header_ += '\n';
}

void TraceRowFormatter::append(std::string& out, const Sample& s) const {
  const auto& columns = columns_;
  char buffer[32];
  for (std::size_t i = 0; i < columns.size(); ++i) {
    if (i) out += ',';
    // to_chars: an order of magnitude faster than printf, locale-free, and
    // without a precision the shortest text that reads back exactly.
    const auto written = std::to_chars(buffer, buffer + sizeof buffer, columns[i].read(s) * factors_[i]);
    out.append(buffer, written.ptr);
  }
  out += '\n';
}

std::string trace_csv(const std::vector<Sample>& trace, UnitSystem units) {
  const TraceRowFormatter rows(units);
  std::string out = rows.header();
  out.reserve((trace.size() + 1) * trace_columns().size() * 16);
  for (const Sample& s : trace) rows.append(out, s);
  return out;
}

std::string json_number(double value) {
  if (!std::isfinite(value)) return "null";
  char buffer[32];  // the shortest text that reads back exactly (JSON has no other rounding to trust)
  return std::string(buffer, std::to_chars(buffer, buffer + sizeof buffer, value).ptr);
}

std::string json_string(std::string_view text) { return detail::string_literal(text); }

namespace {
std::string optional_json(const std::optional<double>& v) { return v ? json_number(*v) : "null"; }
}  // namespace

std::string oscillation_json(const OscillationReport& r) {
  std::ostringstream o;
  o << "{ \"kind\": " << json_string(to_string(r.kind)) << ", \"frequency_Hz\": " << json_number(r.frequency_hz)
    << ", \"peak_to_peak\": " << json_number(r.peak_to_peak)
    << ", \"growth_rate_per_s\": " << json_number(r.growth_rate)
    << ", \"log_decrement\": " << json_number(r.log_decrement)
    << ", \"damping_ratio\": " << json_number(r.damping_ratio) << ", \"cycles\": " << r.cycles
    << ", \"noise\": " << json_number(r.noise) << ", \"mean\": " << json_number(r.mean) << " }";
  return o.str();
}

std::string summary_json(const Scenario& scenario, const RunResult& result, const std::vector<EventMetrics>& events) {
  const Sample& last = result.final_sample;
  std::ostringstream o;
  o << "{\n";
  o << "  \"scenario\": " << json_string(scenario.name) << ",\n";
  o << "  \"peak_discharge_pressure_Pa\": " << json_number(result.peak_discharge_pressure) << ",\n";
  o << "  \"trace_stride_in_memory\": " << result.trace_stride << ",\n";
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
      << ", \"overshoot_percent\": " << optional_json(e.overshoot_percent)
      << ", \"undershoot_percent\": " << optional_json(e.undershoot_percent)
      << ", \"settling_time_s\": " << optional_json(e.settling_time)
      << ", \"swash_response_time_s\": " << optional_json(e.swash_response_time)
      << ", \"swash_travel_time_s\": " << optional_json(e.swash_travel_time)
      << ",\n      \"note\": " << json_string(e.note) << ", \"window_end_s\": " << json_number(e.window_end)
      << ", \"initial_discharge_pressure_Pa\": " << json_number(e.initial_discharge_pressure)
      << ", \"final_discharge_pressure_Pa\": " << json_number(e.final_discharge_pressure)
      << ", \"settling_band_Pa\": " << json_number(e.band)
      << ",\n      \"oscillation\": " << oscillation_json(e.oscillation)
      << ", \"oscillation_from_s\": " << json_number(e.oscillation_from)
      << ", \"oscillation_to_s\": " << json_number(e.oscillation_to) << " }";
  }
  o << (events.empty() ? "],\n" : "\n  ],\n");
  const std::vector<std::string> cautions = peak_cautions(scenario, result);
  o << "  \"cautions\": [";
  for (std::size_t i = 0; i < cautions.size(); ++i) o << (i ? ",\n    " : "\n    ") << json_string(cautions[i]);
  o << (cautions.empty() ? "],\n" : "\n  ],\n");
  o << "  \"initial_state\": {\n";
  o << "    \"method\": " << json_string(to_string(result.start.method)) << ",\n";
  o << "    \"converged\": " << (result.start.converged ? "true" : "false") << "\n";
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

namespace swashtune {
namespace {

std::string json_optional(const std::optional<double>& v) { return v ? json_number(*v) : "null"; }

std::string state_name(int index) {
  static const char* names[] = {"discharge_pressure", "control_pressure", "swash_angle",
                                "swash_velocity",     "spool_position",   "spool_velocity"};
  constexpr int named = static_cast<int>(sizeof names / sizeof names[0]);
  return index >= 0 && index < named ? names[index] : "state_" + std::to_string(index);
}

std::string json_mode(const Mode& m) {
  std::ostringstream o;
  o << "{ \"re\": " << json_number(m.eigenvalue.real()) << ", \"im\": " << json_number(m.eigenvalue.imag())
    << ", \"natural_frequency_Hz\": " << json_number(m.natural_frequency_hz)
    << ", \"damped_frequency_Hz\": " << json_number(m.damped_frequency_hz)
    << ", \"damping_ratio\": " << json_number(m.damping_ratio) << " }";
  return o.str();
}

}  // namespace

std::string stability_json(const StabilityReport& r, const std::vector<EventMetrics>* run_guide) {
  const State& x = r.operating_point.condition.x;
  const StopModes& modes = r.operating_point.condition.modes;
  std::ostringstream o;
  o << "{\n  \"operating_point\": {\n";
  o << "    \"load_opening\": " << json_number(r.load_opening) << ",\n";
  o << "    \"discharge_pressure_Pa\": " << json_number(x[state::discharge_pressure]) << ",\n";
  o << "    \"swash_angle_rad\": " << json_number(x[state::swash_angle]) << ",\n";
  o << "    \"spool_position_m\": " << json_number(x[state::spool_position]) << ",\n";
  o << "    \"control_pressure_Pa\": " << json_number(x[state::control_pressure]) << ",\n";
  o << "    \"swash_stop\": " << json_string(stop_name(modes.swash, true)) << ",\n";
  o << "    \"spool_stop\": " << json_string(stop_name(modes.spool, false)) << ",\n";
  o << "    \"method\": " << json_string(to_string(r.operating_point.method)) << ",\n";
  o << "    \"converged\": " << (r.operating_point.converged ? "true" : "false") << "\n  },\n";
  o << "  \"eigenvalues\": [";
  for (std::size_t i = 0; i < r.modes.size(); ++i)
    o << (i ? ", " : "") << "{ \"re\": " << json_number(r.modes[i].eigenvalue.real())
      << ", \"im\": " << json_number(r.modes[i].eigenvalue.imag()) << " }";
  o << "],\n  \"modes\": [";
  for (std::size_t i = 0; i < r.modes.size(); ++i) o << (i ? ",\n    " : "\n    ") << json_mode(r.modes[i]);
  o << "\n  ],\n";
  if (r.dominant)
    o << "  \"dominant\": { \"frequency_Hz\": " << json_number(r.dominant->damped_frequency_hz)
      << ", \"damping_ratio\": " << json_number(r.dominant->damping_ratio)
      << ", \"natural_frequency_Hz\": " << json_number(r.dominant->natural_frequency_hz) << " },\n";
  else
    o << "  \"dominant\": null,\n";
  const LoopMargins& lm = r.margins;
  o << "  \"loop\": {\n";
  o << "    \"break\": \"swash angle in the pump flow\",\n";
  o << "    \"gain_margin_dB\": " << json_optional(lm.gain_margin_db) << ",\n";
  o << "    \"phase_margin_deg\": " << json_optional(lm.phase_margin_deg) << ",\n";
  o << "    \"crossover_frequency_Hz\": " << json_optional(lm.crossover_frequency_hz) << ",\n";
  o << "    \"phase_crossover_frequency_Hz\": " << json_optional(lm.phase_crossover_frequency_hz) << ",\n";
  o << "    \"modulus_margin\": " << json_optional(lm.modulus_margin) << ",\n";
  o << "    \"modulus_margin_frequency_Hz\": " << json_optional(lm.modulus_margin_frequency_hz) << ",\n";
  o << "    \"gain_crossovers\": [";
  for (std::size_t i = 0; i < lm.gain_crossovers.size(); ++i)
    o << (i ? ", " : "") << "{ \"frequency_Hz\": " << json_number(lm.gain_crossovers[i].frequency_hz)
      << ", \"phase_margin_deg\": " << json_number(lm.gain_crossovers[i].phase_margin_deg) << " }";
  o << "],\n    \"phase_crossovers\": [";
  for (std::size_t i = 0; i < lm.phase_crossovers.size(); ++i)
    o << (i ? ", " : "") << "{ \"frequency_Hz\": " << json_number(lm.phase_crossovers[i].frequency_hz)
      << ", \"gain_margin_dB\": " << json_number(lm.phase_crossovers[i].gain_margin_db) << " }";
  o << "],\n";
  o << "    \"open_loop_unstable_poles\": " << r.open_loop_unstable_poles << ",\n";
  o << "    \"closed_loop_unstable_poles\": " << r.closed_loop_unstable_poles << ",\n";
  o << "    \"applies\": " << (r.margins_apply ? "true" : "false") << ",\n";
  o << "    \"note\": " << json_string(r.note) << "\n  },\n";
  o << "  \"explanation\": [";
  for (std::size_t i = 0; i < r.explanation.size(); ++i)
    o << (i ? ",\n    " : "\n    ") << json_string(r.explanation[i]);
  o << (r.explanation.empty() ? "],\n" : "\n  ],\n");
  o << "  \"stable\": " << (r.stable ? "true" : "false") << ",\n";
  if (run_guide) {
    o << "  \"run_oscillation\": [";
    for (std::size_t i = 0; i < run_guide->size(); ++i) {
      const EventMetrics& e = (*run_guide)[i];
      o << (i ? ",\n    " : "\n    ") << "{ \"time_s\": " << json_number(e.time)
        << ", \"target\": " << json_string(e.target) << ", \"note\": " << json_string(e.note)
        << ", \"oscillation\": " << oscillation_json(e.oscillation) << " }";
    }
    o << (run_guide->empty() ? "],\n" : "\n  ],\n");
  }
  const LinearModel& m = r.model;
  o << "  \"linear_model\": {\n    \"states\": [";
  for (std::size_t i = 0; i < m.states.size(); ++i) o << (i ? ", " : "") << json_string(state_name(m.states[i]));
  o << "],\n    \"A\": [";
  for (int i = 0; i < m.a.rows(); ++i) {
    o << (i ? ",\n          [" : "[");
    for (int j = 0; j < m.a.cols(); ++j) o << (j ? ", " : "") << json_number(m.a(i, j));
    o << "]";
  }
  o << "],\n    \"B\": [";
  for (int i = 0; i < m.b.size(); ++i) o << (i ? ", " : "") << json_number(m.b[i]);
  o << "],\n    \"C\": [";
  for (int i = 0; i < m.c.size(); ++i) o << (i ? ", " : "") << json_number(m.c[i]);
  o << "]\n  }\n}\n";
  return o.str();
}

std::string characteristic_json(const Characteristic& ch) {
  std::ostringstream o;
  o << "{\n  \"deadhead_pressure_Pa\": " << json_number(ch.deadhead_pressure) << ",\n";
  o << "  \"cut_in_pressure_Pa\": " << json_optional(ch.cut_in_pressure) << ",\n";
  auto curve = [&](const char* name, const std::vector<CharacteristicPoint>& points, bool last) {
    o << "  \"" << name << "\": [";
    for (std::size_t i = 0; i < points.size(); ++i) {
      const CharacteristicPoint& c = points[i];
      o << (i ? ",\n    " : "\n    ") << "{ \"load_opening\": " << json_number(c.load_opening)
        << ", \"discharge_pressure_Pa\": " << json_number(c.discharge_pressure)
        << ", \"pump_flow_m3_s\": " << json_number(c.pump_flow) << ", \"load_flow_m3_s\": " << json_number(c.load_flow)
        << ", \"swash_angle_rad\": " << json_number(c.swash_angle)
        << ", \"method\": " << json_string(to_string(c.method)) << " }";
    }
    o << (points.empty() ? "]" : "\n  ]") << (last ? "\n" : ",\n");
  };
  o << "  \"deadhead_hysteresis_Pa\": " << json_optional(ch.deadhead_hysteresis) << ",\n";
  curve("points", ch.points, false);
  curve("rising", ch.rising, false);
  curve("falling", ch.falling, true);
  o << "}\n";
  return o.str();
}

std::string stability_map_json(const StabilityMap& map) {
  std::ostringstream o;
  auto axis = [&](const char* name, const Axis& a) {
    o << "  \"" << name << "\": { \"key\": " << json_string(a.spec->key) << ", \"unit\": " << json_string(a.spec->unit)
      << ", \"values\": [";
    for (std::size_t i = 0; i < a.values.size(); ++i) o << (i ? ", " : "") << json_number(a.values[i]);
    o << "] },\n";
  };
  o << "{\n";
  axis("x", map.x);
  axis("y", map.y);
  o << "  \"points\": [";
  for (std::size_t i = 0; i < map.points.size(); ++i) {
    const MapPoint& p = map.points[i];
    o << (i ? ",\n    " : "\n    ") << "{ \"x\": " << json_number(p.x) << ", \"y\": " << json_number(p.y)
      << ", \"solved\": " << (p.solved ? "true" : "false") << ", \"stable\": " << (p.stable ? "true" : "false")
      << ", \"gain_margin_dB\": " << json_optional(p.gain_margin_db)
      << ", \"phase_margin_deg\": " << json_optional(p.phase_margin_deg)
      << ", \"crossover_frequency_Hz\": " << json_optional(p.crossover_frequency_hz)
      << ", \"modulus_margin\": " << json_optional(p.modulus_margin)
      << ", \"applies\": " << (p.margins_apply ? "true" : "false")
      << ", \"dominant_frequency_Hz\": " << json_optional(p.dominant_frequency_hz)
      << ", \"dominant_damping_ratio\": " << json_optional(p.dominant_damping_ratio) << " }";
  }
  o << "\n  ]\n}\n";
  return o.str();
}

std::string bode_csv(const std::vector<BodePoint>& bode) {
  std::string out = "frequency_Hz,magnitude_dB,phase_deg\n";
  char buffer[96];
  for (const BodePoint& b : bode) {
    std::snprintf(buffer, sizeof buffer, "%.8g,%.8g,%.8g\n", b.frequency_hz, b.magnitude_db, b.phase_deg);
    out += buffer;
  }
  return out;
}

// The "parameters" array both fits' JSON share: key, initial and fitted
// value, standard error, whether identifiable, and the note.
static void write_fitted_parameters(std::ostringstream& o, const std::vector<FittedParameter>& parameters) {
  o << "[";
  for (std::size_t i = 0; i < parameters.size(); ++i) {
    const FittedParameter& p = parameters[i];
    o << (i ? ",\n    " : "\n    ") << "{ \"key\": " << json_string(p.key)
      << ", \"initial\": " << json_number(p.initial) << ", \"fitted\": " << json_number(p.value)
      << ", \"standard_error\": " << json_number(p.standard_error)
      << ", \"identifiable\": " << (p.identifiable ? "true" : "false") << ", \"note\": " << json_string(p.note) << " }";
  }
}

std::string fit_json(const FitResult& fit) {
  std::ostringstream o;
  o << "{\n  \"parameters\": ";
  write_fitted_parameters(o, fit.parameters);
  o << "\n  ],\n  \"initial_rms_residual_Pa\": " << json_number(fit.initial_rms)
    << ",\n  \"rms_residual_Pa\": " << json_number(fit.rms) << ",\n  \"samples\": " << fit.samples
    << ",\n  \"simulations\": " << fit.simulations << ",\n  \"converged\": " << (fit.converged ? "true" : "false")
    << ",\n  \"stop\": " << json_string(to_string(fit.stop))
    << ",\n  \"remaining_step_standard_errors\": " << json_number(fit.remaining_step)
    << ",\n  \"message\": " << json_string(fit.message) << ",\n  \"noise_Pa\": " << json_number(fit.noise)
    << ",\n  \"residual_to_noise\": " << json_number(fit.residual_to_noise)
    << ",\n  \"verdict\": " << json_string(to_string(fit.verdict))
    << ",\n  \"verdict_text\": " << json_string(fit.verdict_text)
    << ",\n  \"starts_agree\": " << (fit.starts_agree ? "true" : "false")
    << ",\n  \"starts_note\": " << json_string(fit.starts_note) << ",\n  \"starts\": [";
  for (std::size_t k = 0; k < fit.starts.size(); ++k) {
    const FitStart& s = fit.starts[k];
    const auto list = [&o](const std::vector<double>& v) {
      o << "[";
      for (std::size_t i = 0; i < v.size(); ++i) o << (i ? ", " : "") << json_number(v[i]);
      o << "]";
    };
    o << (k ? ",\n    " : "\n    ") << "{ \"start\": ";
    list(s.start);
    o << ", \"end\": ";
    list(s.end);
    o << ", \"rms_residual_Pa\": " << json_number(s.rms) << ", \"stop\": " << json_string(to_string(s.stop))
      << ", \"criterion\": " << json_string(s.criterion) << ", \"simulations\": " << s.simulations
      << ", \"same_minimum\": " << (s.same_minimum ? "true" : "false") << " }";
  }
  o << (fit.starts.empty() ? "]" : "\n  ]") << "\n}\n";
  return o.str();
}

std::string fit_trace_csv(const FitResult& fit) {
  std::ostringstream o;
  o << "time_s,recorded_Pa,fitted_Pa,residual_Pa\n";
  o.precision(10);
  for (std::size_t i = 0; i < fit.times.size() && i < fit.simulated.size(); ++i)
    o << fit.times[i] << "," << fit.measured[i] << "," << fit.simulated[i] << "," << fit.simulated[i] - fit.measured[i]
      << "\n";
  return o.str();
}

std::string datasheet_fit_json(const DataSheetFitResult& fit) {
  std::ostringstream o;
  const auto optional = [](const std::optional<double>& v) { return v ? json_number(*v) : std::string("null"); };
  o << "{\n  \"parameters\": ";
  write_fitted_parameters(o, fit.parameters);
  o << "\n  ],\n  \"figures\": [";
  for (std::size_t i = 0; i < fit.figures.size(); ++i) {
    const FigureResult& f = fit.figures[i];
    o << (i ? ",\n    " : "\n    ") << "{ \"figure\": " << json_string(key_of(f.target.figure))
      << ", \"unit\": " << json_string(unit_of(f.target.figure)) << ", \"target\": " << json_number(f.target.value)
      << ", \"tolerance\": " << json_number(f.target.tolerance)
      << ", \"tolerance_given\": " << (f.target.tolerance_given ? "true" : "false")
      << ", \"initial\": " << optional(f.initial) << ", \"achieved\": " << optional(f.achieved)
      << ", \"miss_in_tolerances\": " << json_number(f.normalised_miss) << ", \"met\": " << (f.met ? "true" : "false")
      << " }";
  }
  o << "\n  ],\n  \"test\": { \"valve_time_s\": " << json_number(fit.test.valve_time)
    << ", \"closing_at_s\": " << json_number(fit.test.closing_at) << ", \"hold_s\": " << json_number(fit.test.hold)
    << ", \"recover_s\": " << json_number(fit.test.recover) << " }";
  o << ",\n  \"simulations\": " << fit.simulations << ",\n  \"converged\": " << (fit.converged ? "true" : "false")
    << ",\n  \"stop\": " << json_string(to_string(fit.stop)) << ",\n  \"message\": " << json_string(fit.message)
    << ",\n  \"all_met\": " << (fit.all_met ? "true" : "false") << ",\n  \"undetermined\": [";
  for (std::size_t i = 0; i < fit.undetermined.size(); ++i) o << (i ? ", " : "") << json_string(fit.undetermined[i]);
  o << "],\n  \"chi_square\": " << optional(fit.chi_square) << ",\n  \"degrees_of_freedom\": "
    << fit.degrees_of_freedom << ",\n  \"consistent\": " << (fit.consistent ? "true" : "false")
    << ",\n  \"starts_agree\": " << (fit.starts_agree ? "true" : "false")
    << ",\n  \"starts_note\": " << json_string(fit.starts_note)
    << ",\n  \"verdict_text\": " << json_string(fit.verdict_text) << "\n}\n";
  return o.str();
}

std::string sensitivity_json(const SensitivityReport& r) {
  auto values = [](const ResponseValues& v) {
    std::string out = "{";
    for (int i = 0; i < response_count; ++i) {
      out += (i ? ", " : " ") + json_string(key_of(all_responses[i])) + ": ";
      out += v.value[i] ? json_number(*v.value[i]) : std::string("null");
    }
    return out + " }";
  };
  auto complex_value = [](const std::optional<std::complex<double>>& z) {
    if (!z) return std::string("null");
    return "{ \"re\": " + json_number(z->real()) + ", \"im\": " + json_number(z->imag()) + " }";
  };
  std::ostringstream o;
  o << "{\n  \"load_opening\": " << json_number(r.stability.load_opening) << ",\n";
  o << "  \"units\": {";
  for (int i = 0; i < response_count; ++i)
    o << (i ? ", " : " ") << json_string(key_of(all_responses[i])) << ": " << json_string(unit_of(all_responses[i]));
  o << " },\n";
  o << "  \"present\": " << values(r.present) << ",\n";
  o << "  \"stable\": " << (r.stability.stable ? "true" : "false") << ",\n";
  o << "  \"margins_apply\": " << (r.stability.margins_apply ? "true" : "false") << ",\n";
  o << "  \"note\": " << json_string(r.stability.note) << ",\n";
  if (r.stability.dominant)
    o << "  \"least_damped_eigenvalue\": { \"re\": " << json_number(r.stability.dominant->eigenvalue.real())
      << ", \"im\": " << json_number(r.stability.dominant->eigenvalue.imag()) << " },\n";
  else
    o << "  \"least_damped_eigenvalue\": null,\n";
  o << "  \"parameters\": [";
  for (std::size_t i = 0; i < r.effects.size(); ++i) {
    const ParameterEffect& e = r.effects[i];
    o << (i ? ",\n    " : "\n    ") << "{ \"key\": " << json_string(e.spec->key) << ", \"value\": "
      << json_number(e.value) << ", \"unit\": " << json_string(e.spec->unit)
      << ", \"change\": " << json_number(e.change) << ", \"change_is_relative\": " << (e.relative ? "true" : "false")
      << ", \"skipped\": " << (e.skipped.empty() ? std::string("null") : json_string(e.skipped))
      << ", \"note\": " << (e.note.empty() ? std::string("null") : json_string(e.note))
      << ",\n      \"effects\": " << values(e.effect)
      << ",\n      \"eigenvalue_change\": " << complex_value(e.eigenvalue_change)
      << ", \"eigenvalue_change_by_differences\": " << complex_value(e.eigenvalue_change_by_differences) << " }";
  }
  o << "\n  ]\n}\n";
  return o.str();
}

}  // namespace swashtune
