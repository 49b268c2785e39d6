// swashtune-cli: argument parsing and wiring only; everything numeric is in core.
#include <unistd.h>

#include <CLI/CLI.hpp>
#include <cerrno>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <iostream>
#include <memory>
#include <new>
#include <optional>
#include <set>
#include <stdexcept>
#include <string>
#include <type_traits>

#include "field_commands.hpp"
#include "shown_units.hpp"
#include "study_loading.hpp"
#include "tuning_commands.hpp"
#include "swashtune/analysis.hpp"
#include "swashtune/atomic_file.hpp"
#include "swashtune/field_trace.hpp"
#include "swashtune/fit.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/oscillation.hpp"
#include "swashtune/plausibility.hpp"
#include "swashtune/results_io.hpp"
#include "swashtune/safety.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/simulator.hpp"
#include "swashtune/sweep.hpp"
#include "swashtune/units.hpp"
#include "swashtune/version.hpp"

namespace {

using namespace swashtune;

constexpr int exit_ok = 0;
constexpr int exit_bad_input = 2;
constexpr int exit_solver_failed = 3;
constexpr int exit_out_of_memory = 4;
// `stability` runs a scenario with dry friction to show its oscillation, up to this long.
constexpr double max_guide_run_duration = 60.0;  // s simulated

using cli::length_unit;
using cli::parameter_unit;
using cli::pressure_unit;
using cli::PressureUnit;
using cli::ShownUnit;
using cli::units_option;

using cli::load_study;
using cli::strict_input;

std::string optional_text(const std::optional<double>& v, const char* format) {
  if (!v) return "none";
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, *v);
  return buffer;
}

// One line per event: the figures that exist, and in words why the others do not.
void print_event(const EventMetrics& m, const PressureUnit& pu) {
  std::string line = "  event at " + optional_text(m.time, "%.4g") + " s on " + m.target + ": peak " +
                     optional_text(m.peak_discharge_pressure * pu.per_pascal, "%.1f") + " " + pu.name;
  if (m.overshoot_percent) line += ", overshoot " + optional_text(m.overshoot_percent, "%.1f") + " %";
  if (m.undershoot_percent) line += ", undershoot " + optional_text(m.undershoot_percent, "%.1f") + " %";
  if (m.settling_time)
    line += ", settling " + optional_text(*m.settling_time * 1e3, "%.1f") + " ms (band +-" +
            optional_text(m.band * pu.per_pascal, "%.3g") + " " + pu.name + ")";
  if (!m.note.empty()) line += ", " + m.note;
  if (m.swash_response_time)
    line += ", swash 90 % in " + optional_text(*m.swash_response_time * 1e3, "%.1f") + " ms";
  else
    line += ", swash does not move";
  if (m.swash_travel_time) line += " (10-90 % in " + optional_text(*m.swash_travel_time * 1e3, "%.1f") + " ms)";
  std::printf("%s\n", line.c_str());
}

int run_command(const std::string& scenario_path, const std::string& out_dir, const std::string& units_name) {
  const auto units = parse_unit_system(units_name);
  if (!units) {
    std::cerr << "swashtune-cli run: --units: expected si, metric or us, got \"" << units_name << "\"\n";
    return exit_bad_input;
  }
  const Scenario scenario = load_study(scenario_path);
  // Both files are written into a new folder beside out_dir, the trace
  // streaming while it is simulated (memory stays bounded for runs of hours),
  // and that folder takes out_dir's place only when the run has succeeded:
  // a reader sees the earlier pair or the new one, never a mix.
  std::error_code ec;
  const bool had_results = std::filesystem::exists(std::filesystem::path(out_dir) / "summary.json", ec);
  long long samples = 0;
  RunResult result;
  std::vector<EventMetrics> metrics;
  try {
    ResultFolder results(out_dir, {"trace.csv", "summary.json"});
    StreamingFile trace_file(results.staged("trace.csv"), results.shown("trace.csv"));
    const TraceRowFormatter rows(*units, scenario.parameters);
    std::string pending = rows.header();
    RunOptions options;
    options.max_trace_samples = run_kept_trace_samples;
    options.stream = [&](const Sample& s) {
      rows.append(pending, s);
      ++samples;
      if (pending.size() > (1u << 20)) {
        trace_file.write(pending);
        pending.clear();
      }
    };
    result = run_scenario(scenario, options);
    metrics = event_metrics(scenario, result);
    trace_file.write(pending);
    trace_file.commit();
    write_file_atomically(results.staged("summary.json"), summary_json(scenario, result, metrics),
                          results.shown("summary.json"));
    results.commit();
  } catch (const FileError& e) {
    throw FileError(std::string(e.what()) + (had_results ? "; " + out_dir + " still holds the earlier run's results"
                                                         : "; nothing was written"));
  }

  const PressureUnit pu = pressure_unit(*units);
  std::printf("%s: %lld samples written to %s\n", scenario.name.c_str(), samples, out_dir.c_str());
  if (!result.start.converged)
    std::printf("note: no steady state found (the loop may hunt); the run starts from the state reached after %.3g s\n",
                result.start.simulated_time);
  std::printf("peak discharge pressure %.1f %s\n", result.peak_discharge_pressure * pu.per_pascal, pu.name);
  for (const EventMetrics& m : metrics) print_event(m, pu);
  // Cautions end in the safety notice themselves.
  const std::vector<std::string> cautions = peak_cautions(scenario, result);
  for (const std::string& caution : cautions) std::printf("%s\n", caution.c_str());
  const Sample& last = result.final_sample;
  std::printf("final: %.1f %s, pump flow %.2f L/min, swash %.3f deg\n",
              last.x[state::discharge_pressure] * pu.per_pascal, pu.name, last.pump_flow * 6e4,
              last.x[state::swash_angle] * 180.0 / pi);
  const SolverStats& s = result.stats;
  std::printf("solver: %lld steps, %lld rejected, %lld rhs, %lld jacobians, %lld stop events, %.3f s wall\n", s.steps,
              s.rejected_steps, s.rhs_evaluations, s.jacobian_evaluations, s.stop_events, s.wall_time_s);
  if (cautions.empty()) std::printf("%s\n", safety_notice_short);
  return exit_ok;
}

int check_command(const std::string& scenario_path, bool json) {
  const Scenario scenario = load_study(scenario_path);
  if (json) {
    std::cout << scenario_to_json(scenario);
    return exit_ok;
  }
  std::printf("%s: valid scenario \"%s\", %.6g s, %zu events\n", scenario_path.c_str(), scenario.name.c_str(),
              scenario.settings.duration, scenario.events.size());
  const ModelParameters defaults = default_parameters();
  for (const ParameterSpec& spec : parameter_registry()) {
    const double value = spec.get(scenario.parameters);
    if (value != spec.get(defaults))
      std::printf("  %-36s %-12.6g %s (default %.6g)\n", std::string(spec.key).c_str(), value,
                  std::string(spec.unit).c_str(), spec.get(defaults));
  }
  return exit_ok;
}

ModelParameters with_opening(const Scenario& scenario, const std::optional<double>& opening) {
  ModelParameters p = scenario.parameters;
  if (opening) {
    const ParameterSpec& spec = *find_parameter("load.opening");
    if (!spec.range.contains(*opening))
      throw ScenarioError("--opening: must be " + spec.range.describe(spec.unit) + ", got " + std::to_string(*opening));
    p.opening = *opening;
  }
  return p;
}

void print_stability(const StabilityReport& r, UnitSystem units) {
  const PressureUnit pu = pressure_unit(units);
  const PressureUnit lu = length_unit(units);
  const State& x = r.operating_point.condition.x;
  const StopModes& modes = r.operating_point.condition.modes;
  std::printf("Operating point at load opening %.4g (%s%s):\n", r.load_opening, to_string(r.operating_point.method),
              r.operating_point.converged ? "" : ", NOT converged");
  std::printf("  discharge %.2f %s, control %.2f %s\n", x[state::discharge_pressure] * pu.per_pascal, pu.name,
              x[state::control_pressure] * pu.per_pascal, pu.name);
  std::printf("  swash %.4f deg (%s), spool %.*f %s (%s)\n", x[state::swash_angle] * 180.0 / pi,
              stop_name(modes.swash, true), units == UnitSystem::metric ? 5 : 6,
              x[state::spool_position] * lu.per_pascal, lu.name, stop_name(modes.spool, false));
  std::printf("Closed-loop modes:\n  %14s %14s %12s %12s %10s\n", "Re [1/s]", "Im [rad/s]", "f_n [Hz]", "f_d [Hz]",
              "damping");
  for (const Mode& m : r.modes)
    std::printf("  %14.6g %14.6g %12.5g %12.5g %10.4f\n", m.eigenvalue.real(), m.eigenvalue.imag(),
                m.natural_frequency_hz, m.damped_frequency_hz, m.damping_ratio);
  if (r.dominant)
    std::printf("Dominant oscillation: %.4g Hz, damping ratio %.4f\n", r.dominant->damped_frequency_hz,
                r.dominant->damping_ratio);
  else
    std::printf("Dominant oscillation: none (no oscillatory mode)\n");
  const LoopMargins& m = r.margins;
  if (r.model.loop_active) {
    std::printf("Displacement loop, opened at the swash angle in the pump flow%s:\n",
                r.margins_apply ? "" : " (the margins do NOT apply here, see below)");
    std::printf(
        "  gain margin %s dB at %s Hz, phase margin %s deg at %s Hz, modulus margin %s at %s Hz\n",
        optional_text(m.gain_margin_db, "%.2f").c_str(), optional_text(m.phase_crossover_frequency_hz, "%.4g").c_str(),
        optional_text(m.phase_margin_deg, "%.1f").c_str(), optional_text(m.crossover_frequency_hz, "%.4g").c_str(),
        optional_text(m.modulus_margin, "%.3f").c_str(), optional_text(m.modulus_margin_frequency_hz, "%.4g").c_str());
    std::printf("  gain crossovers (|L| = 1):");
    if (m.gain_crossovers.empty()) std::printf(" none");
    for (const GainCrossover& g : m.gain_crossovers)
      std::printf(" %.4g Hz (phase margin %.1f deg);", g.frequency_hz, g.phase_margin_deg);
    std::printf("\n  phase crossovers (L on the negative real axis):");
    if (m.phase_crossovers.empty()) std::printf(" none");
    for (const PhaseCrossover& c : m.phase_crossovers)
      std::printf(" %.4g Hz (gain margin %.2f dB);", c.frequency_hz, c.gain_margin_db);
    std::printf("\n");
  }
  std::printf("Unstable poles: %d of the opened loop, %d of the closed loop\n", r.open_loop_unstable_poles,
              r.closed_loop_unstable_poles);
  std::printf("Stable: %s\n", r.stable ? "yes" : "NO (an eigenvalue has a non-negative real part)");
  std::printf("In plain words:\n");
  for (const std::string& line : r.explanation) std::printf("  - %s\n", line.c_str());
}

int stability_command(const std::string& scenario_path, const std::optional<double>& opening, bool json,
                      const std::vector<std::string>& map_axes, const std::string& bode_path,
                      const std::string& units_name) {
  const auto units = parse_unit_system(units_name);
  if (!units) throw ScenarioError("--units: expected si, metric or us, got \"" + units_name + "\"");
  const Scenario scenario = load_study(scenario_path);
  const ModelParameters p = with_opening(scenario, opening);
  if (!map_axes.empty()) {
    if (map_axes.size() != 2) throw ScenarioError("--map: give exactly two axes, KEY=FROM:TO:N KEY2=FROM:TO:N");
    const Axis x = parse_axis(map_axes[0]);
    const Axis y = parse_axis(map_axes[1]);
    const StabilityMap map = stability_map(p, scenario.settings, x, y);
    if (json) {
      std::cout << stability_map_json(map);
      return exit_ok;
    }
    // The axes' values in the parameters' display units of the chosen system.
    const ShownUnit xu = parameter_unit(*x.spec, *units);
    const ShownUnit yu = parameter_unit(*y.spec, *units);
    const auto heading = [](const Axis& a, const ShownUnit& u) {
      return std::string(a.spec->key) + (u.name.empty() ? "" : " [" + u.name + "]");
    };
    std::printf("%-28s %-28s %7s %8s %10s %10s %8s %10s %10s\n", heading(x, xu).c_str(), heading(y, yu).c_str(),
                "stable", "applies", "GM [dB]", "PM [deg]", "modulus", "f_d [Hz]", "damping");
    for (const MapPoint& m : map.points)
      std::printf("%-28.6g %-28.6g %7s %8s %10s %10s %8s %10s %10s\n", m.x * xu.per_stored, m.y * yu.per_stored,
                  m.solved ? (m.stable ? "yes" : "NO") : "?", m.margins_apply ? "yes" : "no",
                  optional_text(m.gain_margin_db, "%.2f").c_str(), optional_text(m.phase_margin_deg, "%.1f").c_str(),
                  optional_text(m.modulus_margin, "%.3f").c_str(),
                  optional_text(m.dominant_frequency_hz, "%.4g").c_str(),
                  optional_text(m.dominant_damping_ratio, "%.4f").c_str());
    std::printf("(margins that do not apply are not stability margins: see stability without --map)\n");
    std::printf("%s\n", safety_notice_short);
    return exit_ok;
  }
  const StabilityReport report = analyse_stability(p, scenario.settings);
  if (!bode_path.empty())
    write_file_atomically(bode_path,
                          bode_csv(loop_bode(report.model, margin_search_low_hz, margin_search_high_hz, 601)));
  // With dry friction no linear model describes what the pump does: a run of
  // the scenario's events, read by the oscillation analysis, is the guide.
  const bool run_guide =
      report.dry_friction_dominates && !scenario.events.empty() && scenario.settings.duration <= max_guide_run_duration;
  std::vector<EventMetrics> guide;
  if (run_guide) {
    RunOptions options;
    options.max_trace_samples = 1024;
    guide = event_metrics(scenario, run_scenario(scenario, options));
  }
  if (json) {
    std::cout << stability_json(report, run_guide ? &guide : nullptr);
    return exit_ok;
  }
  print_stability(report, *units);
  if (run_guide) {
    const PressureUnit pu = pressure_unit(*units);
    std::printf("The run of this scenario's events (the better guide with dry friction):\n");
    for (const EventMetrics& m : guide) {
      const OscillationReport& o = m.oscillation;
      std::printf("  event at %.4g s on %s: %s", m.time, m.target.c_str(), to_string(o.kind));
      if (o.kind != OscillationKind::settled)
        std::printf(" at %.4g Hz, %.3g %s peak to peak", o.frequency_hz, o.peak_to_peak * pu.per_pascal, pu.name);
      std::printf("%s%s\n", m.note.empty() ? "" : "; ", m.note.c_str());
    }
  } else if (report.dry_friction_dominates) {
    std::printf(
        "Run the scenario (swashtune-cli run) and read each event's oscillation: with dry friction that is the "
        "better guide.\n");
  }
  std::printf("%s\n", safety_notice_short);
  return exit_ok;
}

int steady_command(const std::string& scenario_path, int points, bool json, const std::string& units_name) {
  const auto units = parse_unit_system(units_name);
  if (!units) throw ScenarioError("--units: expected si, metric or us, got \"" + units_name + "\"");
  if (points < 2 || points > 10000) throw ScenarioError("--points: must be from 2 to 10000");
  const Scenario scenario = load_study(scenario_path);
  const Characteristic ch = steady_characteristic(scenario.parameters, scenario.settings, points);
  if (json) {
    std::cout << characteristic_json(ch);
    return exit_ok;
  }
  const PressureUnit pu = pressure_unit(*units);
  const bool us = *units == UnitSystem::us;
  const double flow_factor = us ? convert(1.0, "m^3/s", "gpm") : convert(1.0, "m^3/s", "L/min");
  const char* flow_unit = us ? "gpm" : "L/min";
  const bool band = !ch.rising.empty();
  std::printf("%8s %14s %16s %16s %10s  %s", "opening", (std::string("pressure [") + pu.name + "]").c_str(),
              (std::string("pump flow [") + flow_unit + "]").c_str(),
              (std::string("load flow [") + flow_unit + "]").c_str(), "swash [deg]", "found by");
  if (band) std::printf("  %14s %15s", "rising p", "falling p");
  std::printf("\n");
  for (std::size_t i = 0; i < ch.points.size(); ++i) {
    const CharacteristicPoint& c = ch.points[i];
    std::printf("%8.4f %14.3f %16.3f %16.3f %10.4f  %-8s", c.load_opening, c.discharge_pressure * pu.per_pascal,
                c.pump_flow * flow_factor, c.load_flow * flow_factor, c.swash_angle * 180.0 / pi, to_string(c.method));
    if (band)
      std::printf("  %14.3f %15.3f", ch.rising[i].discharge_pressure * pu.per_pascal,
                  ch.falling[i].discharge_pressure * pu.per_pascal);
    std::printf("\n");
  }
  std::printf("deadhead pressure %.2f %s; cut-in pressure %s %s\n", ch.deadhead_pressure * pu.per_pascal, pu.name,
              ch.cut_in_pressure ? optional_text(*ch.cut_in_pressure * pu.per_pascal, "%.2f").c_str() : "none",
              pu.name);
  if (band)
    std::printf(
        "dry friction (%s) makes the characteristic a band: the pressure column is its middle; \"rising p\" is "
        "reached while the load closes slowly, \"falling p\" while it opens; at deadhead the two differ by %.2f %s "
        "(a gauge reading after a closing is that much above one after an opening)\n",
        listed_dry_friction(scenario.parameters).c_str(), *ch.deadhead_hysteresis * pu.per_pascal, pu.name);
  std::printf("%s\n", safety_notice_short);
  return exit_ok;
}

// The registry as a table: one place for every parameter's facts.
int parameters_command(bool markdown) {
  auto describe = [](const auto& spec) {
    std::string unit(spec.unit);
    if (spec.is_choice()) return spec.choices_text();
    return spec.is_flag() ? std::string("true or false") : spec.range.describe(unit);
  };
  auto default_text = [](const auto& spec) {
    if (spec.is_flag()) return std::string(spec.default_value != 0.0 ? "true" : "false");
    if (const auto word = spec.word_for(spec.default_value)) return "\"" + std::string(*word) + "\"";
    char buffer[32];
    std::snprintf(buffer, sizeof buffer, "%.6g", spec.default_value);
    return std::string(buffer);
  };
  if (markdown) {
    std::printf("# Parameters and settings\n\n");
    std::printf("Generated by `swashtune-cli parameters --markdown` from the registry in core/src/parameters.cpp;\n");
    std::printf("do not edit by hand. Values are in the stored unit unless a unit is written with them.\n\n");
    std::printf("`sensitivity` varies the parameters with a change in the last column and reports each figure's\n");
    std::printf("change for that change.\n\n");
    std::printf("| key | symbol | unit | default | valid range | meaning | sensitivity |\n|---|---|---|---|---|---|---|\n");
  }
  auto tuning_text = [](const auto& spec) -> std::string {
    if constexpr (std::is_same_v<std::decay_t<decltype(spec)>, ParameterSpec>) {
      if (!spec.tunable) return "";
      char buffer[48];
      if (spec.tuning_relative)
        std::snprintf(buffer, sizeof buffer, "+%.0f %%", 100.0 * spec.tuning_change);
      else
        std::snprintf(buffer, sizeof buffer, "+%.3g %s", spec.tuning_change, std::string(spec.unit).c_str());
      return buffer;
    }
    return "";
  };
  auto print_all = [&](const auto& registry) {
    for (const auto& spec : registry) {
      if (markdown)
        std::printf("| `%s` | %s | %s | %s | %s | %s | %s |\n", std::string(spec.key).c_str(),
                    std::string(spec.symbol).c_str(), std::string(spec.unit).c_str(), default_text(spec).c_str(),
                    describe(spec).c_str(), std::string(spec.meaning).c_str(), tuning_text(spec).c_str());
      else
        std::printf("%-36s %-12s %-10s %s\n", std::string(spec.key).c_str(), default_text(spec).c_str(),
                    std::string(spec.unit).c_str(), std::string(spec.meaning).c_str());
    }
  };
  print_all(parameter_registry());
  print_all(setting_registry());
  return exit_ok;
}

// ---- sweep and merge ----------------------------------------------------------

struct SweepCommand {
  std::string scenario_path, shard, out_path;
  std::vector<std::string> vary;
  std::optional<std::size_t> samples;
  std::uint64_t seed = 1;
  int jobs = 1;
  bool resume = false;
  std::optional<double> opening;  // where the margins are taken
};

Sweep make_sweep(const SweepCommand& c) {
  return make_sweep(load_study(c.scenario_path), c.vary, c.samples, c.seed, c.opening);
}

// Rows go to the file as they finish, each flushed, so that a sweep stopped
// at any moment keeps its rows for --resume. Once every point is in, the
// file is rewritten sorted by index (atomically), which makes a finished
// sweep's file the same bytes however it was run.
int sweep_command(const SweepCommand& c) {
  try {
    if (c.jobs < 1 || c.jobs > 256) throw SweepError("--jobs: must be from 1 to 256");
    const Sweep sweep = make_sweep(c);
    const Shard shard = c.shard.empty() ? Shard{} : parse_shard(c.shard);
    std::vector<std::size_t> indices;
    for (std::size_t i = 0; i < sweep.size(); ++i)
      if (shard.contains(i)) indices.push_back(i);
    check_sweep_points(sweep, indices);

    std::set<std::size_t> done;
    bool fresh = true;
    std::error_code ec;
    if (std::filesystem::exists(c.out_path, ec)) {
      if (!c.resume)
        throw SweepError(c.out_path + ": already exists; add --resume to continue that sweep, or remove the file");
      const std::string text = read_file(c.out_path);
      const SweepTable table = parse_sweep_table(text, c.out_path);
      if (!table.header.empty()) {
        check_sweep_table(table, sweep, shard, c.out_path);
        for (const SweepTable::Line& row : table.rows) done.insert(row.index);
        fresh = false;
      }
      if (table.truncated) {  // drop the row a stopped run left half written
        const std::size_t complete = text.rfind('\n') == std::string::npos ? 0 : text.rfind('\n') + 1;
        std::filesystem::resize_file(c.out_path, complete, ec);
        if (ec) throw FileError(c.out_path + ": cannot cut off the partial last row: " + ec.message());
      }
    }
    std::vector<std::size_t> pending;
    for (std::size_t i : indices)
      if (!done.count(i)) pending.push_back(i);

    std::unique_ptr<std::FILE, int (*)(std::FILE*)> file(std::fopen(c.out_path.c_str(), fresh ? "wb" : "ab"),
                                                         &std::fclose);
    if (!file) throw FileError(c.out_path + ": cannot write: " + std::strerror(errno));
    const auto put = [&](const std::string& text) {
      if (std::fwrite(text.data(), 1, text.size(), file.get()) != text.size() || std::fflush(file.get()) != 0)
        throw FileError(c.out_path + ": cannot write: " + std::strerror(errno));
    };
    if (fresh) put(sweep_header(sweep) + "\n");

    const bool terminal = ::isatty(::fileno(stderr)) != 0;  // progress only where a person watches
    const auto started = std::chrono::steady_clock::now();
    std::size_t computed = 0, failed = 0, without_margins = 0;
    run_sweep(sweep, pending, c.jobs, [&](const SweepRow& row) {
      put(sweep_csv_line(row));
      ++computed;
      if (row.status != "ok") ++failed;
      if (row.status == "ok" && !row.margins_apply.value_or(false)) ++without_margins;
      if (terminal) {
        const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
        std::fprintf(stderr, "\rsweep: %zu/%zu points, %.1f points/s   ", done.size() + computed, indices.size(),
                     computed / std::max(seconds, 1e-9));
      }
    });
    if (terminal && computed > 0) std::fprintf(stderr, "\n");
    const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
    if (std::fclose(file.release()) != 0) throw FileError(c.out_path + ": cannot write: " + std::strerror(errno));

    const std::string unsorted = read_file(c.out_path);
    const SweepTable table = parse_sweep_table(unsorted, c.out_path);
    try {
      write_file_atomically(c.out_path, sorted_sweep_table(table.header, table.rows, c.out_path));
    } catch (const FileError& e) {
      char room[32];
      std::snprintf(room, sizeof room, "%.3g MB", unsorted.size() / 1e6);
      throw FileError(std::string(e.what()) + "\nEvery point of the sweep was computed and is in " + c.out_path +
                      " (rows in the order they finished); only the final rewrite sorted by index needs room (" + room +
                      " beside the file). Free that space and run the same command with --resume: it " +
                      "computes nothing and only sorts the file.");
    }

    std::printf("%s: %zu points", c.out_path.c_str(), indices.size());
    if (shard.count > 1) std::printf(" (shard %zu/%zu of %zu)", shard.part, shard.count, sweep.size());
    if (!done.empty()) std::printf(", %zu already done", done.size());
    std::printf(", %zu computed in %.3g s (%.3g points/s on %d thread%s)\n", computed, seconds,
                computed / std::max(seconds, 1e-9), c.jobs, c.jobs == 1 ? "" : "s");
    if (failed > 0) std::printf("note: %zu point(s) failed; their status column says why\n", failed);
    if (without_margins > 0)
      std::printf(
          "note: at %zu point(s) the margins do not apply (margins_apply false: the swashplate on a stop, "
          "an inner loop unstable by itself, or dry friction; `stability` says which), so their margin "
          "columns are empty%s\n",
          without_margins,
          c.opening ? "" : "; --opening S takes the margins at load opening S instead of the starting one");
    std::printf("%s\n", safety_notice_short);
    return exit_ok;
  } catch (const SweepError& e) {
    std::cerr << "swashtune-cli sweep: " << e.what() << "\n";
    return exit_bad_input;
  }
}

// Joins the parts of a sharded sweep into the table the whole sweep gives.
int merge_command(const std::string& out_path, const std::vector<std::string>& inputs) {
  try {
    std::string header;
    std::vector<SweepTable::Line> rows;
    for (const std::string& path : inputs) {
      SweepTable table = parse_sweep_table(read_file(path), path);
      if (table.header.empty()) throw SweepError(path + ": empty, not a sweep table");
      if (table.truncated)
        throw SweepError(path + ": ends in a partial row (its sweep was stopped); finish it with sweep --resume");
      if (header.empty()) header = table.header;
      if (table.header != header)
        throw SweepError(path + ": its header differs from " + inputs.front() + "'s; the parts are not of one sweep");
      rows.insert(rows.end(), table.rows.begin(), table.rows.end());
    }
    std::set<std::size_t> indices;
    for (const SweepTable::Line& row : rows) indices.insert(row.index);
    write_file_atomically(out_path, sorted_sweep_table(header, rows, "merge"));
    std::printf("%s: %zu points from %zu files\n", out_path.c_str(), indices.size(), inputs.size());
    if (!indices.empty() && *indices.rbegin() + 1 != indices.size())
      std::fprintf(stderr, "note: %zu points below index %zu are missing; is a part not finished or not given?\n",
                   *indices.rbegin() + 1 - indices.size(), *indices.rbegin());
    return exit_ok;
  } catch (const SweepError& e) {
    std::cerr << "swashtune-cli merge: " << e.what() << "\n";
    return exit_bad_input;
  }
}

// Allocation failure: no further allocation here (the message is static) and
// a documented exit status. Result files are untouched: they are replaced
// only after a complete run.
int out_of_memory(const CLI::App& app) {
  const char* command = "swashtune-cli";
  for (const CLI::App* sub : app.get_subcommands()) command = sub->get_name().c_str();
  std::fprintf(stderr,
               "swashtune-cli %s: out of memory; nothing was written over earlier results. Free memory, or make the "
               "job smaller (a shorter run or a longer sample_interval, fewer sweep points, a shorter recording).\n",
               command);
  if (std::strcmp(command, "sweep") == 0)
    std::fprintf(stderr, "The sweep's finished rows are kept in its file; --resume continues it.\n");
  return exit_out_of_memory;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"Swashtune: dynamic simulation of the control loop of pressure-compensated piston pumps"};
  app.set_version_flag("--version", std::string("swashtune-cli (Swashtune) ") + swashtune::version,
                       "Print the version and exit");
  app.require_subcommand(1);

  std::string scenario_path, out_dir, units_name = "metric";
  bool json = false;

  CLI::App* run = app.add_subcommand("run", "Simulate a scenario and write trace.csv and summary.json");
  run->add_option("SCENARIO", scenario_path, "Scenario file (TOML)")->required();
  run->add_option("--out", out_dir, "Folder for trace.csv and summary.json (created if missing)")->required();
  run->add_option("--units", units_name,
                  "Units of trace.csv: si, metric (bar, L/min, deg, mm) or us (psi, gpm, deg, in)")
      ->capture_default_str();

  CLI::App* check = app.add_subcommand("check", "Validate a scenario file and list what differs from the defaults");
  check->add_option("SCENARIO", scenario_path, "Scenario file (TOML)")->required();
  check->add_flag("--json", json, "Print the resolved scenario as JSON (stored units: SI, speed in rev/min)");

  std::optional<double> opening;
  std::vector<std::string> map_axes;
  std::string bode_path;
  int points = 21;
  CLI::App* stability =
      app.add_subcommand("stability", "Linearise at the steady operating point: modes, loop margins, stability");
  stability->add_option("SCENARIO", scenario_path, "Scenario file (TOML)")->required();
  stability->add_option("--opening", opening, "Load valve opening 0..1 (default: the scenario's initial opening)");
  stability->add_flag("--json", json, "Print JSON (SI), including the open-loop matrices A, B, C");
  stability->add_option("--map", map_axes, "Margins over a grid of two parameters: KEY=FROM:TO:N KEY2=FROM:TO:N")
      ->expected(2);
  stability->add_option("--bode", bode_path, "Also write the loop's Bode data (frequency, dB, deg) to this CSV file");
  stability->add_option("--units", units_name, "Units of the table: si, metric or us")->capture_default_str();

  CLI::App* steady = app.add_subcommand("steady", "Steady pressure-flow characteristic over load openings 0..1");
  steady->add_option("SCENARIO", scenario_path, "Scenario file (TOML)")->required();
  steady->add_option("--points", points, "Number of load openings from 0 to 1")->capture_default_str();
  steady->add_flag("--json", json, "Print JSON (SI)");
  steady->add_option("--units", units_name, "Units of the table: si, metric or us")->capture_default_str();

  cli::FieldCommands field_commands(app);  // field, fit
  cli::TuningCommands tuning_commands(app);  // sensitivity

  bool markdown = false;
  CLI::App* parameters =
      app.add_subcommand("parameters", "List every parameter and setting with unit, default and range");
  parameters->add_flag("--markdown", markdown, "Print a Markdown table (resources/parameters.md)");

  SweepCommand sweep_options;
  CLI::App* sweep =
      app.add_subcommand("sweep", "Run a scenario over a grid or Latin hypercube of parameters; one CSV row per point");
  sweep->add_option("SCENARIO", sweep_options.scenario_path, "Base scenario file (TOML)")->required();
  sweep
      ->add_option("--vary", sweep_options.vary,
                   "Parameter to vary, repeatable: KEY=FROM:TO:N on a grid (first one fastest), KEY=FROM:TO with "
                   "--samples; values may carry units")
      ->allow_extra_args(false);
  sweep->add_option("--samples", sweep_options.samples,
                    "Latin hypercube of this many points in the --vary ranges, instead of a grid");
  sweep->add_option("--seed", sweep_options.seed, "Seed of the Latin hypercube (same seed, same points)")
      ->capture_default_str();
  sweep->add_option("--jobs", sweep_options.jobs, "Points computed at once, on this many threads")
      ->capture_default_str();
  sweep->add_option("--shard", sweep_options.shard, "Only points with index % N == K-1 (K/N, 1-based), e.g. 3/16");
  sweep->add_flag("--resume", sweep_options.resume, "Continue the sweep in --out: keep its rows, compute the rest");
  sweep->add_option("--opening", sweep_options.opening,
                    "Take the loop margins at this load opening 0..1 (default: each point's starting opening)");
  sweep->add_option("--out", sweep_options.out_path, "CSV table written row by row, sorted by index when done")
      ->required();

  std::string merge_out;
  std::vector<std::string> merge_inputs;
  CLI::App* merge =
      app.add_subcommand("merge", "Join the CSV tables of a sweep's shards into one, sorted by point index");
  merge->add_option("OUT", merge_out, "Merged table (written atomically)")->required();
  merge->add_option("INPUTS", merge_inputs, "Tables written by sweep --shard")->required();

  for (CLI::App* command : {run, check, stability, steady, sweep})
    command->add_flag("--strict", strict_input,
                      "Treat a warning about the input (a legal but implausible value) as an error: exit 2");

  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    return app.exit(e) == 0 ? exit_ok : exit_bad_input;  // --version ends here too
  }

  try {
    if (*run) return run_command(scenario_path, out_dir, units_name);
    if (*check) return check_command(scenario_path, json);
    if (*parameters) return parameters_command(markdown);
    if (*stability) return stability_command(scenario_path, opening, json, map_axes, bode_path, units_name);
    if (*steady) return steady_command(scenario_path, points, json, units_name);
    if (field_commands.chosen()) return field_commands.run();
    if (tuning_commands.chosen()) return tuning_commands.run();
    if (*sweep) return sweep_command(sweep_options);
    if (*merge) return merge_command(merge_out, merge_inputs);
  } catch (const ScenarioError& e) {
    std::cerr << e.what() << "\n";
    return exit_bad_input;
  } catch (const FieldTraceError& e) {
    std::cerr << e.what() << "\n";
    return exit_bad_input;
  } catch (const std::invalid_argument& e) {
    std::cerr << e.what() << "\n";
    return exit_bad_input;
  } catch (const FileError& e) {
    std::cerr << e.what() << "\n";
    return exit_bad_input;
  } catch (const SolverError& e) {
    std::cerr << e.what() << "\n";
    return exit_solver_failed;
  } catch (const std::bad_alloc&) {
    return out_of_memory(app);
  } catch (const std::length_error&) {  // a size past what can be allocated
    return out_of_memory(app);
  } catch (const std::exception& e) {
    std::cerr << "internal error: " << e.what() << "\n";
    return 1;
  }
  return exit_bad_input;
}
