// Scenario files (TOML) in and out, and the JSON form read by the Python
// cross-checks. Keys, units, defaults and ranges all come from the registry
// in parameters.cpp; this file only maps TOML onto it.

#include <toml++/toml.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <iterator>
#include <map>
#include <sstream>
#include <string>
#include <string_view>
#include <system_error>
#include <utility>
#include <vector>

#include "swashtune/atomic_file.hpp"
#include "swashtune/plausibility.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/units.hpp"
#include "text_helpers.hpp"
#include "toml_guard.hpp"

namespace swashtune {

namespace {

using detail::did_you_mean;
using detail::format_number;
using detail::string_literal;

// Beyond this the trace would not fit in memory, let alone on disk.
constexpr double kMaxSamples = 1e8;

// [scenario] keys that describe the study rather than the run.
constexpr std::string_view kNameKey = "scenario.name";
constexpr std::string_view kDescriptionKey = "scenario.description";
constexpr std::string_view kEventKeys[] = {"at", "set", "to", "ramp"};

std::string_view section_of(std::string_view key) { return key.substr(0, key.find('.')); }
std::string_view name_in_section(std::string_view key) { return key.substr(key.find('.') + 1); }

// Sections in the order a written file shows them: the study and the run
// first, then the parameter groups in registry order.
const std::vector<std::string>& known_sections() {
  static const std::vector<std::string> sections = [] {
    std::vector<std::string> s{"scenario"};
    const auto add = [&s](std::string_view key) {
      const std::string section(section_of(key));
      if (std::find(s.begin(), s.end(), section) == s.end()) s.push_back(section);
    };
    for (const SettingSpec& spec : setting_registry()) add(spec.key);
    for (const ParameterSpec& spec : parameter_registry()) add(spec.key);
    return s;
  }();
  return sections;
}

const std::vector<std::string>& known_keys() {
  static const std::vector<std::string> keys = [] {
    std::vector<std::string> k{std::string(kNameKey), std::string(kDescriptionKey)};
    for (const SettingSpec& spec : setting_registry()) k.emplace_back(spec.key);
    for (const ParameterSpec& spec : parameter_registry()) k.emplace_back(spec.key);
    return k;
  }();
  return keys;
}

// A number that reads back as a float in both TOML and JSON ("870.0", not
// "870"), so Python sees a float and TOML keeps the type.
std::string float_literal(double v) {
  std::string text = format_number(v);
  if (std::isfinite(v) && text.find_first_of(".e") == std::string::npos) text += ".0";
  return text;
}

std::string with_article(const std::string& noun) {
  const bool vowel = !noun.empty() && std::string_view("aeiou").find(noun[0]) != std::string_view::npos;
  return (vowel ? "an " : "a ") + noun;
}

// "a pressure", "a plain number": what a unit's quantity is called.
std::string quantity_name(std::string_view unit) {
  try {
    return with_article(dimension_name(parse_unit(unit).dimension));
  } catch (const UnitError&) {
    return "a value in " + std::string(unit);
  }
}

// A short description of a TOML value for "got ..." in messages.
std::string describe(const toml::node& node) {
  if (const auto* s = node.as_string()) {
    const std::string& text = s->get();
    return "the string " + string_literal(text.size() > 60 ? text.substr(0, 57) + "..." : text);
  }
  if (const auto* i = node.as_integer()) return "the number " + std::to_string(i->get());
  if (const auto* f = node.as_floating_point()) return "the number " + format_number(f->get());
  if (const auto* b = node.as_boolean()) return b->get() ? "true" : "false";
  if (node.is_table()) return "a table";
  if (node.is_array()) return "an array";
  return "a date or time";
}

std::string_view trim(std::string_view s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  return s;
}

// The unit of a "number unit" string ("45 deg" -> "deg"); empty when there is none.
std::string unit_part(std::string_view text) {
  text = trim(text);
  double ignored = 0.0;
  const auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), ignored);
  if (error != std::errc()) return {};
  return std::string(trim(text.substr(static_cast<std::size_t>(end - text.data()))));
}

// A range in the unit the user wrote, e.g. " (>= 0.5 deg and <= 30 deg)" for an
// angle stored in rad; empty when that unit is the stored one or unknown.
std::string range_in_unit(const Range& range, std::string_view stored, const std::string& unit) {
  if (unit.empty() || unit == stored) return {};
  try {
    Range shown = range;
    shown.min = convert(range.min, stored, unit);
    shown.max = convert(range.max, stored, unit);
    return " (" + shown.describe(unit) + ")";
  } catch (const UnitError&) {
    return {};
  }
}

int line_of(const toml::source_region& region) { return std::max(1, static_cast<int>(region.begin.line)); }

// Maps one parsed TOML document onto a Scenario, stopping at the first
// problem with a message "source:line: key: expected ..., got ...".
class Reader {
 public:
  explicit Reader(std::string source) : source_(std::move(source)) {}

  Scenario read(const toml::table& root) {
    Scenario scenario;
    const toml::node* events = nullptr;
    for (const auto& [key, node] : in_file_order(root)) {
      const std::string name(key->str());
      if (name == "events") {
        events = node;
      } else if (!node->is_table()) {
        fail(line_of(key->source()), name, "a key outside any section" + did_you_mean(name, known_keys()));
      } else if (std::find(known_sections().begin(), known_sections().end(), name) == known_sections().end()) {
        fail(
            line_of(key->source()), name,
            "unknown section [" + name + "]; expected one of " + section_list() + did_you_mean(name, known_sections()));
      } else {
        section_lines_[name] = line_of(node->source());
        read_section(name, *node->as_table(), scenario);
      }
    }
    check_consistency_of(scenario);
    check_sample_count(scenario.settings);
    // Events last: their times are checked against the duration.
    if (events) read_events(*events, scenario);
    sort_events(scenario.events);
    // Legal but probably not meant: the plausibility rules (plausibility.hpp).
    for (std::string& w : relation_warnings(scenario, source_, written_)) warnings_.push_back(std::move(w));
    scenario.warnings.insert(scenario.warnings.end(), warnings_.begin(), warnings_.end());
    return scenario;
  }

 private:
  using Entry = std::pair<const toml::key*, const toml::node*>;

  // toml++ keeps tables sorted by key; reading in file order makes the first
  // problem reported the first one in the file.
  static std::vector<Entry> in_file_order(const toml::table& table) {
    std::vector<Entry> entries;
    for (const auto& [key, node] : table) entries.emplace_back(&key, &node);
    std::stable_sort(entries.begin(), entries.end(), [](const Entry& a, const Entry& b) {
      const auto& pa = a.first->source().begin;
      const auto& pb = b.first->source().begin;
      return pa.line != pb.line ? pa.line < pb.line : pa.column < pb.column;
    });
    return entries;
  }

  static std::string section_list() {
    std::string list;
    for (const std::string& s : known_sections()) list += "[" + s + "], ";
    return list + "[[events]]";
  }

  [[noreturn]] void fail(int line, const std::string& key, const std::string& what) const {
    throw ScenarioError(source_ + ":" + std::to_string(line) + ": " + key + ": " + what);
  }

  std::string location(const toml::node& node) const { return source_ + ":" + std::to_string(line_of(node.source())); }

  void read_section(const std::string& section, const toml::table& table, Scenario& scenario) {
    for (const auto& [key, node] : in_file_order(table)) {
      const std::string full = section + "." + std::string(key->str());
      key_lines_[full] = line_of(node->source());
      if (full == kNameKey) {
        scenario.name = read_string(*node, full);
      } else if (full == kDescriptionKey) {
        scenario.description = read_string(*node, full);
      } else if (const ParameterSpec* p = find_parameter(full)) {
        read_field(*p, *node, scenario.parameters);
      } else if (const SettingSpec* s = find_setting(full)) {
        read_field(*s, *node, scenario.settings);
      } else {
        fail(line_of(key->source()), full, "unknown key" + did_you_mean(full, known_keys()));
      }
    }
  }

  std::string read_string(const toml::node& node, const std::string& key) const {
    if (const auto* s = node.as_string()) return s->get();
    fail(line_of(node.source()), key, "expected a string in quotes, got " + describe(node));
  }

  // A TOML number in `unit`, or a string "number unit" converted to `unit`.
  double read_quantity(const toml::node& node, const std::string& key, std::string_view unit,
                       const std::string& example) const {
    if (const auto* i = node.as_integer()) return static_cast<double>(i->get());
    if (const auto* f = node.as_floating_point()) return f->get();
    if (const auto* s = node.as_string()) {
      try {
        return convert_to(s->get(), unit);
      } catch (const UnitError& e) {
        fail(line_of(node.source()), key, e.what());
      }
    }
    std::string expected = quantity_name(unit);
    if (unit != "-") expected += " (a number in " + std::string(unit) + ", or a string such as \"" + example + "\")";
    fail(line_of(node.source()), key, "expected " + expected + ", got " + describe(node));
  }

  template <class Owner>
  void read_field(const FieldSpec<Owner>& spec, const toml::node& node, Owner& owner) {
    const std::string key(spec.key);
    if (spec.is_flag()) {
      const auto* b = node.as_boolean();
      if (!b) fail(line_of(node.source()), key, "expected true or false, got " + describe(node));
      spec.set(owner, b->get() ? 1.0 : 0.0);
      return;
    }
    if (spec.is_choice()) {
      const auto* word = node.as_string();
      const std::optional<double> value = word ? spec.value_of_word(word->get()) : std::nullopt;
      if (!value) fail(line_of(node.source()), key, "expected " + spec.choices_text() + ", got " + describe(node));
      spec.set(owner, *value);
      return;
    }
    if (const auto* word = node.as_string(); word && !spec.none_word.empty() && word->get() == spec.none_word) {
      spec.set(owner, spec.none_value);
      return;
    }
    const double value = read_quantity(node, key, spec.unit, example_of(spec));
    note_written(key, node, value);
    if (!spec.range.contains(value)) {
      const std::string unit = spec.unit == "-" ? "" : " " + std::string(spec.unit);
      std::string expected = quantity_name(spec.unit) + " " + spec.range.describe(spec.unit);
      if (!spec.none_word.empty()) expected += ", or \"" + std::string(spec.none_word) + "\"";
      std::string got = format_number(value) + unit;
      if (const auto* s = node.as_string()) {
        expected += range_in_unit(spec.range, spec.unit, unit_part(s->get()));
        got = string_literal(s->get()) + " = " + got;
      }
      fail(line_of(node.source()), key, "expected " + expected + ", got " + got);
    }
    spec.set(owner, value);
  }

  // How a value was written, and a warning when it is legal but implausible.
  void note_written(const std::string& key, const toml::node& node, double value, const std::string& name = "") {
    WrittenValue w;
    w.line = line_of(node.source());
    w.plain_number = node.is_number();
    const auto* text = node.as_string();
    w.as_read = text ? string_literal(text->get()) : format_number(value);
    if (const auto i = node.as_integer()) w.as_read = std::to_string(i->get());
    const std::string where = source_ + ":" + std::to_string(w.line);
    if (auto warning = plausibility_warning(where, key, value, w.plain_number, w.as_read)) {
      if (!name.empty()) warning->insert(where.size() + 2, name + ": ");  // "file:7: events[0].to: ..."
      warnings_.push_back(std::move(*warning));
    }
    if (name.empty()) written_[key] = std::move(w);
  }

  // The key's default in its display unit, e.g. "210 bar", as a hint.
  template <class Owner>
  static std::string example_of(const FieldSpec<Owner>& spec) {
    try {
      const double shown = convert(spec.default_value, spec.unit, spec.metric_unit);
      char buffer[32];
      const auto end = std::to_chars(buffer, buffer + sizeof buffer, shown, std::chars_format::general, 6).ptr;
      return std::string(buffer, end) + " " + std::string(spec.metric_unit);
    } catch (const UnitError&) {
      return "1 " + std::string(spec.unit);
    }
  }

  int line_of_key(std::string_view key, int fallback) const {
    const auto it = key_lines_.find(std::string(key));
    return it != key_lines_.end() ? it->second : fallback;
  }

  int section_line(const std::string& section) const {
    const auto it = section_lines_.find(section);
    return it != section_lines_.end() ? it->second : 1;
  }

  // Relations between parameters; the message starts with the key it is about.
  void check_consistency_of(const Scenario& scenario) const {
    const ModelParameters& p = scenario.parameters;
    if (p.line_length > 0.0 && p.line_bore > 0.0 && key_lines_.count("line.volume"))
      throw ScenarioError(source_ + ":" + std::to_string(key_lines_.at("line.volume")) +
                          ": line.volume and line.length and line.bore are all given: the geometry gives the "
                          "volume; remove one or the other");
    const std::vector<std::string> problems = check_consistency(scenario.parameters);
    if (problems.empty()) return;
    const std::string& problem = problems.front();
    const std::string key = problem.substr(0, problem.find(' '));
    const int line = line_of_key(key, section_line(find_parameter(key) ? std::string(section_of(key)) : "compensator"));
    throw ScenarioError(source_ + ":" + std::to_string(line) + ": " + problem);
  }

  void check_sample_count(const RunSettings& settings) const {
    const double samples = settings.duration / settings.sample_interval;
    if (samples <= kMaxSamples) return;
    char count[32];
    const auto end = std::to_chars(count, count + sizeof count, samples, std::chars_format::general, 3).ptr;
    const std::string key = "scenario.sample_interval";
    fail(line_of_key(key, line_of_key("scenario.duration", section_line("scenario"))), key,
         "a sample every " + format_number(settings.sample_interval) + " s over " + format_number(settings.duration) +
             " s gives " + std::string(count, end) +
             " samples; at most 1e8 are allowed (choose a longer sample_interval or a shorter duration)");
  }

  void read_events(const toml::node& node, Scenario& scenario) {
    const auto* array = node.as_array();
    if (!array)
      fail(line_of(node.source()), "events", "expected [[events]] tables (an array of tables), got " + describe(node));
    for (std::size_t i = 0; i < array->size(); ++i) {
      const std::string name = "events[" + std::to_string(i) + "]";
      const toml::node& element = *array->get(i);
      const auto* table = element.as_table();
      if (!table)
        fail(line_of(element.source()), name, "expected a table of at, set, to, ramp, got " + describe(element));
      scenario.events.push_back(read_event(*table, name, scenario));
    }
  }

  Event read_event(const toml::table& table, const std::string& name, const Scenario& scenario) {
    const int line = line_of(table.source());
    const toml::node* fields[std::size(kEventKeys)] = {};  // at, set, to, ramp
    for (const auto& [key, node] : in_file_order(table)) {
      const auto known = std::find(std::begin(kEventKeys), std::end(kEventKeys), key->str());
      if (known == std::end(kEventKeys)) {
        const std::vector<std::string> candidates(std::begin(kEventKeys), std::end(kEventKeys));
        fail(line_of(key->source()), name + "." + std::string(key->str()),
             "unknown key; an event has at, set, to and ramp" + did_you_mean(key->str(), candidates));
      }
      fields[known - std::begin(kEventKeys)] = node;
    }
    const toml::node* at = fields[0];
    const toml::node* set = fields[1];
    const toml::node* to = fields[2];
    const toml::node* ramp = fields[3];
    if (!set) fail(line, name, "missing key \"set\" (the parameter the event changes)");
    if (!at) fail(line, name, "missing key \"at\" (the time of the event)");
    if (!to) fail(line, name, "missing key \"to\" (the value the parameter moves to)");

    Event event;
    event.source_line = line;
    event.target = read_string(*set, name + ".set");

    // Each field is checked on its own, with the others at harmless values,
    // so that the message points at the line of the field that is wrong.
    const ParameterSpec* spec = find_parameter(event.target);
    const Event harmless{0.0, event.target, spec ? spec->default_value : 0.0, 0.0, line};
    const auto check = [&](const toml::node& field, const Event& probe) {
      validate_event(probe, scenario, location(field) + ": " + name);
    };
    check(*set, harmless);  // throws unless the target is a numeric parameter

    event.to = read_quantity(*to, name + ".to", spec->unit, example_of(*spec));
    Event probe = harmless;
    probe.to = event.to;
    check(*to, probe);
    note_written(event.target, *to, event.to, name + ".to");

    event.at = read_quantity(*at, name + ".at", "s", "0.1 s");
    probe = harmless;
    probe.at = event.at;
    check(*at, probe);

    if (ramp) {
      event.ramp = read_quantity(*ramp, name + ".ramp", "s", "5 ms");
      probe = harmless;
      probe.ramp = event.ramp;
      check(*ramp, probe);
    }
    return event;
  }

  std::string source_;
  std::map<std::string, WrittenValue, std::less<>> written_;  // the keys the file sets, as written
  std::vector<std::string> warnings_;
  std::map<std::string, int> key_lines_;      // "line.volume" -> its line in the file
  std::map<std::string, int> section_lines_;  // "compensator" -> the line of its header
};

}  // namespace

Scenario parse_scenario(const std::string& text, const std::string& source_name) {
  // Only text of well-formed shape reaches toml++ (see toml_guard.hpp).
  detail::check_toml_text(text, source_name);
  toml::table root;
  try {
    root = toml::parse(std::string_view(text), std::string_view(source_name));
  } catch (const toml::parse_error& e) {
    const auto& begin = e.source().begin;
    throw ScenarioError(source_name + ":" + std::to_string(begin.line) + ":" + std::to_string(begin.column) +
                        ": malformed TOML: " + std::string(e.description()));
  }
  Scenario scenario = Reader(source_name).read(root);
  if (root.empty())
    scenario.warnings.push_back(source_name +
                                ": the file sets nothing (it is empty or holds only comments), so this is the "
                                "default study: every parameter at its default and no events. Is it the file you "
                                "meant?");
  return scenario;
}

Scenario load_scenario(const std::string& path) {
  std::string text;
  try {
    text = read_file(path);
  } catch (const FileError& e) {
    throw ScenarioError(e.what());
  }
  return parse_scenario(text, path);
}

std::string scenario_to_toml(const Scenario& scenario) {
  std::ostringstream out;
  out << "# Swashtune scenario. Plain numbers are in the stored units: SI, pump speed in rev/min.\n";
  for (const std::string& section : known_sections()) {
    std::string body;
    const auto add = [&body](std::string_view key, const std::string& value) {
      body += std::string(name_in_section(key)) + " = " + value + "\n";
    };
    if (section == section_of(kNameKey)) {
      add(kNameKey, string_literal(scenario.name));
      add(kDescriptionKey, string_literal(scenario.description));
    }
    for (const SettingSpec& spec : setting_registry())
      if (section_of(spec.key) == section) add(spec.key, float_literal(spec.get(scenario.settings)));
    for (const ParameterSpec& spec : parameter_registry()) {
      if (section_of(spec.key) != section) continue;
      const double value = spec.get(scenario.parameters);
      if (value == spec.default_value) continue;
      const std::optional<std::string_view> word = spec.word_for(value);
      add(spec.key, spec.is_flag() ? (value != 0.0 ? "true" : "false")
                    : word         ? string_literal(*word)
                                   : float_literal(value));
    }
    if (!body.empty()) out << "\n[" << section << "]\n" << body;
  }
  for (const Event& event : scenario.events) {
    out << "\n[[events]]\n"
        << "at = " << float_literal(event.at) << "\n"
        << "set = " << string_literal(event.target) << "\n"
        << "to = " << float_literal(event.to) << "\n"
        << "ramp = " << float_literal(event.ramp) << "\n";
  }
  return out.str();
}

std::string scenario_to_json(const Scenario& scenario) {
  // JSON has no NaN or infinity; null keeps the document valid.
  const auto number = [](double v) { return std::isfinite(v) ? float_literal(v) : std::string("null"); };
  const RunSettings& s = scenario.settings;
  std::ostringstream out;
  out << "{\n"
      << "  \"scenario\": {\"name\": " << string_literal(scenario.name) << ", \"duration_s\": " << number(s.duration)
      << ", \"sample_interval_s\": " << number(s.sample_interval) << "},\n"
      << "  \"solver\": {\"rtol\": " << number(s.rtol) << ", \"atol\": " << number(s.atol)
      << ", \"max_step_s\": " << number(s.max_step) << "},\n"
      << "  \"parameters\": {";
  const char* separator = "\n";
  for (const ParameterSpec& spec : parameter_registry()) {
    const double value = spec.get(scenario.parameters);
    out << separator << "    " << string_literal(spec.key) << ": "
        << (spec.is_flag() ? (value != 0.0 ? "true" : "false") : number(value));
    separator = ",\n";
  }
  out << "\n  },\n"
      << "  \"initial_state\": null,\n"
      << "  \"events\": [";
  separator = "\n";
  for (const Event& e : scenario.events) {
    out << separator << "    {\"at_s\": " << number(e.at) << ", \"target\": " << string_literal(e.target)
        << ", \"to\": " << number(e.to) << ", \"ramp_s\": " << number(e.ramp) << "}";
    separator = ",\n";
  }
  out << (scenario.events.empty() ? "]\n" : "\n  ]\n") << "}\n";
  return out.str();
}

}  // namespace swashtune
