// _swashtune: the core bound for Python, thinly. Every figure comes from the
// core functions the CLI uses (results_io's column list and JSON writers,
// the sweep table's rows), so a script sees what `swashtune-cli` shows; the
// Python package (swashtune/__init__.py) turns JSON into dicts and columns
// into numpy arrays. Long computations release the GIL.
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <optional>
#include <string>
#include <vector>

#include "swashtune/analysis.hpp"
#include "swashtune/atomic_file.hpp"
#include "swashtune/field_analysis.hpp"
#include "swashtune/field_trace.hpp"
#include "swashtune/fit.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/oscillation.hpp"
#include "swashtune/results_io.hpp"
#include "swashtune/safety.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/simulator.hpp"
#include "swashtune/sweep.hpp"
#include "swashtune/units.hpp"

namespace py = pybind11;
using namespace swashtune;

namespace {

// Python exception types, made once at import (swashtune.Error and kin).
struct ErrorTypes {
  PyObject* error = nullptr;
  PyObject* scenario = nullptr;
  PyObject* solver = nullptr;
  PyObject* field_trace = nullptr;
  PyObject* sweep = nullptr;
  PyObject* file = nullptr;
  PyObject* unit = nullptr;
};
ErrorTypes errors;

PyObject* new_error(py::module_& m, const char* name, PyObject* bases, const char* doc) {
  PyObject* type = PyErr_NewExceptionWithDoc((std::string("swashtune.") + name).c_str(), doc, bases, nullptr);
  if (!type) throw py::error_already_set();
  m.add_object(name, py::reinterpret_borrow<py::object>(type));
  return type;
}

void register_errors(py::module_& m) {
  errors.error = new_error(m, "Error", PyExc_Exception, "Base of the errors Swashtune reports.");
  const auto with = [](PyObject* builtin) { return PyTuple_Pack(2, errors.error, builtin); };
  errors.scenario = new_error(m, "ScenarioError", with(PyExc_ValueError),
                              "Bad scenario input; the message names the source, line and key.");
  errors.solver = new_error(m, "SolverError", with(PyExc_RuntimeError),
                            "The integration failed; `time` holds the simulated time, s.");
  errors.field_trace = new_error(m, "FieldTraceError", with(PyExc_ValueError),
                                 "A recording that cannot be read; the message names the file and row.");
  errors.sweep = new_error(m, "SweepError", with(PyExc_ValueError), "Bad sweep input (axis, shard, samples).");
  errors.file = new_error(m, "FileError", with(PyExc_OSError), "A file that cannot be read or written.");
  errors.unit = new_error(m, "UnitError", with(PyExc_ValueError), "A unit that is unknown or does not fit.");
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const SolverError& e) {
      py::object error = py::reinterpret_borrow<py::object>(errors.solver)(e.what());
      error.attr("time") = e.time();
      PyErr_SetObject(errors.solver, error.ptr());
    } catch (const ScenarioError& e) {
      PyErr_SetString(errors.scenario, e.what());
    } catch (const FieldTraceError& e) {
      PyErr_SetString(errors.field_trace, e.what());
    } catch (const SweepError& e) {
      PyErr_SetString(errors.sweep, e.what());
    } catch (const FileError& e) {
      PyErr_SetString(errors.file, e.what());
    } catch (const UnitError& e) {
      PyErr_SetString(errors.unit, e.what());
    }
  });
}

UnitSystem unit_system(const std::string& name) {
  const auto units = parse_unit_system(name);
  if (!units) throw std::invalid_argument("units: expected si, metric or us, got \"" + name + "\"");
  return *units;
}

py::array_t<double> to_array(std::vector<double>&& values) {
  auto* owned = new std::vector<double>(std::move(values));
  py::capsule free_when_done(owned, [](void* v) { delete static_cast<std::vector<double>*>(v); });
  return py::array_t<double>(static_cast<py::ssize_t>(owned->size()), owned->data(), free_when_done);
}

// A whole run: the trace's columns (names as in trace.csv for `units`) and
// summary.json, computed as `swashtune-cli run` computes them.
py::tuple run(const Scenario& scenario, const std::string& units_name, bool keep_trace) {
  const UnitSystem units = unit_system(units_name);
  std::vector<TraceColumn> columns = trace_columns();
  for (const TraceColumn& c : optional_state_columns(scenario.parameters)) columns.push_back(c);
  std::vector<double> factors;
  py::list names;
  for (const TraceColumn& c : columns) {
    factors.push_back(convert(1.0, c.si_unit, column_unit(c, units)));
    names.append(column_header(c, units));
  }
  std::vector<std::vector<double>> data(columns.size());
  std::string summary;
  {
    py::gil_scoped_release unlocked;
    RunOptions options;
    options.max_trace_samples = run_kept_trace_samples;
    if (keep_trace)
      options.stream = [&](const Sample& s) {
        for (std::size_t i = 0; i < columns.size(); ++i) data[i].push_back(columns[i].read(s) * factors[i]);
      };
    const RunResult result = run_scenario(scenario, options);
    summary = summary_json(scenario, result, event_metrics(scenario, result));
  }
  py::list arrays;
  for (auto& column : data) arrays.append(to_array(std::move(column)));
  return py::make_tuple(names, arrays, summary);
}

std::string stability(const Scenario& scenario) {
  py::gil_scoped_release unlocked;
  return stability_json(analyse_stability(scenario.parameters, scenario.settings));
}

// The loop's Bode data: the columns of `stability --bode` at full precision.
py::tuple bode(const Scenario& scenario, int points) {
  if (points < 2) throw std::invalid_argument("points: must be at least 2");
  std::vector<BodePoint> bode;
  {
    py::gil_scoped_release unlocked;
    const StabilityReport report = analyse_stability(scenario.parameters, scenario.settings);
    bode = loop_bode(report.model, margin_search_low_hz, margin_search_high_hz, points);
  }
  std::vector<double> f, magnitude, phase;
  for (const BodePoint& b : bode) {
    f.push_back(b.frequency_hz);
    magnitude.push_back(b.magnitude_db);
    phase.push_back(b.phase_deg);
  }
  std::string header = bode_csv({});  // the CLI's column names
  header.pop_back();
  return py::make_tuple(
      header, py::make_tuple(to_array(std::move(f)), to_array(std::move(magnitude)), to_array(std::move(phase))));
}

std::string map(const Scenario& scenario, const std::string& x, const std::string& y) {
  const Axis ax = parse_axis(x);
  const Axis ay = parse_axis(y);
  py::gil_scoped_release unlocked;
  return stability_map_json(stability_map(scenario.parameters, scenario.settings, ax, ay));
}

std::string steady(const Scenario& scenario, int points) {
  if (points < 2 || points > 10000) throw std::invalid_argument("points: must be from 2 to 10000");
  py::gil_scoped_release unlocked;
  return characteristic_json(steady_characteristic(scenario.parameters, scenario.settings, points));
}

// The table `swashtune-cli sweep` writes (sorted by index), as text.
std::string sweep(const Scenario& base, const std::vector<std::string>& vary, std::optional<std::size_t> samples,
                  std::uint64_t seed, int jobs, const std::string& shard_text) {
  if (jobs < 1 || jobs > 256) throw SweepError("--jobs: must be from 1 to 256");
  const Sweep sweep = make_sweep(base, vary, samples, seed);
  const Shard shard = shard_text.empty() ? Shard{} : parse_shard(shard_text);
  std::vector<std::size_t> indices;
  for (std::size_t i = 0; i < sweep.size(); ++i)
    if (shard.contains(i)) indices.push_back(i);
  check_sweep_points(sweep, indices);
  std::vector<SweepTable::Line> rows;
  {
    py::gil_scoped_release unlocked;
    run_sweep(sweep, indices, jobs, [&](const SweepRow& row) {
      std::string line = sweep_csv_line(row);
      line.pop_back();  // the line end
      rows.push_back({row.index, std::move(line)});
    });
  }
  return sorted_sweep_table(sweep_header(sweep), std::move(rows), "sweep");
}

// A quantity from Python: a number in SI, or a string with its unit ("1kHz").
double quantity_of(const py::handle& value, const std::string& name, const Dimension& d) {
  if (!py::isinstance<py::str>(value)) return value.cast<double>();
  const Quantity q = parse_quantity_relaxed(value.cast<std::string>());
  if (q.has_unit && q.unit.dimension != d)
    throw std::invalid_argument(name + ": expected " + dimension_name(d) + ", got \"" + value.cast<std::string>() +
                                "\"");
  return q.si();
}

FieldTraceOptions trace_options(const py::dict& options) {
  FieldTraceOptions o;
  for (const auto& [key, value] : options) {
    const std::string name = py::str(key);
    if (value.is_none()) continue;
    const std::string text = py::str(value);
    if (name == "time_column")
      o.time_column = text;
    else if (name == "pressure_column")
      o.pressure_column = text;
    else if (name == "control_column")
      o.control_column = text;
    else if (name == "load_column")
      o.load_column = text;
    else if (name == "flow_column")
      o.flow_column = text;
    else if (name == "speed_column")
      o.speed_column = text;
    else if (name == "time_unit")
      o.time_unit = text;
    else if (name == "pressure_unit")
      o.pressure_unit = text;
    else if (name == "flow_unit")
      o.flow_unit = text;
    else if (name == "rate")
      o.sample_rate = quantity_of(value, name, dim::time.power(-1));
    else if (name == "atmosphere")
      o.atmospheric_pressure = quantity_of(value, name, dim::pressure);
    else
      throw std::invalid_argument("unknown recording option \"" + name +
                                  "\"; expected time_column, pressure_column, control_column, load_column, "
                                  "flow_column, speed_column, time_unit, pressure_unit, flow_unit, rate or atmosphere");
  }
  return o;
}

py::dict read_trace(const std::string& path, const py::dict& options) {
  FieldTrace t = read_field_trace(path, trace_options(options));
  py::dict d;
  d["source"] = t.source;
  d["time_header"] = t.time_header;
  d["pressure_header"] = t.pressure_header;
  d["flow_header"] = t.flow_header;
  d["time_s"] = to_array(std::move(t.time));
  d["pressure_Pa"] = to_array(std::move(t.pressure));
  d["flow_m3_s"] = t.flow.empty() ? py::object(py::none()) : py::object(to_array(std::move(t.flow)));
  return d;
}

std::string field(const std::string& path, const py::dict& options, std::optional<double> from,
                  std::optional<double> to, std::optional<double> pistons, std::optional<double> speed_rpm,
                  std::optional<double> event_threshold) {
  const FieldTraceOptions read = trace_options(options);
  FieldAnalysisOptions analysis;
  analysis.from = from;
  analysis.to = to;
  analysis.pistons = pistons;
  analysis.speed = speed_rpm;
  analysis.event_threshold = event_threshold;
  if (pistons) analysis.ripple_source = "--pistons";
  if (speed_rpm) analysis.ripple_source = pistons ? "--pistons, --speed" : "--speed";
  py::gil_scoped_release unlocked;
  return field_analysis_json(analyse_field_file(path, read, analysis));
}

std::string oscillation(const std::vector<double>& t, const std::vector<double>& y, std::optional<double> from,
                        std::optional<double> to) {
  py::gil_scoped_release unlocked;
  return oscillation_json(analyse_oscillation(t, y, from, to));
}

py::tuple fit(const Scenario& scenario, const std::string& trace_path, const py::dict& options,
              const std::vector<std::string>& free_keys, int max_iterations) {
  const FieldTrace trace = read_field_trace(trace_path, trace_options(options));
  FitOptions fit_options;
  fit_options.free_keys = free_keys;
  fit_options.max_iterations = max_iterations;
  std::optional<FitResult> result;
  {
    py::gil_scoped_release unlocked;
    result = fit_to_trace(scenario, trace, fit_options);
  }
  return py::make_tuple(fit_json(*result), result->fitted);
}

py::list parameters() {
  py::list out;
  const auto add = [&out](const auto& spec, const char* kind) {
    py::dict d;
    d["key"] = std::string(spec.key);
    d["kind"] = kind;
    d["symbol"] = std::string(spec.symbol);
    d["unit"] = std::string(spec.unit);
    d["default"] = spec.is_flag() ? py::object(py::bool_(spec.default_value != 0.0)) : py::float_(spec.default_value);
    d["range"] = spec.is_flag() ? std::string("true or false") : spec.range.describe(spec.unit);
    d["min"] = spec.range.min;
    d["max"] = spec.range.max;
    d["meaning"] = std::string(spec.meaning);
    d["metric_unit"] = std::string(spec.metric_unit);
    d["us_unit"] = std::string(spec.us_unit);
    d["switch"] = spec.is_flag();
    out.append(d);
  };
  for (const ParameterSpec& spec : parameter_registry()) add(spec, "parameter");
  for (const SettingSpec& spec : setting_registry()) add(spec, "setting");
  return out;
}

// A parameter or setting of a scenario in its stored unit.
py::object value_of(const Scenario& s, const std::string& key) {
  if (const ParameterSpec* p = find_parameter(key)) {
    if (p->is_flag()) return py::bool_(p->get(s.parameters) != 0.0);
    return py::float_(p->get(s.parameters));
  }
  if (const SettingSpec* st = find_setting(key)) return py::float_(st->get(s.settings));
  if (key == "scenario.name") return py::str(s.name);
  if (key == "scenario.description") return py::str(s.description);
  throw py::key_error(key);
}

}  // namespace

PYBIND11_MODULE(_swashtune, m) {
  m.doc() = "Swashtune's core for Python; use the swashtune package, which wraps it.";
  register_errors(m);

  py::class_<Scenario>(m, "CoreScenario", "A scenario as the core holds it (stored units).")
      .def_readonly("name", &Scenario::name)
      .def_readonly("description", &Scenario::description)
      .def_readonly("warnings", &Scenario::warnings)
      .def("value", &value_of, py::arg("key"))
      .def("to_toml", [](const Scenario& s) { return scenario_to_toml(s); })
      .def("to_json", [](const Scenario& s) { return scenario_to_json(s); })
      .def("events", [](const Scenario& s) {
        py::list out;
        for (const Event& e : s.events) {
          py::dict d;
          d["at"] = e.at;
          d["set"] = e.target;
          d["to"] = e.to;
          d["ramp"] = e.ramp;
          out.append(d);
        }
        return out;
      });

  m.def("load_scenario", &load_scenario, py::arg("path"));
  m.def("parse_scenario", &parse_scenario, py::arg("text"), py::arg("source"));
  m.def("run", &run, py::arg("scenario"), py::arg("units"), py::arg("keep_trace"));
  m.def("stability", &stability, py::arg("scenario"));
  m.def("bode", &bode, py::arg("scenario"), py::arg("points"));
  m.def("stability_map", &map, py::arg("scenario"), py::arg("x"), py::arg("y"));
  m.def("steady", &steady, py::arg("scenario"), py::arg("points"));
  m.def("sweep", &sweep, py::arg("scenario"), py::arg("vary"), py::arg("samples"), py::arg("seed"), py::arg("jobs"),
        py::arg("shard"));
  m.def("read_field_trace", &read_trace, py::arg("path"), py::arg("options"));
  m.def("field", &field, py::arg("path"), py::arg("options"), py::arg("t_from"), py::arg("t_to"), py::arg("pistons"),
        py::arg("speed_rpm"), py::arg("event_threshold"));
  m.def("analyse_oscillation", &oscillation, py::arg("t"), py::arg("y"), py::arg("t_from"), py::arg("t_to"));
  m.def("fit", &fit, py::arg("scenario"), py::arg("trace"), py::arg("options"), py::arg("free"),
        py::arg("max_iterations"));
  m.def("parameters", &parameters);
  m.def("convert", &convert, py::arg("value"), py::arg("from_unit"), py::arg("to_unit"));
  m.attr("safety_notice") = safety_notice_full;
  m.attr("safety_notice_short") = safety_notice_short;
}
