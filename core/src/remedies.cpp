#include "swashtune/remedies.hpp"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <exception>
#include <functional>
#include <thread>

#include "swashtune/datasheet.hpp"
#include "swashtune/model/oil.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune {
namespace {

// One change a plant can make: the value moves along `path` from the
// present (t = 0) to the limit tried (t = 1).
struct Candidate {
  const ParameterSpec* spec = nullptr;
  std::string action;
  std::function<double(double t)> path;
  bool single_step = false;        // a reset or a part fitted: only t = 1
  std::vector<double> steps;       // discrete values tried in order (oil grades); empty: continuous
  std::function<double(double to)> size;
  // Further keys set with the candidate (bleeding the air clears both air
  // fractions): key, value.
  std::vector<std::pair<const ParameterSpec*, double>> also;
};

// ISO 3448 viscosity grades (mm^2/s at 40 degC) a plant can change to.
constexpr double iso_grades[] = {10, 15, 22, 32, 46, 68, 100, 150};

// The worst window of a run of the scenario's events: sustained first, then
// the largest swing.
struct RunWindow {
  bool hunts = false;  // a window with a sustained oscillation
  double hz = 0.0, peak_to_peak = 0.0;
};

RunWindow worst_window(const Scenario& s) {
  RunWindow w;
  const RunResult run = run_scenario(s, RunOptions{{}, 16});
  for (const EventMetrics& m : event_metrics(s, run)) {
    const bool sustained = m.oscillation.kind == OscillationKind::sustained;
    if ((sustained && !w.hunts) || (sustained == w.hunts && m.oscillation.peak_to_peak > w.peak_to_peak)) {
      w.hunts = w.hunts || sustained;
      w.hz = m.oscillation.frequency_hz;
      w.peak_to_peak = m.oscillation.peak_to_peak;
    }
  }
  return w;
}

struct Verdict {
  bool hunts = false;
  bool loop_open = false;  // the swash rests on a stop
  bool by_runs = false;
  std::optional<double> damping, hz, phase_margin, gain_margin;
  std::optional<RunWindow> run;  // when judged by runs, or asked for
};

// Whether the design hunts; `with_run` also runs its events when the
// eigenvalues decide (a verdict by runs always has its run).
Verdict judge(const Scenario& s, const RemedyOptions& options, bool with_run = false) {
  Verdict v;
  ModelParameters p = s.parameters;
  p.opening = options.load_opening;
  if (dry_friction_dominates(p)) {
    v.by_runs = true;
    v.run = worst_window(s);
    v.hunts = v.run->hunts;
    return v;
  }
  const StabilityReport r = analyse_stability(p, s.settings);
  if (r.dominant) {
    v.damping = r.dominant->damping_ratio;
    v.hz = r.dominant->damped_frequency_hz;
  }
  if (r.margins_apply) {
    v.phase_margin = r.margins.phase_margin_deg;
    v.gain_margin = r.margins.gain_margin_db;
  }
  v.hunts = !r.stable || (r.dominant && r.dominant->damping_ratio < options.least_damping);
  // A change that parks the swash on a stop at this opening opens the loop
  // rather than steadying it: not a remedy.
  v.loop_open = !r.model.loop_active;
  if (with_run) v.run = worst_window(s);
  return v;
}

std::vector<Candidate> candidates(const ModelParameters& p) {
  std::vector<Candidate> out;
  auto scaled = [&](const char* key, double factor, const char* action) {
    const ParameterSpec* spec = find_parameter(key);
    const double v = spec->get(p);
    if (!(v > 0.0) || !std::isfinite(v)) return;
    Candidate c;
    c.spec = spec;
    c.action = action;
    c.path = [v, factor, spec](double t) {
      const double x = v * std::pow(factor, t);
      return std::clamp(x, spec->range.min, spec->range.max);
    };
    c.size = [v](double to) { return std::abs(std::log(to / v)); };
    out.push_back(c);
  };
  const ParameterSpec* orifice = find_parameter("compensator.control_orifice");
  if (orifice->is_none(p.control_orifice)) {
    // Fitting one: the largest that stops it (the least restriction), from 3 mm down to 0.3 mm.
    Candidate c;
    c.spec = orifice;
    c.action = "fit a control orifice";
    c.path = [](double t) { return 3e-3 * std::pow(0.1, t); };
    c.size = [](double to) { return 1.0 + std::log(3e-3 / to); };
    out.push_back(c);
  } else {
    scaled("compensator.control_orifice", 0.25, "fit a smaller control orifice");
    scaled("compensator.control_orifice", 3.0, "fit a larger control orifice");
  }
  scaled("compensator.bleed_orifice", 4.0, "open the bleed orifice up");
  scaled("compensator.bleed_orifice", 0.25, "fit a smaller bleed orifice");
  scaled("compensator.spool_damping", 4.0, "damp the spool more (a smaller damping orifice in the spool)");
  scaled("compensator.spool_damping", 0.25, "damp the spool less (a larger damping orifice in the spool)");
  scaled("bias_spring.force_at_full_stroke", 2.0, "preload the bias spring more");
  scaled("bias_spring.force_at_full_stroke", 0.5, "preload the bias spring less");
  scaled("bias_spring.rate", 2.0, "fit a stiffer bias spring");
  scaled("bias_spring.rate", 0.5, "fit a softer bias spring");
  scaled("compensator.spring_rate", 2.0, "fit a stiffer compensator spring");
  scaled("compensator.spring_rate", 0.5, "fit a softer compensator spring");
  scaled("compensator.setting", 0.8, "set the compensator lower");
  if (p.line_length > 0.0 && p.line_bore > 0.0) {
    scaled("line.length", 0.25, "shorten the discharge line");
    scaled("line.length", 4.0, "lengthen the discharge line");
  } else {
    scaled("line.volume", 0.25, "shorten the hose (less volume at the pump)");
    scaled("line.volume", 4.0, "add volume at the pump (a longer hose)");
  }
  // Oil: a thicker or thinner grade, cooler or hotter; the size of the
  // change is the ratio of the viscosities at the running temperature.
  const auto viscosity_at = [p](double grade, double temperature) {
    return oil_state(grade, p.viscosity_index, p.viscosity_at_100c, p.density, p.thermal_expansion, temperature)
        .kinematic_viscosity;
  };
  const double present_viscosity = viscosity_at(p.viscosity_grade, p.temperature);
  for (int direction : {+1, -1}) {
    Candidate c;
    c.spec = find_parameter("fluid.viscosity_grade");
    c.action = direction > 0 ? "change to a thicker oil grade" : "change to a thinner oil grade";
    for (double g : iso_grades)
      if ((direction > 0 && g > p.viscosity_grade) || (direction < 0 && g < p.viscosity_grade)) c.steps.push_back(g);
    if (direction < 0) std::reverse(c.steps.begin(), c.steps.end());
    if (c.steps.empty()) continue;
    c.size = [viscosity_at, present_viscosity, p](double to) {
      return std::abs(std::log(viscosity_at(to, p.temperature) / present_viscosity));
    };
    out.push_back(c);
  }
  // Oil temperature from 20 to 80 degC (a cooler, a heater, a thermostat).
  for (double limit : {20.0, 80.0}) {
    if ((limit < 50.0 && !(p.temperature > limit)) || (limit > 50.0 && !(p.temperature < limit))) continue;
    Candidate c;
    c.spec = find_parameter("fluid.temperature");
    c.action = limit < p.temperature ? "run the oil cooler" : "run the oil warmer";
    const double from = p.temperature;
    c.path = [from, limit](double t) { return from + t * (limit - from); };
    c.size = [viscosity_at, present_viscosity, p](double to) {
      return std::abs(std::log(viscosity_at(p.viscosity_grade, to) / present_viscosity));
    };
    out.push_back(c);
  }
  // Air: bleed it (the undissolved air and the entrained air both to zero).
  if (p.air_fraction > 0.0 || p.fault_entrained_air > 0.0) {
    Candidate c;
    // Shown as the larger of the two; both go to zero.
    const bool entrained = p.fault_entrained_air >= p.air_fraction;
    c.spec = find_parameter(entrained ? "faults.entrained_air" : "fluid.air_fraction");
    c.action = "bleed the air out and cure the aeration";
    c.single_step = true;
    c.path = [](double) { return 0.0; };
    c.size = [](double) { return 1.0; };
    c.also.push_back({find_parameter(entrained ? "fluid.air_fraction" : "faults.entrained_air"), 0.0});
    out.push_back(c);
  }
  // Faults: the worn or broken part replaced (its healthy value).
  for (const ParameterSpec& spec : parameter_registry()) {
    if (spec.key.substr(0, 7) != "faults." || spec.key == "faults.entrained_air") continue;
    if (spec.get(p) == spec.default_value) continue;
    if (spec.key == "faults.spool_stiction_ratio" && p.fault_spool_friction == 0.0) continue;
    Candidate c;
    c.spec = &spec;
    c.action = "repair: " + std::string(spec.meaning.substr(0, spec.meaning.find(':'))) + " (back to healthy)";
    c.single_step = true;
    const double healthy = spec.default_value;
    c.path = [healthy](double) { return healthy; };
    c.size = [](double) { return 1.0; };
    out.push_back(c);
  }
  return out;
}

Scenario with_value(const Scenario& s, const Candidate& c, double value) {
  Scenario out = s;
  c.spec->set(out.parameters, value);
  for (const auto& [spec, v] : c.also) spec->set(out.parameters, v);
  return out;
}

}  // namespace

RemedyReport rank_remedies(const Scenario& scenario, const RemedyOptions& options) {
  RemedyReport report;
  const Verdict present = judge(scenario, options, true);
  report.hunts = present.hunts;
  report.by_runs = present.by_runs;
  report.least_damping = present.damping;
  report.least_damped_hz = present.hz;
  report.run_frequency_hz = present.run->hz;
  report.run_peak_to_peak = present.run->peak_to_peak;
  if (!report.hunts) return report;

  std::optional<DataSheetFigures> present_sheet;
  try {
    Scenario full = scenario;
    full.parameters.opening = 1.0;
    present_sheet = datasheet_figures(full);
  } catch (const std::exception&) {
  }

  const std::vector<Candidate> tried = candidates(scenario.parameters);
  report.remedies.resize(tried.size());
  std::atomic<std::size_t> next{0};
  auto work = [&] {
    for (std::size_t i = next++; i < tried.size(); i = next++) {
      const Candidate& c = tried[i];
      Remedy& r = report.remedies[i];
      r.spec = c.spec;
      r.action = c.action;
      r.from = c.spec->get(scenario.parameters);
      r.by_runs = present.by_runs;
      for (const auto& extra : c.also) r.also.push_back(extra.first);
      try {
        auto stops = [&](double value) {
          const Scenario s = with_value(scenario, c, value);
          if (!check_consistency(s.parameters).empty()) return false;
          const Verdict v = judge(s, options);
          return !v.hunts && !v.loop_open;
        };
        if (!c.steps.empty()) {
          for (double v : c.steps)
            if (stops(v)) {
              r.to = v;
              r.found = true;
              break;
            }
          if (!r.found) r.to = c.steps.back();
        } else if (c.single_step) {
          r.to = c.path(1.0);
          r.found = stops(r.to);
        } else {
          // Along the path the hunting need not stop once for good (a
          // second mode can take over): a scan finds the first stretch
          // where it stops, bisection then its start.
          r.to = c.path(1.0);
          double lo = 0.0, hi = -1.0;
          for (int k = 1; k <= options.scan_points; ++k) {
            const double t = double(k) / options.scan_points;
            if (stops(c.path(t))) {
              hi = t;
              break;
            }
            lo = t;
          }
          if (hi > 0.0) {
            for (int k = 0; k < options.bisections; ++k) {
              const double mid = 0.5 * (lo + hi);
              (stops(c.path(mid)) ? hi : lo) = mid;
            }
            r.to = c.path(hi);
            r.found = true;
          }
        }
        r.size = c.size(r.to);
        const Scenario changed = with_value(scenario, c, r.to);
        const Verdict at = judge(changed, options, r.found);
        r.least_damping = at.damping;
        r.least_damped_hz = at.hz;
        r.phase_margin_deg = at.phase_margin;
        r.gain_margin_db = at.gain_margin;
        if (!r.found) continue;
        r.run_hunts = at.run->hunts;
        r.run_frequency_hz = at.run->hz;
        r.run_peak_to_peak = at.run->peak_to_peak;
        if (present_sheet) {
          Scenario full = changed;
          full.parameters.opening = 1.0;
          const DataSheetFigures f = datasheet_figures(full);
          if (f.off_stroke && present_sheet->off_stroke) r.off_stroke_change = *f.off_stroke - *present_sheet->off_stroke;
          if (f.on_stroke && present_sheet->on_stroke) r.on_stroke_change = *f.on_stroke - *present_sheet->on_stroke;
          if (f.droop && present_sheet->droop) r.droop_change = *f.droop - *present_sheet->droop;
        }
      } catch (const std::exception& e) {
        r.found = false;
        r.note = std::string("a run failed: ") + e.what();
      }
    }
  };
  std::vector<std::thread> pool;
  for (int t = 1; t < std::max(1, options.jobs); ++t) pool.emplace_back(work);
  work();
  for (std::thread& t : pool) t.join();
  std::stable_sort(report.remedies.begin(), report.remedies.end(), [](const Remedy& a, const Remedy& b) {
    if (a.found != b.found) return a.found;
    return a.found && a.size < b.size;
  });
  return report;
}

}  // namespace swashtune
