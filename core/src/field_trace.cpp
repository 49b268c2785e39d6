#include "swashtune/field_trace.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstddef>
#include <iomanip>
#include <locale>
#include <sstream>
#include <string_view>
#include <system_error>
#include <utility>

#include "swashtune/atomic_file.hpp"
#include "swashtune/units.hpp"

namespace swashtune {
namespace {

enum class Role { time, pressure, flow };
constexpr std::array<Role, 3> kRoles = {Role::time, Role::pressure, Role::flow};

struct RoleInfo {
  const char* name;
  Dimension dimension;
  const char* example_unit;     // for "give one in the header, e.g. ..."
  const char* example_headers;  // for "no ... column found"
};

const RoleInfo& info(Role r) {
  static const RoleInfo table[] = {
      {"time", dim::time, "s", "time, t, time_s or \"t [ms]\""},
      {"pressure", dim::pressure, "bar", "pressure, p, p_bar or \"pressure (psi)\""},
      {"flow", dim::flow, "L/min", "flow, q, flow_L_min or \"Q [gpm]\""},
  };
  return table[static_cast<int>(r)];
}

const std::optional<std::string>& column_option(const FieldTraceOptions& o, Role r) {
  return r == Role::time ? o.time_column : r == Role::pressure ? o.pressure_column : o.flow_column;
}
const std::optional<std::string>& unit_option(const FieldTraceOptions& o, Role r) {
  return r == Role::time ? o.time_unit : r == Role::pressure ? o.pressure_unit : o.flow_unit;
}

// ---------------------------------------------------------------- text helpers

bool is_space(char c) { return c == ' ' || c == '\t' || c == '\v' || c == '\f' || c == '\r' || c == '\n'; }
bool is_digit(char c) { return c >= '0' && c <= '9'; }
bool is_letter(char c) { return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z'); }

std::string_view trim(std::string_view s) {
  while (!s.empty() && is_space(s.front())) s.remove_prefix(1);
  while (!s.empty() && is_space(s.back())) s.remove_suffix(1);
  return s;
}

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out)
    if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
  return out;
}

bool iequal(std::string_view a, std::string_view b) { return lower(a) == lower(b); }

// Text from the file, quoted for a message: shortened, control bytes escaped,
// so that a binary file still gives a one-line, readable message.
std::string shown(std::string_view s) {
  constexpr std::size_t kMax = 40;
  bool cut = false;
  if (s.size() > kMax) {
    std::size_t n = kMax;
    while (n > 0 && (static_cast<unsigned char>(s[n]) & 0xC0) == 0x80) --n;  // not inside a UTF-8 character
    s = s.substr(0, n);
    cut = true;
  }
  std::string out = "\"";
  for (char c : s) {
    const auto u = static_cast<unsigned char>(c);
    if (u < 0x20 || u == 0x7F) {
      static const char hex[] = "0123456789abcdef";
      out += "\\x";
      out += hex[u >> 4];
      out += hex[u & 0xF];
    } else {
      out += c;
    }
  }
  out += cut ? "...\"" : "\"";
  return out;
}

std::string shown_list(const std::vector<std::string>& items) {
  std::string out;
  for (std::size_t i = 0; i < items.size(); ++i) out += (i ? ", " : "") + shown(items[i]);
  return out;
}

std::string with_article(const std::string& noun) {
  const bool vowel = !noun.empty() && std::string_view("aeiou").find(noun.front()) != std::string_view::npos;
  return (vowel ? "an " : "a ") + noun;
}

// Two times in seconds with just enough digits to tell them apart ("0.0195"
// and "0.0200"), independent of the C locale a desktop session may set.
std::pair<std::string, std::string> distinct_numbers(double a, double b) {
  std::pair<std::string, std::string> out;
  for (int precision = 3; precision <= 17; ++precision) {
    std::ostringstream x, y;
    x.imbue(std::locale::classic());
    y.imbue(std::locale::classic());
    x << std::showpoint << std::setprecision(precision) << a;
    y << std::showpoint << std::setprecision(precision) << b;
    out = {x.str(), y.str()};
    if (out.first != out.second || a == b) break;
  }
  return out;
}

[[noreturn]] void fail(const std::string& source, std::size_t line, const std::string& what) {
  throw FieldTraceError(source + ":" + std::to_string(line) + ": " + what);
}

// ---------------------------------------------------------------- lines and fields

struct Line {
  std::size_t number;  // 1-based
  std::string_view text;
};

// The header and data lines: blank lines and '#' comments are dropped; "\n",
// "\r\n" and a lone "\r" all end a line.
std::vector<Line> content_lines(std::string_view text) {
  if (text.substr(0, 3) == "\xEF\xBB\xBF") text.remove_prefix(3);  // UTF-8 byte order mark
  std::vector<Line> lines;
  std::size_t number = 1, start = 0;
  for (std::size_t i = 0; i <= text.size(); ++i) {
    if (i < text.size() && text[i] != '\n' && text[i] != '\r') continue;
    const std::string_view line = trim(text.substr(start, i - start));
    if (!line.empty() && line.front() != '#') lines.push_back({number, line});
    if (i + 1 < text.size() && text[i] == '\r' && text[i + 1] == '\n') ++i;
    start = i + 1;
    ++number;
  }
  return lines;
}

struct Fields {
  std::vector<std::string> values;  // trimmed, quotes removed
  bool unterminated_quote = false;
};

// Splits one line; a field in double quotes may hold the separator, and ""
// inside quotes is one quote (as spreadsheet programs write CSV).
Fields split(std::string_view line, char separator) {
  Fields f;
  std::string field;
  bool in_quotes = false;
  auto finish = [&] {
    f.values.emplace_back(trim(field));
    field.clear();
  };
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (in_quotes) {
      if (c != '"') {
        field += c;
      } else if (i + 1 < line.size() && line[i + 1] == '"') {
        field += '"';
        ++i;
      } else {
        in_quotes = false;
      }
    } else if (c == separator) {
      finish();
    } else if (c == '"' && trim(field).empty()) {
      field.clear();
      in_quotes = true;
    } else {
      field += c;
    }
  }
  f.unterminated_quote = in_quotes;
  finish();
  return f;
}

// The separator that gives the header at least two columns and agrees with
// the most of the first data rows. On a tie tab and ';' win over ',', since
// ',' may then be a decimal comma inside the numbers.
char detect_separator(const std::vector<Line>& lines) {
  constexpr std::size_t kRowsLooked = 5;
  char best = 0;
  std::size_t best_agreeing = 0;
  for (char separator : {'\t', ';', ','}) {
    const std::size_t columns = split(lines[0].text, separator).values.size();
    if (columns < 2) continue;
    std::size_t agreeing = 0;
    for (std::size_t i = 1; i < lines.size() && i <= kRowsLooked; ++i)
      if (split(lines[i].text, separator).values.size() == columns) ++agreeing;
    if (best == 0 || agreeing > best_agreeing) {
      best = separator;
      best_agreeing = agreeing;
    }
  }
  return best;
}

// ---------------------------------------------------------------- numbers

struct Number {
  double value = 0.0;
  std::string error;  // empty when the text is a number
};

// "1,234", "1.234.567", "1 234", "1'234,5": a group of 1-3 digits followed by
// groups of exactly three, each after one separator character.
bool looks_like_thousands(std::string_view s) {
  if (!s.empty() && (s.front() == '+' || s.front() == '-')) s.remove_prefix(1);
  std::size_t i = 0, lead = 0;
  while (i < s.size() && is_digit(s[i])) ++i, ++lead;
  if (lead < 1 || lead > 3) return false;
  int groups = 0;
  while (i + 3 < s.size() && std::string_view(",. '").find(s[i]) != std::string_view::npos && is_digit(s[i + 1]) &&
         is_digit(s[i + 2]) && is_digit(s[i + 3]) && (i + 4 == s.size() || !is_digit(s[i + 4]))) {
    i += 4;
    ++groups;
  }
  if (groups == 0) return false;
  if (i < s.size() && (s[i] == '.' || s[i] == ',')) {  // decimal part
    ++i;
    while (i < s.size() && is_digit(s[i])) ++i;
  }
  return i == s.size();
}

// Parses one field. from_chars: exact, locale-independent, no hexadecimal.
Number parse_number(std::string_view text, bool decimal_comma) {
  Number n;
  const std::string_view s = trim(text);
  if (s.empty()) {
    n.error = "expected a number, got an empty field";
    return n;
  }
  const std::string got = "expected a number, got " + shown(s);
  std::string normal(s);
  if (decimal_comma) {
    if (normal.find('.') != std::string::npos || std::count(normal.begin(), normal.end(), ',') > 1) {
      n.error = got + " (this file writes decimals with a comma; thousands separators are not supported)";
      return n;
    }
    std::replace(normal.begin(), normal.end(), ',', '.');
  }
  const char* begin = normal.data();
  const char* end = normal.data() + normal.size();
  if (begin != end && *begin == '+') {
    ++begin;
    if (begin != end && *begin == '-') --begin;  // "+-5" is refused, not read as -5
  }
  const auto [stop, error] = std::from_chars(begin, end, n.value);
  if (error == std::errc::result_out_of_range) {
    n.error = got + ", which is out of range";
  } else if (error != std::errc() || stop != end || begin == end) {
    n.error = got;
    if (looks_like_thousands(s))
      n.error += " (thousands separators are not supported)";
    else if (!decimal_comma && s.find(',') != std::string_view::npos)
      n.error += " (a decimal comma needs ';' or tab separators; thousands separators are not supported)";
  } else if (!std::isfinite(n.value)) {
    n.error = "expected a finite number, got " + shown(s);
  }
  return n;
}

bool is_number(std::string_view text) {
  return parse_number(text, false).error.empty() || parse_number(text, true).error.empty();
}

// ---------------------------------------------------------------- units

// Headers often write exponents without '^' ("m3/s"), a micro sign ("µs")
// or "lpm"; this rewrites those for core's parse_unit.
std::string normal_unit_text(std::string_view text) {
  std::string t(trim(text));
  for (std::string_view micro : {"\xC2\xB5", "\xCE\xBC"}) {  // U+00B5 and U+03BC
    for (std::size_t at = t.find(micro); at != std::string::npos; at = t.find(micro)) t.replace(at, micro.size(), "u");
  }
  std::string out;
  for (std::size_t i = 0; i < t.size(); ++i) {
    if (is_digit(t[i]) && i > 0 && is_letter(t[i - 1])) out += '^';
    out += t[i];
  }
  if (out == "lpm") return "L/min";
  if (out == "sec") return "s";
  return out;
}

// Raised for "psia", "bara": the trace holds gauge pressure, and the local
// atmospheric pressure needed to convert is not known.
class AbsolutePressure : public UnitError {
 public:
  using UnitError::UnitError;
};

// core's parse_unit, after normal_unit_text, also taking "psig" and "barg"
// (gauge, which is what the trace holds). Throws UnitError.
Unit parse_header_unit(std::string_view text) {
  constexpr std::size_t kLongest = 40;  // also keeps the recursive unit parser shallow
  const std::string t = normal_unit_text(text);
  if (t.empty()) throw UnitError("the unit is empty");
  if (t.size() > kLongest) throw UnitError("unknown unit " + shown(t) + ": too long to be a unit");
  try {
    return parse_unit(t);
  } catch (const UnitError&) {
    const char mark = t.back();
    if (t.size() >= 2 && (mark == 'g' || mark == 'a')) {
      std::optional<Unit> base;
      try {
        base = parse_unit(t.substr(0, t.size() - 1));
      } catch (const UnitError&) {
      }
      if (base && base->dimension == dim::pressure) {
        if (mark == 'g') return *base;  // "psig", "barg"
        throw AbsolutePressure(shown(t) + " is an absolute pressure; the trace must be gauge pressure");
      }
    }
    throw;  // the problem with the unit as written
  }
}

// ---------------------------------------------------------------- header

struct Column {
  std::size_t index = 0;  // 0-based
  std::string text;       // as in the header
  std::string base;       // without the unit
  std::string unit_text;  // empty when the header gives none
  std::string key;        // base for matching names, see describe()
};

std::vector<std::string> words(std::string_view s) {
  std::vector<std::string> out;
  std::string word;
  for (char c : s) {
    if (c == '_' || c == ' ' || c == '-' || c == '\t') {
      if (!word.empty()) out.push_back(std::move(word));
      word.clear();
    } else {
      word += c;
    }
  }
  if (!word.empty()) out.push_back(std::move(word));
  return out;
}

std::string join(const std::vector<std::string>& parts, std::size_t from, std::size_t to, const char* glue) {
  std::string out;
  for (std::size_t i = from; i < to; ++i) out += (i > from ? glue : "") + parts[i];
  return out;
}

// Whether a word run from a header name is the unit of one of the three
// quantities. Only those: "p_in_bar" is "p_in" in bar, not "p" in in/bar.
bool is_trace_unit(const std::string& text) {
  try {
    const Dimension d = parse_header_unit(text).dimension;
    return d == dim::time || d == dim::pressure || d == dim::flow;
  } catch (const AbsolutePressure&) {
    return true;  // a unit all the same; refused with its reason once the column is used
  } catch (const UnitError&) {
    return false;
  }
}

// Splits a header name into name and unit:
// - a bracketed unit at the end: "t [ms]", "Time (s)";
// - trailing words (at most three, "per" skipped, at least one word of name
//   left, the longest that is a unit): "time_s", "p_bar", "pump_flow_L_min"
//   (-> "L/min"), "flow_m3_s" (-> "m^3/s"), "flow_L_per_min";
// - quantity/unit: "t/ms", "Q/(L/min)".
Column describe(std::size_t index, const std::string& text) {
  Column c;
  c.index = index;
  c.text = text;
  c.base = text;
  const char close = text.empty() ? '\0' : text.back();
  const std::size_t open = close == ']' ? text.rfind('[') : close == ')' ? text.rfind('(') : std::string::npos;
  const std::size_t slash = text.find('/');
  if (open != std::string::npos) {
    c.base = std::string(trim(std::string_view(text).substr(0, open)));
    c.unit_text = std::string(trim(std::string_view(text).substr(open + 1, text.size() - open - 2)));
  } else {
    const std::vector<std::string> w = words(text);
    for (std::size_t k = std::min<std::size_t>(3, w.size() > 0 ? w.size() - 1 : 0); k >= 1; --k) {
      std::vector<std::string> unit_words;
      for (std::size_t i = w.size() - k; i < w.size(); ++i)
        if (!(i > w.size() - k && iequal(w[i], "per"))) unit_words.push_back(w[i]);
      const std::string unit = join(unit_words, 0, unit_words.size(), "/");
      if (!is_trace_unit(unit)) continue;
      c.base = join(w, 0, w.size() - k, "_");
      c.unit_text = unit;
      break;
    }
    if (c.unit_text.empty() && slash != std::string::npos && slash > 0 && is_trace_unit(text.substr(slash + 1))) {
      c.base = std::string(trim(std::string_view(text).substr(0, slash)));
      c.unit_text = std::string(trim(std::string_view(text).substr(slash + 1)));
    }
  }
  // The key: lower case, any run of other characters than letters and
  // digits one '_' ("Pressure, outlet" -> "pressure_outlet").
  for (char ch : lower(c.base)) {
    if (is_letter(ch) || is_digit(ch))
      c.key += ch;
    else if (!c.key.empty() && c.key.back() != '_')
      c.key += '_';
  }
  if (!c.key.empty() && c.key.back() == '_') c.key.pop_back();
  return c;
}

// 2: the name is the quantity ("time", "p", "flow_rate"); 1: one of its words
// is ("discharge_pressure", "pump_flow", "p_pilot", "q_load"); 0: unrelated.
int name_score(const std::string& key, Role role) {
  static const std::vector<std::string> exact[] = {{"time", "t"}, {"pressure", "p"}, {"flow", "q", "flow_rate"}};
  static const std::vector<std::string> word[] = {{"time", "elapsed"}, {"pressure"}, {"flow", "flowrate"}};
  static const char* leading[] = {"t", "p", "q"};
  const int r = static_cast<int>(role);
  for (const std::string& name : exact[r])
    if (key == name) return 2;
  const std::vector<std::string> w = words(key);
  for (std::size_t i = 0; i < w.size(); ++i) {
    if (i == 0 && w[i] == leading[r]) return 1;
    for (const std::string& name : word[r])
      if (w[i] == name) return 1;
  }
  return 0;
}

struct Chosen {
  std::optional<std::size_t> column;
  Unit unit;
};

class Reader {
 public:
  Reader(std::string_view text, std::string source, const FieldTraceOptions& options)
      : source_(std::move(source)), options_(options), lines_(content_lines(text)) {}

  FieldTrace read() {
    if (lines_.empty()) fail(source_, 1, "no header row: the file is empty or has only blank and '#' lines");
    header_line_ = lines_[0].number;
    read_header();
    if (lines_.size() < 2) fail(source_, header_line_, "no data rows after the header");
    if (lines_.size() < 3) fail(source_, lines_[1].number, "only one data row; a trace needs at least two");

    FieldTrace trace;
    trace.source = source_;
    trace.time_header = columns_[*chosen(Role::time).column].text;
    trace.pressure_header = columns_[*chosen(Role::pressure).column].text;
    if (chosen(Role::flow).column) trace.flow_header = columns_[*chosen(Role::flow).column].text;
    read_rows(trace);
    return trace;
  }

 private:
  Chosen& chosen(Role r) { return chosen_[static_cast<int>(r)]; }

  [[noreturn]] void fail_header(const std::string& what) const { fail(source_, header_line_, what); }

  void read_header() {
    separator_ = detect_separator(lines_);
    if (separator_ == 0)
      fail_header("the header " + shown(lines_[0].text) +
                  " has only one column; expected columns separated by commas, semicolons or tabs, such as "
                  "\"time_s,pressure_bar\"");
    const Fields header = split(lines_[0].text, separator_);
    if (header.unterminated_quote) fail_header("a quote in the header is not closed");
    if (std::all_of(header.values.begin(), header.values.end(), is_number))
      fail_header(
          "the first row holds numbers, not column names; the file needs a header row such as "
          "\"time_s,pressure_bar\"");
    for (std::size_t i = 0; i < header.values.size(); ++i) columns_.push_back(describe(i, header.values[i]));

    // Columns named by an option first, so that detection does not take them.
    for (Role r : kRoles) chosen(r).column = column_from_option(r);
    for (Role r : kRoles)
      if (!chosen(r).column && !column_option(options_, r)) chosen(r).column = detect_column(r);
    for (Role r : kRoles)
      if (chosen(r).column) chosen(r).unit = unit_for(r, columns_[*chosen(r).column]);
  }

  bool taken(std::size_t index, Role except) {
    for (Role r : kRoles)
      if (r != except && chosen(r).column == index) return true;
    return false;
  }

  std::optional<std::size_t> column_from_option(Role r) {
    const std::optional<std::string>& option = column_option(options_, r);
    if (!option) return std::nullopt;
    const std::string name(trim(*option));
    const std::string what = std::string(info(r).name) + " column option " + shown(name);
    if (r == Role::flow && iequal(name, "none")) return std::nullopt;
    if (name.empty()) fail_header(what + " is empty");

    std::optional<std::size_t> found;
    for (bool by_base : {false, true}) {
      for (const Column& c : columns_) {
        if (!iequal(by_base ? c.base : c.text, name)) continue;
        if (found) fail_header(what + ": the header has more than one column of that name; give its number");
        found = c.index;
      }
      if (found) break;
    }
    if (!found && std::all_of(name.begin(), name.end(), is_digit)) {
      std::size_t number = 0;
      const auto [end, error] = std::from_chars(name.data(), name.data() + name.size(), number);
      if (error != std::errc() || end != name.data() + name.size() || number < 1 || number > columns_.size())
        fail_header(what + ": the header has " + std::to_string(columns_.size()) + " columns, numbered from 1");
      found = number - 1;
    }
    if (!found) fail_header(what + ": no such column; the header has " + header_names());
    for (Role other : kRoles)
      if (other != r && chosen(other).column == found)
        fail_header(what + ": that column is already the " + info(other).name + " column");
    return found;
  }

  std::string header_names() const {
    std::vector<std::string> names;
    for (const Column& c : columns_) names.push_back(c.text);
    return shown_list(names);
  }

  // How well a column's header unit fits the quantity: 2 it fits, 1 none
  // given, 0 it does not. This ranks before the name, so "t [s]" is the time
  // even beside "T [degC]".
  int unit_fit(Role r, const Column& c) const {
    if (c.unit_text.empty()) return 1;
    try {
      return parse_header_unit(c.unit_text).dimension == info(r).dimension ? 2 : 0;
    } catch (const UnitError&) {
      return 0;
    }
  }

  std::optional<std::size_t> detect_column(Role r) {
    std::vector<const Column*> best;
    std::pair<int, int> best_rank{0, 0};
    for (const Column& c : columns_) {
      const int score = name_score(c.key, r);
      if (score == 0 || taken(c.index, r)) continue;
      const std::pair<int, int> rank{unit_fit(r, c), score};
      if (best.empty() || rank > best_rank) {
        best = {&c};
        best_rank = rank;
      } else if (rank == best_rank) {
        best.push_back(&c);
      }
    }
    const std::string name = info(r).name;
    if (best.size() > 1) {
      std::vector<std::string> names;
      for (const Column* c : best) names.push_back(c->text);
      fail_header("several columns could be the " + name + ": " + shown_list(names) + "; choose one with the " + name +
                  " column option");
    }
    if (best.empty()) {
      if (r == Role::flow) return std::nullopt;  // flow is optional
      fail_header("no " + name + " column in the header (" + header_names() + "); name it " + info(r).example_headers +
                  ", or choose one with the " + name + " column option");
    }
    return best.front()->index;
  }

  // The option wins over the header; no unit at all is an error, since a
  // guessed unit would silently scale the whole trace.
  Unit unit_for(Role r, const Column& c) const {
    const RoleInfo& role = info(r);
    const std::string name = role.name;
    std::string label, text;
    if (const std::optional<std::string>& option = unit_option(options_, r)) {
      label = name + " unit option " + shown(*option);
      text = *option;
    } else if (!c.unit_text.empty()) {
      label = name + " column " + shown(c.text);
      text = c.unit_text;
    } else {
      const std::string base = c.base.empty() ? c.text : c.base;
      fail_header(name + " column " + shown(c.text) + " has no unit; give one in the header, e.g. \"" + base + " [" +
                  role.example_unit + "]\", or with the " + name + " unit option");
    }
    Unit unit;
    try {
      unit = parse_header_unit(text);
    } catch (const UnitError& e) {
      fail_header(label + ": " + e.what());
    }
    if (unit.dimension != role.dimension)
      fail_header(label + ": " + shown(trim(text)) + " is " + with_article(dimension_name(unit.dimension)) +
                  " unit, not " + with_article(dimension_name(role.dimension)) + " unit");
    return unit;
  }

  void read_rows(FieldTrace& trace) {
    std::vector<Fields> rows;
    rows.reserve(lines_.size() - 1);
    for (std::size_t i = 1; i < lines_.size(); ++i) rows.push_back(split(lines_[i].text, separator_));

    // A decimal comma is only possible when ',' does not separate columns.
    bool decimal_comma = false;
    if (separator_ != ',')
      for (const Fields& f : rows)
        for (Role r : kRoles)
          if (chosen(r).column && *chosen(r).column < f.values.size() &&
              f.values[*chosen(r).column].find(',') != std::string::npos)
            decimal_comma = true;

    for (std::size_t i = 0; i < rows.size(); ++i) {
      const std::size_t line = lines_[i + 1].number;
      const Fields& f = rows[i];
      if (f.unterminated_quote) fail(source_, line, "a quote is not closed");
      if (f.values.size() != columns_.size())
        fail(source_, line,
             "found " + std::to_string(f.values.size()) + " columns, but the header (line " +
                 std::to_string(header_line_) + ") has " + std::to_string(columns_.size()) +
                 (separator_ == ',' && f.values.size() > columns_.size()
                      ? "; numbers with a decimal comma need ';' or tab separators"
                      : ""));
      for (Role r : kRoles) {
        if (!chosen(r).column) continue;
        const std::string& text = f.values[*chosen(r).column];
        const Number n = parse_number(text, decimal_comma);
        const std::string name = info(r).name;
        if (!n.error.empty()) fail(source_, line, name + ": " + n.error);
        const double si = n.value * chosen(r).unit.factor + chosen(r).unit.offset;
        if (!std::isfinite(si)) fail(source_, line, name + ": " + shown(text) + " is out of range");
        std::vector<double>& column = r == Role::time ? trace.time : r == Role::pressure ? trace.pressure : trace.flow;
        if (r == Role::time && !column.empty() && !(si > column.back())) {
          const auto [now, before] = distinct_numbers(si, column.back());
          fail(source_, line, "time " + now + " s is not after the previous row's " + before + " s");
        }
        column.push_back(si);
      }
    }
  }

  std::string source_;
  const FieldTraceOptions& options_;
  std::vector<Line> lines_;  // lines_[0] is the header
  std::size_t header_line_ = 0;
  char separator_ = 0;
  std::vector<Column> columns_;
  std::array<Chosen, 3> chosen_{};
};

}  // namespace

FieldTrace parse_field_trace(const std::string& text, const std::string& source_name,
                             const FieldTraceOptions& options) {
  return Reader(text, source_name, options).read();
}

FieldTrace read_field_trace(const std::string& path, const FieldTraceOptions& options) {
  std::string text;
  try {
    text = read_file(path);
  } catch (const FileError& e) {
    throw FieldTraceError(e.what());
  }
  return parse_field_trace(text, path, options);
}

}  // namespace swashtune
