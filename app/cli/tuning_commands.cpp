#include "tuning_commands.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iostream>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include "shown_units.hpp"
#include "study_loading.hpp"
#include "swashtune/results_io.hpp"
#include "swashtune/safety.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/remedies.hpp"
#include "swashtune/sensitivity.hpp"

namespace swashtune::cli {
namespace {

std::optional<Response> response_of_key(const std::string& key) {
  for (Response r : all_responses)
    if (key == key_of(r)) return r;
  return std::nullopt;
}

std::string response_keys() {
  std::string out;
  for (Response r : all_responses) out += std::string(out.empty() ? "" : ", ") + key_of(r);
  return out;
}

// "PM deg", "off ms", "damping": the short name and the shown unit.
std::string column_heading(Response r, UnitSystem units) {
  const std::string unit = response_shown_unit(r, units);
  return std::string(heading_of(r)) + (unit.empty() ? "" : " " + unit);
}

std::string cell(const std::optional<double>& v, Response r, UnitSystem units, bool signed_change) {
  if (!v) return "-";
  char buffer[32];
  double x = response_shown(r, *v, units);
  if (signed_change && std::abs(x) < 1e-6) x = 0.0;  // below what the runs resolve
  std::snprintf(buffer, sizeof buffer, signed_change ? "%+.3g" : "%.4g", x);
  return buffer;
}

std::string cell_text(const std::optional<double>& v, double scale, const char* format) {
  if (!v) return "-";
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, format, *v * scale);
  return buffer;
}

}  // namespace

struct TuningCommands::Options {
  CLI::App* sensitivity = nullptr;
  CLI::App* remedies = nullptr;
  double least_damping = RemedyOptions{}.least_damping;
  std::string scenario_path;
  double opening = 0.0;
  bool json = false;
  bool no_runs = false;
  int jobs = static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  std::string rank = "damping";
  std::string units = "metric";
};

TuningCommands::TuningCommands(CLI::App& app) : o_(std::make_unique<Options>()) {
  Options& o = *o_;
  o.sensitivity = app.add_subcommand(
      "sensitivity", "How each tunable design parameter moves the margins, the least damped mode and the data-sheet "
                     "figures, at the present design");
  o.sensitivity->add_option("SCENARIO", o.scenario_path, "Scenario file (TOML)")->required();
  o.sensitivity
      ->add_option("--opening", o.opening,
                   "Load valve opening 0..1 at which the loop is linearised (default 0: deadhead, where the "
                   "compensator holds the pump)")
      ->capture_default_str();
  o.sensitivity->add_option("--rank", o.rank, "Order the parameters by their effect on this figure: " + response_keys())
      ->capture_default_str();
  o.sensitivity->add_option("--jobs", o.jobs, "Parameters worked on at once, on this many threads")
      ->capture_default_str();
  o.sensitivity->add_flag("--no-runs", o.no_runs,
                          "Only the linear figures (margins, least damped mode): no data-sheet runs");
  o.sensitivity->add_flag("--json", o.json, "Print JSON (SI)");
  o.sensitivity->add_option("--units", o.units, "Units of the table: si, metric or us")->capture_default_str();
  o.sensitivity->add_flag("--strict", strict_input,
                          "Treat a warning about the input (a legal but implausible value) as an error: exit 2");

  o.remedies = app.add_subcommand(
      "remedies", "For a pump that hunts: each single plant change with the smallest amount that stops it, ranked");
  o.remedies->add_option("SCENARIO", o.scenario_path, "Scenario file (TOML) of the pump that hunts")->required();
  o.remedies
      ->add_option("--opening", o.opening, "Load valve opening 0..1 at which the loop is judged (default 0: deadhead)")
      ->capture_default_str();
  o.remedies
      ->add_option("--damping", o.least_damping,
                   "Damping ratio of the least damped mode a remedy must reach")
      ->capture_default_str();
  o.remedies->add_option("--jobs", o.jobs, "Changes worked on at once, on this many threads")->capture_default_str();
  o.remedies->add_option("--units", o.units, "Units of the table: si, metric or us")->capture_default_str();
  o.remedies->add_flag("--strict", strict_input,
                       "Treat a warning about the input (a legal but implausible value) as an error: exit 2");
}

TuningCommands::~TuningCommands() = default;

bool TuningCommands::chosen() const { return o_->sensitivity->parsed() || o_->remedies->parsed(); }

namespace {

// The options both commands share.
void check_opening_and_jobs(double opening, int jobs) {
  if (!(opening >= 0.0 && opening <= 1.0))
    throw ScenarioError("--opening: must be from 0 to 1, got " + std::to_string(opening));
  if (jobs < 1) throw ScenarioError("--jobs: must be at least 1, got " + std::to_string(jobs));
}

int remedies_command(const std::string& path, double opening, double least_damping, int jobs, UnitSystem units) {
  check_opening_and_jobs(opening, jobs);
  if (!(least_damping >= 0.0 && least_damping < 1.0))
    throw ScenarioError("--damping: must be from 0 to below 1, got " + std::to_string(least_damping));
  const Scenario scenario = load_study(path);
  RemedyOptions options;
  options.load_opening = opening;
  options.least_damping = least_damping;
  options.jobs = jobs;
  const RemedyReport r = rank_remedies(scenario, options);
  const PressureUnit pu = pressure_unit(units);
  std::printf("%s\n", scenario.name.c_str());
  if (r.by_runs)
    std::printf("Judged by runs of the scenario's events: dry friction decides this loop's small motions. Stick-slip "
                "depends on the disturbance: a change that settles these events may not settle others, so try a "
                "remedy on the scenarios of every duty before trusting it.\n");
  else
    std::printf("Judged by the eigenvalues at load opening %.3g: it hunts when a mode is unstable or its damping "
                "ratio is below %.3g.\n",
                opening, least_damping);
  if (r.least_damping)
    std::printf("Present design: least damped mode %.4g Hz, damping ratio %.4f.\n", *r.least_damped_hz,
                *r.least_damping);
  if (r.run_peak_to_peak > 0.0)
    std::printf("A run of its events: worst window %.3g Hz, %.3g %s peak to peak.\n", r.run_frequency_hz,
                r.run_peak_to_peak * pu.per_pascal, pu.name);
  if (!r.hunts) {
    std::printf("It does not hunt: no remedy is needed.\n%s\n", safety_notice_short);
    return 0;
  }
  std::printf("Single changes that stop it, the smallest first (size: |ln(new / present)|, 1 for a repair):\n");
  std::printf("  %-3s %-58s %-26s %6s %8s %8s %8s %-22s %8s %8s %8s\n", "#", "change", "amount", "size", "damping",
              "f_d Hz", "PM deg", "run", "off ms", "on ms", "droop");
  int rank = 0;
  for (const Remedy& m : r.remedies) {
    if (!m.found) continue;
    const ShownUnit u = parameter_unit(*m.spec, units);
    const std::string amount = (m.spec->is_none(m.from) ? std::string(m.spec->none_word) : u.format(m.from, 4)) +
                               " -> " + u.format(m.to, 4);
    char run[64];
    if (m.run_hunts)
      std::snprintf(run, sizeof run, "HUNTS %.3g Hz %.3g %s", m.run_frequency_hz, m.run_peak_to_peak * pu.per_pascal,
                    pu.name);
    else
      std::snprintf(run, sizeof run, "settles");
    auto ms = [](const std::optional<double>& v) { return cell_text(v, 1e3, "%+.1f"); };
    std::printf("  %-3d %-58s %-26s %6.3f %8s %8s %8s %-22s %8s %8s %8s\n", ++rank, m.action.c_str(), amount.c_str(),
                m.size, cell_text(m.least_damping, 1.0, "%.3f").c_str(), cell_text(m.least_damped_hz, 1.0, "%.4g").c_str(),
                cell_text(m.phase_margin_deg, 1.0, "%.1f").c_str(), run, ms(m.off_stroke_change).c_str(),
                ms(m.on_stroke_change).c_str(), cell_text(m.droop_change, 100.0, "%+.2f%%").c_str());
    if (!m.note.empty()) std::printf("      note: %s\n", m.note.c_str());
  }
  if (rank == 0) std::printf("  none of the changes tried stops it within its limit.\n");
  std::printf("Tried without success up to the limit:");
  bool any = false;
  for (const Remedy& m : r.remedies)
    if (!m.found) {
      std::printf("%s %s", any ? ";" : "", m.action.c_str());
      any = true;
    }
  std::printf("%s\n", any ? "." : " none.");
  std::printf("The costs (off, on: change of the data-sheet off- and on-stroke times, '-' where the changed pump "
              "does not reach 10 %% or 90 %% of stroke in the test; droop: change of the droop) are the remedy's "
              "against the present design; run: the scenario's events run with the change. Make one change at a "
              "time and check it with a gauge.\n");
  std::printf("%s\n", safety_notice_short);
  return 0;
}

}  // namespace

int TuningCommands::run() {
  const Options& o = *o_;
  const UnitSystem units = units_option(o.units);
  if (o.remedies->parsed()) return remedies_command(o.scenario_path, o.opening, o.least_damping, o.jobs, units);
  const std::optional<Response> rank = response_of_key(o.rank);
  if (!rank) throw ScenarioError("--rank: expected one of " + response_keys() + ", got \"" + o.rank + "\"");
  check_opening_and_jobs(o.opening, o.jobs);
  const Scenario scenario = load_study(o.scenario_path);
  SensitivityOptions options;
  options.load_opening = o.opening;
  options.jobs = o.jobs;
  options.transient = !o.no_runs;
  const SensitivityReport report = sensitivity(scenario, options);
  if (o.json) {
    std::cout << sensitivity_json(report);
    return 0;
  }

  std::printf("Sensitivities of %s, the loop linearised at load opening %.3g%s\n", scenario.name.c_str(), o.opening,
              o.no_runs ? "" : "; transient figures from the data-sheet test (from load opening 1, 5 ms slam)");
  std::printf("Each row: what the change in the second column does to each figure (first order).\n");
  if (report.stability.dry_friction_dominates)
    std::printf("Dry friction decides this loop's small motions: no linear figure applies (%s).\n",
                report.stability.note.c_str());
  else if (!report.stability.margins_apply)
    std::printf("The loop margins do not apply here: %s\n", report.stability.note.c_str());
  if (!o.no_runs && report.start_stroke < 0.95)
    std::printf("The data-sheet test gives no figures: at load opening 1 the pump runs at %.0f %% of full stroke, "
                "not full flow (a larger load.valve_area or a higher compensator.setting reaches it).\n",
                100.0 * report.start_stroke);
  std::printf("%-34s %-9s", "parameter", "change");
  for (Response r : all_responses) std::printf(" %9s", column_heading(r, units).c_str());
  std::printf("\n%-34s %-9s", "present design", "");
  for (Response r : all_responses) std::printf(" %9s", cell(report.present[r], r, units, false).c_str());
  std::printf("\n");
  std::vector<const ParameterEffect*> rows;
  for (const ParameterEffect& e : report.effects) rows.push_back(&e);
  auto size_of = [&](const ParameterEffect* e) { return e->effect[*rank] ? std::abs(*e->effect[*rank]) : -1.0; };
  std::stable_sort(rows.begin(), rows.end(),
                   [&](const ParameterEffect* a, const ParameterEffect* b) { return size_of(a) > size_of(b); });
  for (const ParameterEffect* e : rows) {
    char change[32];
    if (e->relative)
      std::snprintf(change, sizeof change, "+%.0f %%", 100.0 * e->change);
    else
      std::snprintf(change, sizeof change, "+%.3g %s", e->change, std::string(e->spec->unit).c_str());
    std::printf("%-34s %-9s", std::string(e->spec->key).c_str(), e->skipped.empty() ? change : "");
    if (!e->skipped.empty()) {
      std::printf(" not varied: %s\n", e->skipped.c_str());
      continue;
    }
    for (Response r : all_responses) std::printf(" %9s", cell(e->effect[r], r, units, true).c_str());
    std::printf("%s%s\n", e->note.empty() ? "" : "  note: ", e->note.c_str());
  }
  std::printf("In plain words, the largest effects on %s:\n", words_of(*rank));
  int said = 0;
  for (const ParameterEffect* e : rows) {
    if (said == 5 || !e->effect[*rank]) break;
    std::printf("  - %s.\n", effect_in_words(*e, *rank, units).c_str());
    ++said;
  }
  if (said == 0) std::printf("  - none: %s is not defined at this design.\n", words_of(*rank));
  std::printf("%s\n", safety_notice_short);
  return 0;
}

}  // namespace swashtune::cli
