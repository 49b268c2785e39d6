#include "swashtune/scenario.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <limits>
#include <string>
#include <string_view>
#include <vector>

#include "swashtune/model.hpp"
#include "text_helpers.hpp"

namespace swashtune {

namespace {

// Levenshtein distance: the number of single-character edits from a to b.
std::size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> row(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) row[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    std::size_t diagonal = row[0];
    row[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t above = row[j];
      row[j] = std::min({row[j] + 1, row[j - 1] + 1, diagonal + (a[i - 1] == b[j - 1] ? 0 : 1)});
      diagonal = above;
    }
  }
  return row[b.size()];
}

// The candidate closest to `key`, when it is close enough to be a likely typo
// ("load.openning") or the right name in the wrong section ("pump.volume" for
// "line.volume"); empty otherwise.
std::string nearest_key(std::string_view key, const std::vector<std::string>& candidates) {
  const auto last_part = [](std::string_view k) {
    const std::size_t dot = k.rfind('.');
    return dot == std::string_view::npos ? k : k.substr(dot + 1);
  };
  std::string best;
  std::size_t best_score = std::numeric_limits<std::size_t>::max();
  for (const std::string& candidate : candidates) {
    // A matching last part in another section counts as one edit.
    const std::size_t score =
        std::min(edit_distance(key, candidate), edit_distance(last_part(key), last_part(candidate)) + 1);
    if (score < best_score) {
      best_score = score;
      best = candidate;
    }
  }
  const std::size_t allowed = std::max<std::size_t>(2, last_part(key).size() / 4);
  return best_score <= allowed ? best : std::string();
}

}  // namespace

// Helpers shared with scenario_io.cpp; not part of the public interface.
namespace detail {

// The shortest text that reads back as exactly the same double, independent
// of the C locale (printf/strtod would write "0,5" under a German locale).
// Plain decimals are preferred unless the exponent form is much shorter:
// "0.0005" and "20684271.879504", but "1.29e-12" and "1.6e+09".
std::string format_number(double v) {
  char buffer[400];  // the longest fixed form, of the smallest subnormal, has 327 characters
  const auto write = [&](std::chars_format format) {
    return std::string(buffer, std::to_chars(buffer, buffer + sizeof buffer, v, format).ptr);
  };
  const std::string fixed = write(std::chars_format::fixed);
  const std::string scientific = write(std::chars_format::scientific);
  // A long run of digits would be read back as a TOML integer, which stops
  // at 2^63; the exponent form stays a float.
  const bool too_long = fixed.find('.') == std::string::npos && fixed.size() > 15;
  return fixed.size() <= scientific.size() + 2 && !too_long ? fixed : scientific;
}

// "; did you mean \"...\"?" for a key that is not known, or "" when nothing is close.
std::string did_you_mean(std::string_view key, const std::vector<std::string>& candidates) {
  const std::string guess = nearest_key(key, candidates);
  return guess.empty() ? std::string() : "; did you mean \"" + guess + "\"?";
}

// A quoted string for TOML or JSON; both accept these escapes.
std::string string_literal(std::string_view text) {
  static const char hex[] = "0123456789abcdef";
  std::string out = "\"";
  for (const char c : text) {
    switch (c) {
      case '"':
        out += "\\\"";
        break;
      case '\\':
        out += "\\\\";
        break;
      case '\b':
        out += "\\b";
        break;
      case '\t':
        out += "\\t";
        break;
      case '\n':
        out += "\\n";
        break;
      case '\f':
        out += "\\f";
        break;
      case '\r':
        out += "\\r";
        break;
      default: {
        const auto byte = static_cast<unsigned char>(c);
        if (byte < 0x20 || byte == 0x7f) {
          out += "\\u00";
          out += hex[byte >> 4];
          out += hex[byte & 0xf];
        } else {
          out += c;
        }
      }
    }
  }
  return out + "\"";
}

}  // namespace detail

void sort_events(std::vector<Event>& events) {
  // NaN would break the strict weak ordering that stable_sort needs;
  // validate_event rejects it, but sorting must not misbehave before that.
  const auto key = [](const Event& e) { return std::isnan(e.at) ? std::numeric_limits<double>::infinity() : e.at; };
  std::stable_sort(events.begin(), events.end(), [&](const Event& a, const Event& b) { return key(a) < key(b); });
}

std::optional<FixedDuringARun> fixed_during_a_run(const ModelParameters& p, const std::string& key, double value) {
  const ParameterSpec* spec = find_parameter(key);
  if (!spec) return std::nullopt;
  const bool line_shape = key.rfind("line.", 0) == 0 && key != "line.tank_pressure" && key != "line.rated_pressure" &&
                          key != "line.volume";
  if (spec->is_choice() || line_shape)
    return FixedDuringARun{false, "\"" + key + "\" describes the line, which is fixed during a run; set it in the "
                                  "scenario's [line] table"};
  // An element a value switches on or off (e.g. compensator.control_orifice
  // from "none") would change the model's states mid-run.
  ModelParameters after = p;
  spec->set(after, value);
  if (std::isfinite(value) && layout_of(after) != layout_of(p))
    return FixedDuringARun{true, "setting " + key + " to " + detail::format_number(value) +
                                     " adds or removes a part of the model (and its states) during the run; set it "
                                     "in the scenario file instead"};
  return std::nullopt;
}

// `where` names the event ("demo.toml:14: events[2]"); the offending field is
// appended to it: "demo.toml:14: events[2].set: unknown parameter ...".
void validate_event(const Event& event, const Scenario& scenario, const std::string& where) {
  using detail::format_number;
  const std::string name = where.empty() ? "event" : where;
  const auto fail = [&](std::string_view field, const std::string& what) {
    throw ScenarioError(name + "." + std::string(field) + ": " + what);
  };
  const std::string target = "\"" + event.target + "\"";

  const ParameterSpec* spec = find_parameter(event.target);
  if (!spec) {
    if (find_setting(event.target))
      fail("set", target + " is a run setting; events can change numeric model parameters only");
    std::vector<std::string> numeric_keys;
    for (const ParameterSpec& p : parameter_registry())
      if (!p.is_flag()) numeric_keys.emplace_back(p.key);
    fail("set", "unknown parameter " + target + detail::did_you_mean(event.target, numeric_keys));
  }
  if (spec->is_flag()) fail("set", target + " is an on/off switch; events can change numeric model parameters only");
  if (const auto why = fixed_during_a_run(scenario.parameters, event.target, event.to))
    fail(why->starts_with_part ? "to" : "set", why->text);

  const std::string unit = spec->unit == "-" ? "" : " " + std::string(spec->unit);
  if (!spec->range.contains(event.to))
    fail("to", "expected a value for " + event.target + " " + spec->range.describe(spec->unit) + ", got " +
                   format_number(event.to) + unit);

  if (!std::isfinite(event.at) || event.at < 0.0)
    fail("at", "expected a time >= 0 s, got " + format_number(event.at) + " s");
  const double duration = scenario.settings.duration;
  if (event.at > duration)
    fail("at", "expected a time within the run (scenario.duration = " + format_number(duration) + " s), got " +
                   format_number(event.at) + " s");

  if (!std::isfinite(event.ramp) || event.ramp < 0.0)
    fail("ramp", "expected a ramp time >= 0 s (0 for a step), got " + format_number(event.ramp) + " s");
}

}  // namespace swashtune
