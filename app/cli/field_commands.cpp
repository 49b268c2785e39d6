// swashtune-cli field and fit (see field_commands.hpp).
#include "field_commands.hpp"

#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <iostream>
#include <optional>
#include <string>
#include <vector>

#include "shown_units.hpp"
#include "study_loading.hpp"
#include "swashtune/atomic_file.hpp"
#include "swashtune/datasheet.hpp"
#include "swashtune/field_analysis.hpp"
#include "swashtune/field_trace.hpp"
#include "swashtune/fit.hpp"
#include "swashtune/parameters.hpp"
#include "swashtune/results_io.hpp"
#include "swashtune/safety.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/units.hpp"

namespace swashtune::cli {

namespace {

// Options as written; every quantity carries its unit and is converted when
// the command runs, so a message can name the option.
struct TraceFlags {
  std::optional<std::string> time_column, pressure_column, control_column, load_column, flow_column, speed_column;
  std::optional<std::string> time_unit, pressure_unit, flow_unit;
  std::optional<std::string> rate, atmosphere;
};

void add_trace_flags(CLI::App* c, TraceFlags& f) {
  c->add_option("--time-column", f.time_column, "Time column: header name or 1-based number");
  c->add_option("--pressure-column", f.pressure_column, "Pump outlet pressure column: header name or 1-based number");
  c->add_option("--control-column", f.control_column, "Control pressure column (\"none\" to ignore one)");
  c->add_option("--load-column", f.load_column, "Load pressure column (\"none\" to ignore one)");
  c->add_option("--flow-column", f.flow_column, "Flow column (\"none\" to ignore one)");
  c->add_option("--speed-column", f.speed_column, "Shaft speed column (\"none\" to ignore one)");
  c->add_option("--time-unit", f.time_unit, "Unit of the time column, e.g. ms (default: from the header)");
  c->add_option("--pressure-unit", f.pressure_unit, "Unit of the pressure columns, e.g. psi, bar(a) (default: header)");
  c->add_option("--flow-unit", f.flow_unit, "Unit of the flow column, e.g. L/min");
  c->add_option("--rate", f.rate, "Sample rate for an index column or rows without time, e.g. 1kHz");
  c->add_option("--atmosphere", f.atmosphere,
                "Atmospheric pressure for absolute columns, e.g. 0.97bar (default: the file's, else 1.01325 bar)");
}

// A quantity option: "1800rpm", "0.97 bar"; a bare number is refused.
double quantity(const std::string& text, const std::string& option, const Dimension& d, const char* example) {
  Quantity q;
  try {
    q = parse_quantity_relaxed(text);
  } catch (const UnitError& e) {
    throw FieldTraceError(option + " \"" + text + "\": " + e.what() + "; e.g. " + option + " " + example);
  }
  if (!q.has_unit) throw FieldTraceError(option + " \"" + text + "\": give the unit, e.g. " + option + " " + example);
  if (q.unit.dimension != d)
    throw FieldTraceError(option + " \"" + text + "\": expected " + dimension_name(d) + ", e.g. " + option + " " +
                          example);
  return q.si();
}

FieldTraceOptions read_options(const TraceFlags& f) {
  FieldTraceOptions o;
  o.time_column = f.time_column;
  o.pressure_column = f.pressure_column;
  o.control_column = f.control_column;
  o.load_column = f.load_column;
  o.flow_column = f.flow_column;
  o.speed_column = f.speed_column;
  o.time_unit = f.time_unit;
  o.pressure_unit = f.pressure_unit;
  o.flow_unit = f.flow_unit;
  if (f.rate) o.sample_rate = quantity(*f.rate, "--rate", dim::time.power(-1), "1kHz");
  if (f.atmosphere) o.atmospheric_pressure = quantity(*f.atmosphere, "--atmosphere", dim::pressure, "0.97bar");
  return o;
}

std::string text_of(double v, const char* format) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, v);
  return buffer;
}

// Pressures in the report's unit system (--units), set when the command starts.
PressureUnit shown_pressure = pressure_unit(UnitSystem::metric);
std::string bar(double pa) {
  const double v = pa * shown_pressure.per_pascal;
  return text_of(v, std::abs(v) >= 1e4 ? "%.6g" : "%.2f") + " " + shown_pressure.name;
}
std::string ms(double s) { return text_of(s * 1e3, "%.4g") + " ms"; }
std::string secs(double s) { return text_of(s, "%.6g") + " s"; }

std::string at_clock(const FieldLayout& l, double t) {
  const std::string c = clock_time(l, t);
  return c.empty() ? secs(t) : secs(t) + " (" + c + ")";
}

void print_reading(const FieldReadReport& r) {
  const FieldLayout& l = r.layout;
  std::printf("%s: %zu rows", r.source.c_str(), r.rows);
  if (r.repeated > 0) std::printf(" (%zu kept)", r.kept);
  std::printf(" from %s to %s%s", at_clock(l, r.first_time).c_str(), at_clock(l, r.last_time).c_str(),
              r.stopped ? " (read as far as --to)" : "");
  if (r.nominal_interval > 0.0) std::printf(", every %s", ms(r.nominal_interval).c_str());
  std::printf("\n  time: %s", l.time_format.c_str());
  if (!l.time_header.empty()) std::printf(" from \"%s\"", l.time_header.c_str());
  if (l.sample_rate) std::printf(" at %.6g Hz (%s)", *l.sample_rate, l.sample_rate_source.c_str());
  std::printf("\n");
  for (FieldChannel c : kAllFieldChannels)
    if (l.has(c))
      std::printf("  %s: \"%s\" in %s%s\n", channel_name(c), l.header[index_of(c)].c_str(), l.unit[index_of(c)].c_str(),
                  l.absolute[index_of(c)] ? ", absolute (converted to gauge)" : "");
  if (!l.unused_columns.empty()) {
    std::printf("  not used:");
    for (std::size_t i = 0; i < l.unused_columns.size(); ++i)
      std::printf("%s \"%s\"", i ? "," : "", l.unused_columns[i].c_str());
    std::printf(" (choose with --pressure-column, --control-column, --load-column, --flow-column, --speed-column)\n");
  }
  for (const std::string& n : r.notes) std::printf("  note: %s\n", n.c_str());
  if (r.gaps > 0) {
    std::printf("  %zu gap(s) in the time:", r.gaps);
    for (const FieldGap& g : r.gap_list) std::printf(" line %zu (%s)", g.line, ms(g.to - g.from).c_str());
    std::printf("%s\n", r.gaps > r.gap_list.size() ? " ..." : "");
  }
}

std::string describe(const FieldStretch& s) {
  std::string out = to_string(s.verdict);
  const OscillationReport& o = s.oscillation;
  if (o.kind != OscillationKind::settled && s.verdict != FieldVerdict::too_short)
    out += text_of(o.frequency_hz, " at %.4g Hz") + ", " + bar(o.peak_to_peak) + " peak to peak" +
           text_of(o.damping_ratio, ", damping ratio %.3f");
  if (!s.why.empty()) out += " (" + s.why + ")";
  return out;
}

int print_analysis(const FieldAnalysis& a) {
  print_reading(a.reading);
  const FieldLayout& l = a.reading.layout;
  std::printf("analysed: %s to %s, %zu samples; mean %s, lowest %s, highest %s, noise %s\n",
              at_clock(l, a.from).c_str(), at_clock(l, a.to).c_str(), a.samples, bar(a.mean).c_str(),
              bar(a.minimum).c_str(), bar(a.maximum).c_str(), bar(a.noise).c_str());
  for (const std::string& n : a.notes) std::printf("  note: %s\n", n.c_str());
  const RippleReport& r = a.ripple;
  if (r.known) {
    std::printf("ripple: %g pistons at %g rpm (%s): pumping frequency %.1f Hz", r.pistons, r.speed_rpm,
                r.source.c_str(), r.nominal_hz);
    if (r.measured_hz > 0.0)
      std::printf(", found at %.2f Hz (shaft at %.0f rpm)", r.measured_hz, r.measured_hz * 60.0 / r.pistons);
    std::printf("; %s peak to peak", bar(r.peak_to_peak).c_str());
    if (!r.harmonics.empty()) {
      std::printf(" (harmonics");
      for (const RippleHarmonic& h : r.harmonics) std::printf(" %d: %s", h.order, bar(h.amplitude).c_str());
      std::printf(")");
    }
    std::printf("%s\n", r.removed ? "; removed before the event figures and the diagnosis" : "; not removed");
  } else {
    std::printf("ripple: not known (give --pistons and --speed, or --scenario, to measure and remove it)\n");
  }
  if (!r.note.empty()) std::printf("  note: %s\n", r.note.c_str());
  std::printf("events: %zu, a fall or rise of more than %s (%s)\n", a.events.size(), bar(a.event_threshold).c_str(),
              a.threshold_source.c_str());
  for (const FieldEvent& e : a.events) {
    const EventMetrics& f = e.figures;
    std::printf("  %d %s at %s: %s -> %s, peak %s (highest sample %s)", e.number, e.rise ? "rise" : "fall",
                at_clock(l, e.time).c_str(), bar(f.initial_discharge_pressure).c_str(),
                bar(f.final_discharge_pressure).c_str(), bar(f.peak_discharge_pressure).c_str(),
                bar(e.highest_sample).c_str());
    if (f.overshoot_percent) std::printf(", overshoot %.1f %%", *f.overshoot_percent);
    if (f.undershoot_percent)
      std::printf(", lowest %s, undershoot %.1f %%", bar(e.lowest).c_str(), *f.undershoot_percent);
    if (f.settling_time) std::printf(", settling %s (band +-%s)", ms(*f.settling_time).c_str(), bar(f.band).c_str());
    if (!f.note.empty()) std::printf(", %s", f.note.c_str());
    std::printf("%s\n", e.window_capped ? " [window cut at the longest piece]" : "");
  }
  // Consecutive pieces of one stretch that say the same are one line.
  std::printf("pressure:\n");
  for (std::size_t i = 0; i < a.stretches.size();) {
    const FieldStretch& s = a.stretches[i];
    std::size_t j = i + 1, samples = s.samples;
    const auto same = [&](const FieldStretch& u) {
      const double f = s.oscillation.frequency_hz, g = u.oscillation.frequency_hz;
      return u.what.size() > 12 && u.what.compare(u.what.size() - 12, 12, " (continued)") == 0 &&
             u.verdict == s.verdict && std::abs(f - g) <= 0.03 * std::max(f, g);
    };
    while (j < a.stretches.size() && same(a.stretches[j])) samples += a.stretches[j++].samples;
    std::printf("  %s, %s to %s (%zu samples%s): %s\n", s.what.c_str(), secs(s.from).c_str(),
                secs(a.stretches[j - 1].to).c_str(), samples,
                j - i > 1 ? (", " + std::to_string(j - i) + " pieces").c_str() : "", describe(s).c_str());
    i = j;
  }
  std::printf("%s\n", safety_notice_recording);
  return 0;
}

std::vector<std::string> split_list(const std::string& text) {
  std::vector<std::string> out;
  std::string rest = text;
  while (!rest.empty()) {
    const auto comma = rest.find(',');
    out.push_back(rest.substr(0, comma));
    rest = comma == std::string::npos ? "" : rest.substr(comma + 1);
  }
  return out;
}

}  // namespace

struct FieldCommands::Options {
  CLI::App* field = nullptr;
  CLI::App* fit = nullptr;
  TraceFlags trace;
  std::string trace_path, scenario_path, free_keys, fitted_path, fitted_trace_path;
  int starts = FitOptions{}.starts;
  std::optional<std::string> from, to, event_threshold, speed, targets, valve_time;
  std::optional<double> pistons;
  bool json = false;
  std::string units = "metric";
};

FieldCommands::FieldCommands(CLI::App& app) : o_(std::make_unique<Options>()) {
  Options& o = *o_;
  o.field = app.add_subcommand("field", "Analyse a pressure trace recorded on a machine: events, ripple, hunting");
  o.field->add_option("TRACE", o.trace_path, "CSV file: time and pressure columns (comma, semicolon or tab)")
      ->required();
  o.field->add_option("--from", o.from, "Analyse from this time, e.g. 100ms, or a time of day, e.g. 14:02:07.5");
  o.field->add_option("--to", o.to, "Analyse up to this time (default: the end)");
  o.field->add_option("--event-threshold", o.event_threshold,
                      "A fall or rise larger than this is an event, e.g. 20bar (default: 5 % of the highest pressure)");
  o.field->add_option("--scenario", o.scenario_path, "Take the pump's piston count and speed from this scenario");
  o.field->add_option("--pistons", o.pistons, "Number of pistons, for the pumping frequency (ripple)");
  o.field->add_option("--speed", o.speed, "Shaft speed, e.g. 1800rpm");
  o.field->add_flag("--json", o.json, "Print JSON (SI)");
  o.field->add_option("--units", o.units, "Units of the report: si, metric or us")->capture_default_str();
  add_trace_flags(o.field, o.trace);

  o.fit = app.add_subcommand("fit",
                             "Estimate parameters so the simulated pressure reproduces a recorded trace, or so "
                             "the pump meets the figures of its data sheet (--target)");
  o.fit
      ->add_option("SCENARIO", o.scenario_path,
                   "Scenario that reproduces the recording's events (its time is the trace's)")
      ->required();
  o.fit->add_option("--trace", o.trace_path, "Recorded trace (CSV)");
  o.fit->add_option("--target", o.targets,
                    "Instead of a trace: data-sheet figures to meet, e.g. "
                    "off_stroke=35ms,on_stroke=90ms,droop=3% (also deadhead, cut_in, peak; FIGURE=VALUE+-TOL "
                    "gives a tolerance, else 10 % for times and droop, 1 % for pressures)");
  o.fit->add_option("--valve-time", o.valve_time,
                    "With --target: the load valve closes and reopens in this time in the data-sheet test "
                    "(default 5ms); match the data sheet's test conditions");
  o.fit
      ->add_option("--free", o.free_keys,
                   "Parameters to estimate, comma-separated, e.g. line.volume,fluid.air_fraction")
      ->required();
  o.fit->add_option("--out", o.fitted_path, "Also write the scenario with the fitted values to this file");
  o.fit
      ->add_option("--starts", o.starts,
                   "Search from this many starts (the scenario's values and others spread "
                   "over each parameter's span); 1 searches once")
      ->capture_default_str()
      ->check(CLI::Range(1, 50));
  o.fit->add_option("--fitted-trace", o.fitted_trace_path,
                    "Write the recording and the fitted pressure at its samples to this CSV, to plot one over "
                    "the other");
  o.fit->add_flag("--json", o.json, "Print JSON (SI)");
  o.fit->add_option("--units", o.units, "Units of the report: si, metric or us")->capture_default_str();
  add_trace_flags(o.fit, o.trace);
}

FieldCommands::~FieldCommands() = default;

bool FieldCommands::chosen() const { return o_->field->parsed() || o_->fit->parsed(); }

namespace {

int field_command(FieldCommands& self, const std::string& path, const TraceFlags& flags,
                  const std::optional<std::string>& from, const std::optional<std::string>& to,
                  const std::optional<std::string>& threshold, const std::string& scenario_path,
                  std::optional<double> pistons, const std::optional<std::string>& speed, bool json) {
  (void)self;
  const FieldTraceOptions read = read_options(flags);
  FieldAnalysisOptions options;
  // A time of day needs the file's first stamp: read its layout first.
  const bool clock = (from && from->find(':') != std::string::npos) || (to && to->find(':') != std::string::npos);
  FieldLayout layout;
  if (clock) layout = scan_field_trace(path, read, [](const FieldRow&) { return false; }).layout;
  if (from) options.from = parse_time_option(*from, "--from", clock ? &layout : nullptr);
  if (to) options.to = parse_time_option(*to, "--to", clock ? &layout : nullptr);
  if (threshold) options.event_threshold = quantity(*threshold, "--event-threshold", dim::pressure, "20bar");
  if (!scenario_path.empty()) {
    const Scenario s = load_study(scenario_path);
    options.speed = s.parameters.speed;
    if (const ParameterSpec* p = find_parameter("pump.pistons")) options.pistons = p->get(s.parameters);
    options.ripple_source = scenario_path;
  }
  if (pistons) {
    options.pistons = *pistons;
    options.ripple_source = "--pistons";
  }
  if (speed) {
    options.speed =
        quantity(*speed, "--speed", dim::rotational_speed, "1800rpm") * 60.0 / (2.0 * 3.14159265358979323846);
    options.ripple_source = options.ripple_source.empty() || options.ripple_source == "--pistons"
                                ? (pistons ? "--pistons, --speed" : "--speed")
                                : options.ripple_source + ", --speed";
  }
  if (!scenario_path.empty() && !options.pistons)
    throw FieldTraceError(scenario_path + ": the scenario gives no piston count (pump.pistons); give --pistons");
  const FieldAnalysis a = analyse_field_file(path, read, options);
  if (json) {
    std::cout << field_analysis_json(a);
    return 0;
  }
  return print_analysis(a);
}

int fit_command(const std::string& scenario_path, const std::string& trace_path, const TraceFlags& flags,
                const std::string& free, bool json, const std::string& out_path, const std::string& fitted_trace_path,
                int starts, UnitSystem units) {
  const Scenario scenario = load_study(scenario_path);
  const FieldTrace trace = read_field_trace(trace_path, read_options(flags));
  FitOptions options;
  options.free_keys = split_list(free);
  options.starts = starts;
  const bool terminal = ::isatty(::fileno(stderr)) != 0;  // progress only where a person watches
  const FitResult fit = fit_to_trace(scenario, trace, options, [terminal](int simulations, double rms) {
    if (terminal) std::fprintf(stderr, "\rfit: %d simulations, rms residual %s   ", simulations, bar(rms).c_str());
    return true;
  });
  if (terminal) std::fprintf(stderr, "\n");
  if (!out_path.empty()) write_file_atomically(out_path, scenario_to_toml(fit.fitted));
  if (!fitted_trace_path.empty()) write_file_atomically(fitted_trace_path, fit_trace_csv(fit));
  if (json) {
    std::cout << fit_json(fit);
    return 0;
  }
  std::printf("fit of %s to %s (%d samples, %d simulations): %s\n", scenario_path.c_str(), trace.source.c_str(),
              fit.samples, fit.simulations, fit.message.c_str());
  for (const FittedParameter& p : fit.parameters) {
    const ShownUnit u = parameter_unit(*find_parameter(p.key), units);
    std::printf("  %-32s %s -> %s +- %s%s%s\n", p.key.c_str(), u.format(p.initial).c_str(), u.format(p.value).c_str(),
                u.format(p.standard_error, 2).c_str(), p.note.empty() ? "" : "  (",
                p.note.empty() ? "" : (p.note + ")").c_str());
  }
  std::printf("rms residual %s (was %s); noise of the recording %s\n", bar(fit.rms).c_str(),
              bar(fit.initial_rms).c_str(), bar(fit.noise).c_str());
  if (!fit.starts_note.empty()) std::printf("starts: %s\n", fit.starts_note.c_str());
  if (!fit.cancelled) std::printf("verdict: %s\n", fit.verdict_text.c_str());
  std::printf("%s\n", safety_notice_recording);
  return 0;
}

int datasheet_fit_command(const std::string& scenario_path, const std::string& targets,
                          const std::optional<std::string>& valve_time, const std::string& free, bool json,
                          const std::string& out_path, int starts, UnitSystem units) {
  const Scenario scenario = load_study(scenario_path);
  DataSheetFitOptions options;
  options.targets = parse_targets(targets, "--target");
  options.free_keys = split_list(free);
  options.starts = starts;
  if (valve_time) options.test.valve_time = quantity(*valve_time, "--valve-time", dim::time, "5ms");
  const bool terminal = ::isatty(::fileno(stderr)) != 0;
  const DataSheetFitResult fit = fit_to_datasheet(scenario, options, [terminal](int tests, double miss) {
    if (terminal) std::fprintf(stderr, "\rfit: %d data-sheet tests, rms miss %.3g tolerances   ", tests, miss);
    return true;
  });
  if (terminal) std::fprintf(stderr, "\n");
  if (!out_path.empty()) write_file_atomically(out_path, scenario_to_toml(fit.fitted));
  if (json) {
    std::cout << datasheet_fit_json(fit);
    return 0;
  }
  std::printf("fit of %s to data-sheet figures (%d tests, valve %.3g ms): %s\n", scenario_path.c_str(),
              fit.simulations, 1e3 * fit.test.valve_time, fit.message.c_str());
  for (const FittedParameter& p : fit.parameters) {
    const ShownUnit u = parameter_unit(*find_parameter(p.key), units);
    std::printf("  %-32s %s -> %s +- %s%s%s\n", p.key.c_str(), u.format(p.initial).c_str(), u.format(p.value).c_str(),
                u.format(p.standard_error, 2).c_str(), p.note.empty() ? "" : "  (",
                p.note.empty() ? "" : (p.note + ")").c_str());
  }
  const auto shown = [&](Figure f, const std::optional<double>& v) -> std::string {
    if (!v) return "not reached";
    char text[64];
    if (f == Figure::off_stroke || f == Figure::on_stroke)
      std::snprintf(text, sizeof text, "%.1f ms", 1e3 * *v);
    else if (f == Figure::droop)
      std::snprintf(text, sizeof text, "%.2f %%", 100.0 * *v);
    else
      return bar(*v);
    return text;
  };
  std::printf("  %-12s %-22s %-14s %-14s %s\n", "figure", "target +- tolerance", "at the start", "fitted", "");
  for (const FigureResult& r : fit.figures) {
    const Figure f = r.target.figure;
    const std::string target = shown(f, r.target.value) + " +- " + shown(f, r.target.tolerance);
    std::printf("  %-12s %-22s %-14s %-14s %s\n", key_of(f), target.c_str(), shown(f, r.initial).c_str(),
                shown(f, r.achieved).c_str(), r.met ? "met" : "NOT MET");
  }
  for (const std::string& u : fit.undetermined) std::printf("left open: %s\n", u.c_str());
  if (!fit.starts_note.empty()) std::printf("starts: %s\n", fit.starts_note.c_str());
  if (!fit.cancelled) std::printf("verdict: %s\n", fit.verdict_text.c_str());
  std::printf("%s\n", safety_notice_short);
  return 0;
}

}  // namespace

int FieldCommands::run() {
  Options& o = *o_;
  const UnitSystem units = units_option(o.units);
  shown_pressure = pressure_unit(units);
  if (o.field->parsed())
    return field_command(*this, o.trace_path, o.trace, o.from, o.to, o.event_threshold, o.scenario_path, o.pistons,
                         o.speed, o.json);
  if (o.targets && !o.trace_path.empty())
    throw FieldTraceError("fit: give either --trace (a recording) or --target (data-sheet figures), not both");
  if (!o.targets && o.trace_path.empty())
    throw FieldTraceError("fit: give --trace RECORDING.csv, or --target FIGURES for data-sheet figures "
                          "(e.g. --target off_stroke=35ms,on_stroke=90ms,droop=3%)");
  if (o.valve_time && !o.targets) throw FieldTraceError("fit: --valve-time belongs to a data-sheet fit (--target)");
  if (o.targets) {
    if (!o.fitted_trace_path.empty())
      throw FieldTraceError("fit: --fitted-trace needs a recording (--trace); a data-sheet fit has none");
    return datasheet_fit_command(o.scenario_path, *o.targets, o.valve_time, o.free_keys, o.json, o.fitted_path,
                                 o.starts, units);
  }
  return fit_command(o.scenario_path, o.trace_path, o.trace, o.free_keys, o.json, o.fitted_path, o.fitted_trace_path,
                     o.starts, units);
}

}  // namespace swashtune::cli
