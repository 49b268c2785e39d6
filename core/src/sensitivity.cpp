#include "swashtune/sensitivity.hpp"

#include <Eigen/Eigenvalues>
#include <Eigen/LU>
#include <algorithm>
#include <atomic>
#include <cmath>
#include <cstdio>
#include <exception>
#include <mutex>
#include <thread>

#include "swashtune/datasheet.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune {

namespace {

// Everything said about each response, in the enum's order: key, words,
// short heading, stored unit, which way is better (+1 larger, -1 smaller,
// 0 neither), and how it is shown (factor from the stored unit, unit and
// format; the peak's depend on the unit system, see below).
struct ResponseFacts {
  const char* key;
  const char* words;
  const char* heading;
  const char* unit;
  int better;
  double to_shown;
  const char* shown_unit;
  const char* format;
};

constexpr ResponseFacts response_facts[response_count] = {
    {"modulus_margin", "the modulus margin", "modulus", "-", +1, 1.0, "", "%.3f"},
    {"gain_margin", "the gain margin", "GM", "dB", +1, 1.0, "dB", "%.2f"},
    {"phase_margin", "the phase margin", "PM", "deg", +1, 1.0, "deg", "%.1f"},
    {"damping", "the damping ratio of the least damped mode", "damping", "-", +1, 1.0, "", "%.3f"},
    {"frequency", "the frequency of the least damped mode", "f_d", "Hz", 0, 1.0, "Hz", "%.3g"},
    {"peak", "the slam peak", "peak", "Pa", -1, 1.0, "Pa", "%.4g"},
    {"overshoot", "the slam overshoot", "over", "-", -1, 100.0, "%", "%.2f"},
    {"off_stroke", "the off-stroke time", "off", "s", -1, 1e3, "ms", "%.1f"},
    {"on_stroke", "the on-stroke time", "on", "s", -1, 1e3, "ms", "%.1f"},
    {"droop", "the droop", "droop", "-", 0, 100.0, "%", "%.2f"},
};

const ResponseFacts& facts(Response r) { return response_facts[static_cast<int>(r)]; }

}  // namespace

const char* key_of(Response r) { return facts(r).key; }
const char* words_of(Response r) { return facts(r).words; }
const char* heading_of(Response r) { return facts(r).heading; }
const char* unit_of(Response r) { return facts(r).unit; }

std::optional<bool> larger_is_better(Response r) {
  if (facts(r).better == 0) return std::nullopt;
  return facts(r).better > 0;
}

EigenvalueChanges eigenvalue_changes(const Eigen::MatrixXd& a, const Eigen::MatrixXd& da) {
  const Eigen::EigenSolver<Eigen::MatrixXd> solver(a, true);
  const Eigen::MatrixXcd v = solver.eigenvectors();
  const Eigen::MatrixXcd left = v.inverse();  // row i: w_i^H with w_i^H v_i = 1
  EigenvalueChanges out;
  out.eigenvalues = solver.eigenvalues();
  out.changes = (left * da.cast<std::complex<double>>() * v).diagonal();
  return out;
}

namespace {

// The linear figures of a stability report (margins only where they are
// stability margins).
void fill_linear(const StabilityReport& r, ResponseValues& out) {
  if (r.dry_friction_dominates) return;  // no linear model describes the loop
  if (r.margins_apply) {
    out[Response::modulus_margin] = r.margins.modulus_margin;
    out[Response::gain_margin] = r.margins.gain_margin_db;
    out[Response::phase_margin] = r.margins.phase_margin_deg;
  }
  if (r.dominant) {
    out[Response::damping] = r.dominant->damping_ratio;
    out[Response::frequency] = r.dominant->damped_frequency_hz;
  }
}

// The data-sheet test from full flow: load.opening 1.
Scenario at_full_flow(Scenario s) {
  s.parameters.opening = 1.0;
  return s;
}

// A pump that does not start near full stroke has no off-stroke time to speak of.
constexpr double least_start_stroke = 0.95;

void fill_transient(const DataSheetFigures& f, ResponseValues& out) {
  if (f.start_stroke < least_start_stroke) return;
  out[Response::peak] = f.peak;
  if (f.deadhead > 0.0) out[Response::overshoot] = (f.peak - f.deadhead) / f.deadhead;
  out[Response::off_stroke] = f.off_stroke;
  out[Response::on_stroke] = f.on_stroke;
  out[Response::droop] = f.droop;
}

// The eigenvalue of `modes` nearest to `to` (the same mode followed across
// a small change).
std::optional<std::complex<double>> nearest(const std::vector<Mode>& modes, std::complex<double> to) {
  std::optional<std::complex<double>> best;
  for (const Mode& m : modes)
    if (!best || std::abs(m.eigenvalue - to) < std::abs(*best - to)) best = m.eigenvalue;
  return best;
}

// Damping ratio and damped frequency changes from an eigenvalue's change
// (zeta = -sigma / |lambda|, f_d = |omega| / 2 pi).
void fill_modal_change(std::complex<double> lambda, std::complex<double> d, ResponseValues& out) {
  const double sigma = lambda.real(), omega = std::abs(lambda.imag()), r = std::abs(lambda);
  const double d_omega = lambda.imag() >= 0.0 ? d.imag() : -d.imag();
  const double dr = (sigma * d.real() + omega * d_omega) / r;
  out[Response::damping] = -(d.real() * r - sigma * dr) / (r * r);
  out[Response::frequency] = d_omega / (2.0 * 3.14159265358979323846);
}

struct Side {
  StabilityReport stability;
  ResponseValues values;
};

std::string plain_name(std::string_view key) {
  std::string out(key);
  std::replace(out.begin(), out.end(), '.', ' ');
  std::replace(out.begin(), out.end(), '_', ' ');
  return out;
}

}  // namespace

SensitivityReport sensitivity(const Scenario& scenario, const SensitivityOptions& options) {
  SensitivityReport report;
  ModelParameters linear_at = scenario.parameters;
  linear_at.opening = options.load_opening;
  report.stability = analyse_stability(linear_at, scenario.settings);
  fill_linear(report.stability, report.present);
  if (options.transient) {
    const DataSheetFigures f = datasheet_figures(at_full_flow(scenario));
    report.start_stroke = f.start_stroke;
    fill_transient(f, report.present);
  }
  // With dry friction deciding the small motions the modes describe nothing.
  const std::optional<Mode> dominant =
      report.stability.dry_friction_dominates ? std::nullopt : report.stability.dominant;
  const LinearModel& centre = report.stability.model;
  const LineElement line(scenario.parameters, scenario.parameters.density, 1e-6 * scenario.parameters.viscosity_grade);

  for (const ParameterSpec& spec : parameter_registry()) {
    if (!spec.tunable) continue;
    ParameterEffect e;
    e.spec = &spec;
    e.value = spec.get(scenario.parameters);
    e.relative = spec.tuning_relative;
    e.change = spec.tuning_change;
    if (spec.is_none(e.value))
      e.skipped = std::string("\"") + std::string(spec.none_word) + "\"";
    else if (e.relative && e.value == 0.0)
      e.skipped = "value 0";
    else if (spec.key == "line.volume" && line.geometry)
      e.skipped = "given by line.length and line.bore";
    else if (spec.key == "pump.outlet_volume" && !line.geometry)
      e.skipped = "part of line.volume unless the line is given by length and bore";
    report.effects.push_back(e);
  }

  // Each parameter's two sides on a thread of its own; results by index.
  std::atomic<std::size_t> next{0};
  std::mutex failure_lock;
  auto work = [&] {
    for (std::size_t i = next++; i < report.effects.size(); i = next++) {
      ParameterEffect& e = report.effects[i];
      if (!e.skipped.empty()) continue;
      const double amount = e.relative ? e.value * e.change : e.change;
      const double linear_step = amount * options.linear_step_fraction;
      const double transient_step = amount * options.transient_step_fraction;
      Side sides[2];
      ResponseValues runs[2];
      bool usable = true;
      for (int s = 0; s < 2 && usable; ++s) {
        const double sign = s == 0 ? 1.0 : -1.0;
        Scenario linear_side = scenario, transient_side = scenario;
        e.spec->set(linear_side.parameters, e.value + sign * linear_step);
        e.spec->set(transient_side.parameters, e.value + sign * transient_step);
        if (!e.spec->range.contains(e.value + sign * std::max(linear_step, transient_step))) {
          e.skipped = "its range ends within the step";
          usable = false;
          break;
        }
        if (!check_consistency(linear_side.parameters).empty() || !check_consistency(transient_side.parameters).empty()) {
          e.skipped = "the changed design is not consistent";
          usable = false;
          break;
        }
        try {
          ModelParameters q = linear_side.parameters;
          q.opening = options.load_opening;
          sides[s].stability = analyse_stability(q, scenario.settings, report.stability.operating_point.condition);
          fill_linear(sides[s].stability, sides[s].values);
          if (options.transient) fill_transient(datasheet_figures(at_full_flow(transient_side)), runs[s]);
        } catch (const std::exception& failure) {
          const std::lock_guard<std::mutex> hold(failure_lock);
          e.note = std::string("a run failed: ") + failure.what();
        }
      }
      if (!usable) continue;
      // The difference quotients times the reported change.
      const double per = amount / (2.0 * linear_step), per_run = amount / (2.0 * transient_step);
      for (Response r : all_responses) {
        if (sides[0].values[r] && sides[1].values[r]) e.effect[r] = (*sides[0].values[r] - *sides[1].values[r]) * per;
        if (runs[0][r] && runs[1][r]) e.effect[r] = (*runs[0][r] - *runs[1][r]) * per_run;
      }
      // The least damped mode: the perturbation formula on the matrices of
      // the two sides, when both have the same free coordinates.
      const LinearModel& plus = sides[0].stability.model;
      const LinearModel& minus = sides[1].stability.model;
      if (!dominant) continue;
      if (plus.states != centre.states || minus.states != centre.states) {
        e.note = "the step moves a coordinate onto or off a stop: the modes change their number";
        e.effect[Response::damping].reset();
        e.effect[Response::frequency].reset();
        continue;
      }
      const Eigen::VectorXd& scale = centre.scale;
      auto balanced = [&](const Eigen::MatrixXd& m) -> Eigen::MatrixXd {
        return scale.cwiseInverse().asDiagonal() * m * scale.asDiagonal();
      };
      const Eigen::MatrixXd da = balanced(plus.closed_loop() - minus.closed_loop()) * per;
      const EigenvalueChanges changes = eigenvalue_changes(balanced(centre.closed_loop()), da);
      Eigen::Index at = 0;
      (changes.eigenvalues.array() - dominant->eigenvalue).abs().minCoeff(&at);
      e.eigenvalue_change = changes.changes[at];
      const auto up = nearest(sides[0].stability.modes, dominant->eigenvalue);
      const auto down = nearest(sides[1].stability.modes, dominant->eigenvalue);
      if (up && down) e.eigenvalue_change_by_differences = (*up - *down) * per;
      fill_modal_change(changes.eigenvalues[at], *e.eigenvalue_change, e.effect);
    }
  };
  const int threads = std::max(1, options.jobs);
  std::vector<std::thread> pool;
  for (int t = 1; t < threads; ++t) pool.emplace_back(work);
  work();
  for (std::thread& t : pool) t.join();
  return report;
}

double response_shown(Response r, double stored, UnitSystem units) {
  if (r == Response::peak)
    return units == UnitSystem::us ? convert(stored, "Pa", "psi") : units == UnitSystem::metric ? stored * 1e-5 : stored;
  return stored * facts(r).to_shown;
}

const char* response_shown_unit(Response r, UnitSystem units) {
  if (r == Response::peak) return units == UnitSystem::us ? "psi" : units == UnitSystem::metric ? "bar" : "Pa";
  return facts(r).shown_unit;
}

std::string response_text(Response r, double stored, UnitSystem units, bool is_change) {
  const char* format = facts(r).format;
  if (r == Response::peak) format = units == UnitSystem::us ? "%.0f" : units == UnitSystem::metric ? "%.1f" : "%.4g";
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, response_shown(r, stored, units));
  const std::string unit = response_shown_unit(r, units);
  if (unit.empty()) return buffer;
  if (unit == "%" && is_change) return std::string(buffer) + " points of %";
  return std::string(buffer) + " " + unit;
}

std::string effect_in_words(const ParameterEffect& e, Response r, UnitSystem units) {
  const std::string name = plain_name(e.spec->key);
  std::string change;
  char buffer[96];
  if (e.relative) {
    std::snprintf(buffer, sizeof buffer, "a %.0f %% larger %s", 100.0 * e.change, name.c_str());
    change = buffer;
  } else {
    std::snprintf(buffer, sizeof buffer, "a %s %.3g %s higher", name.c_str(), e.change, std::string(e.spec->unit).c_str());
    change = buffer;
  }
  const std::optional<double>& d = e.effect[r];
  if (!d) return change + " has no figure for " + words_of(r);
  const std::string amount = response_text(r, std::abs(*d), units, true);
  if (amount == response_text(r, 0.0, units, true)) return change + " hardly changes " + words_of(r);
  return change + (*d > 0.0 ? " raises " : " lowers ") + words_of(r) + " by " + amount;
}

}  // namespace swashtune
