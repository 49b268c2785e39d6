#include "swashtune/plausibility.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "swashtune/model.hpp"
#include "swashtune/safety.hpp"
#include "swashtune/schedule.hpp"
#include "swashtune/units.hpp"

namespace swashtune {

namespace {

// Typical spans are common practice in industrial and mobile hydraulics
// (from memory, not from any one product's data): compensators are set from
// a few bar to about 350-420 bar on most pumps, 700 bar on the few made for
// it; line components are rated up to about 1000 bar; tank and case
// pressures stay within a few bar (shaft seals); shafts turn at electric
// motor or engine speeds; displacements run from a few to about 1000 cm^3.
std::vector<PlausibilityRule> make_rules() {
  // clang-format off
  return {
    {"compensator.setting", 5e5, 700e5, false, false, "pump compensators are set to", "bar", {"bar", "psi", "MPa"}},
    {"relief.setting", 5e5, 800e5, false, false, "relief valves on a pump's line are set to", "bar", {"bar", "psi", "MPa"}},
    {"line.rated_pressure", 10e5, 1000e5, false, false, "hydraulic lines and fittings are rated for", "bar", {"bar", "psi", "MPa"}},
    {"line.tank_pressure", 1e3, 10e5, true, false, "tank and case pressures run at", "bar", {"bar", "psi"}},
    {"faults.case_pressure", 1e3, 10e5, true, false, "case pressures run at", "bar", {"bar", "psi"}},
    {"pump.speed", 100.0, 5000.0, true, false, "pump shafts turn at", "rev/min", {"rev/s"}},
    {"pump.displacement", 0.5e-6, 2e-3, false, false, "piston pumps displace", "cm^3/rev", {"L/rev", "in^3/rev"}},
    {"line.volume", 1e-6, 0.2, false, false, "a pump's discharge line holds", "L", {"L"}},
    {"line.length", 0.1, 200.0, true, false, "a pump's discharge line runs", "m", {"mm", "ft"}},
    {"line.bore", 2e-3, 0.15, true, false, "discharge lines have bores of", "mm", {"m", "in"}},
    {"line.wall_thickness", 0.3e-3, 25e-3, false, false, "tube walls are", "mm", {"m", "in"}},
    {"bias_spring.rate", 1e3, 2e6, true, false, "bias springs are rated", "N/mm", {"N/mm", "lbf/in"}},
    {"compensator.spring_rate", 1e3, 5e6, true, false, "compensator springs are rated", "N/mm", {"N/mm", "lbf/in"}},
  };
  // clang-format on
}

std::string number(double v, const char* format = "%.4g") {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, v);
  return buffer;
}

std::string_view stored_unit_of(std::string_view key) {
  if (const ParameterSpec* p = find_parameter(key)) return p->unit;
  if (const SettingSpec* s = find_setting(key)) return s->unit;
  return "-";
}

bool plausible(const PlausibilityRule& rule, double value) {
  return (rule.zero_is_plausible && value == 0.0) || (value >= rule.low && value <= rule.high);
}

// "3000 psi = 206.8 bar" (or "210 bar" when the unit is the display unit).
std::string reading(double written, std::string_view unit, std::string_view display, double stored,
                    std::string_view stored_unit) {
  std::string text = number(written) + " " + std::string(unit);
  if (unit != display) text += " = " + number(convert(stored, stored_unit, display)) + " " + std::string(display);
  return text;
}

}  // namespace

const std::vector<PlausibilityRule>& plausibility_rules() {
  static const std::vector<PlausibilityRule> rules = make_rules();
  return rules;
}

const PlausibilityRule* find_plausibility_rule(std::string_view key) {
  for (const PlausibilityRule& r : plausibility_rules())
    if (r.key == key) return &r;
  return nullptr;
}

std::optional<std::string> plausibility_warning(const std::string& where, std::string_view key, double value,
                                                bool plain_number, const std::string& as_read) {
  const PlausibilityRule* rule = find_plausibility_rule(key);
  if (!rule || !std::isfinite(value) || plausible(*rule, value)) return std::nullopt;
  if (rule->plain_numbers_only && !plain_number) return std::nullopt;
  const std::string_view stored = stored_unit_of(key);
  const std::string display(rule->display_unit);
  std::string shown;
  try {
    shown = plain_number ? reading(value, stored, display, value, stored)
                         : number(convert(value, stored, display)) + " " + display;
  } catch (const UnitError&) {
    return std::nullopt;  // a rule whose units do not fit its key: nothing sensible to say
  }
  std::string text = where + ": " + std::string(key) + " = " + as_read + ": " + shown + " is far " +
                     (value < rule->low ? "below" : "above") + " what " + std::string(rule->what) + " (" +
                     number(convert(rule->low, stored, display)) + " to " +
                     number(convert(rule->high, stored, display)) + " " + display + ")";
  // A plain number is in the stored unit; which unit would make it plausible?
  std::vector<std::string> meant;
  if (plain_number) {
    const ParameterSpec* spec = find_parameter(key);
    for (std::string_view unit : rule->slips) {
      try {
        const double as_slip = convert(value, unit, stored);
        if (plausible(*rule, as_slip) && (!spec || spec->range.contains(as_slip)))
          meant.push_back(reading(value, unit, display, as_slip, stored));
      } catch (const UnitError&) {
      }
    }
  }
  if (!meant.empty()) {
    text += "; did you mean ";
    for (std::size_t i = 0; i < meant.size(); ++i) text += (i ? " or " : "") + meant[i];
    text += "?";
  } else if (plain_number) {
    text += "; a plain number is in " + std::string(stored) + ": check the value, or write it with its unit";
  } else {
    text += "; check the value";
  }
  return text;
}

std::vector<std::string> relation_warnings(const Scenario& scenario, const std::string& source,
                                           const std::map<std::string, WrittenValue, std::less<>>& written) {
  std::vector<std::string> out;
  const auto where = [&](std::string_view key, std::string_view fallback) {
    auto it = written.find(key);
    if (it == written.end()) it = written.find(fallback);
    return source + (it != written.end() ? ":" + std::to_string(it->second.line) : std::string());
  };
  const auto as_read = [&](std::string_view key, double value, std::string_view unit) {
    const auto it = written.find(key);
    return it != written.end() ? it->second.as_read : number(value) + " " + std::string(unit);
  };
  const ModelParameters& p = scenario.parameters;
  const Derived d(p);
  // A relief valve below the compensator dumps the flow before the pump destrokes.
  if (std::isfinite(p.relief_setting) && p.relief_setting < d.setting)
    out.push_back(where("relief.setting", "compensator.setting") +
                  ": relief.setting = " + as_read("relief.setting", p.relief_setting, "Pa") +
                  ": the relief valve cracks at " + number(p.relief_setting * 1e-5) +
                  " bar, below the compensator setting of " + number(d.setting * 1e-5) +
                  " bar, so it opens before the compensator destrokes the pump and turns the flow into heat; a "
                  "relief valve is usually set some 10 to 20 % above the compensator (common practice)");
  // A trace too coarse to show the run: probably milliseconds were meant.
  const RunSettings& s = scenario.settings;
  const double samples = s.duration / s.sample_interval;
  if (samples < 20.0) {
    std::string text = where("scenario.sample_interval", "scenario.duration") +
                       ": scenario.sample_interval = " + as_read("scenario.sample_interval", s.sample_interval, "s") +
                       ": only " + number(std::floor(samples) + 1, "%.0f") + " samples over the " + number(s.duration) +
                       " s run";
    const auto it = written.find("scenario.sample_interval");
    if (it != written.end() && it->second.plain_number && s.duration / (s.sample_interval * 1e-3) >= 20.0)
      text += "; did you mean " + number(s.sample_interval) + " ms?";
    out.push_back(text);
  }
  return out;
}

std::vector<std::string> peak_cautions(const Scenario& scenario, const RunResult& result) {
  std::vector<std::string> out;
  Schedule schedule(scenario.parameters);
  for (const Event& e : scenario.events) schedule.add(e);
  // The highest setting in force over [t0, t1]: the schedule is linear
  // between corners, so its extremes lie at the ends and the corners.
  const auto highest_setting = [&](double t0, double t1) {
    double best = Derived(schedule.at(t0)).setting;
    for (double t = schedule.next_corner_after(t0); t < t1; t = schedule.next_corner_after(t))
      best = std::max(best, Derived(schedule.at(t)).setting);
    return std::max(best, Derived(schedule.at(t1)).setting);
  };
  const auto pressure = [](double pa) {
    return number(pa * 1e-5, "%.1f") + " bar (" + number(convert(pa, "Pa", "psi"), "%.0f") + " psi)";
  };
  const double rated = scenario.parameters.rated_pressure;
  const auto check = [&](double peak, double t0, double t1, const std::string& when) {
    if (std::isfinite(rated) && peak > rated)
      out.push_back("Caution: the simulated discharge pressure peaks at " + pressure(peak) + when +
                    ", above the line's rated pressure of " + pressure(rated) + ".");
    const double setting = highest_setting(t0, t1);
    if (peak > 1.5 * setting)
      out.push_back("Caution: the simulated discharge pressure peaks at " + pressure(peak) + when +
                    ", more than 1.5 times the compensator setting of " + pressure(setting) +
                    ": a spike like this can burst hoses and fittings; check the rated pressure of every component "
                    "and that a relief valve protects the line.");
  };
  bool windows_flagged = false;
  for (std::size_t i = 0; i < result.windows.size() && i < scenario.events.size(); ++i) {
    const EventWindow& w = result.windows[i];
    if (!w.observed()) continue;
    const std::size_t before = out.size();
    check(w.peak_pressure(), w.start(), w.end(),
          " after the event at " + number(w.start()) + " s on " + scenario.events[i].target);
    windows_flagged |= out.size() > before;
  }
  // A peak outside every event window (before the first event, or no events).
  if (!windows_flagged && std::isfinite(result.peak_discharge_pressure))
    check(result.peak_discharge_pressure, 0.0, scenario.settings.duration, " during the run");
  if (!out.empty()) out.push_back(safety_notice_short);
  return out;
}

}  // namespace swashtune
