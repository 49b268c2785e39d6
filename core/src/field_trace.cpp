// Reading logger exports (see field_trace.hpp).
//
// Outline: the first lines (up to kDetectLines content lines) are held to
// find the separator, the header row (the line above the first row of
// values; a second row of units below the names is taken in), the preamble
// above it (sample rate, atmospheric pressure), the decimal mark and the time
// format. From there the file streams through a fixed buffer: one row at a
// time is split (string views, no allocation), the used fields are parsed
// (std::from_chars: exact and independent of the C locale) and handed on.
#include "swashtune/field_trace.hpp"

#include <algorithm>
#include <array>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <iomanip>
#include <limits>
#include <locale>
#include <memory>
#include <sstream>
#include <string_view>
#include <system_error>
#include <utility>

#include "swashtune/units.hpp"

namespace swashtune {

const char* channel_name(FieldChannel c) {
  switch (c) {
    case FieldChannel::pressure:
      return "pump outlet pressure";
    case FieldChannel::control_pressure:
      return "control pressure";
    case FieldChannel::load_pressure:
      return "load pressure";
    case FieldChannel::flow:
      return "flow";
    case FieldChannel::speed:
      return "shaft speed";
  }
  return "?";
}

const char* channel_option(FieldChannel c) {
  switch (c) {
    case FieldChannel::pressure:
      return "--pressure-column";
    case FieldChannel::control_pressure:
      return "--control-column";
    case FieldChannel::load_pressure:
      return "--load-column";
    case FieldChannel::flow:
      return "--flow-column";
    case FieldChannel::speed:
      return "--speed-column";
  }
  return "?";
}

bool FieldLayout::any_absolute() const { return std::find(absolute.begin(), absolute.end(), true) != absolute.end(); }

const std::vector<double>& FieldTrace::channel(FieldChannel c) const {
  switch (c) {
    case FieldChannel::pressure:
      return pressure;
    case FieldChannel::control_pressure:
      return control_pressure;
    case FieldChannel::load_pressure:
      return load_pressure;
    case FieldChannel::flow:
      return flow;
    case FieldChannel::speed:
      return speed;
  }
  return pressure;
}

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kDay = 86400.0;
constexpr double kTwoPi = 6.28318530717958647692;
// Lines held to find the header and the layout.
constexpr std::size_t kDetectLines = 200;
// Intervals whose median is the nominal sample interval (gap detection).
constexpr std::size_t kNominalIntervals = 1000;
// An interval longer than this many nominal intervals is a gap.
constexpr double kGapFactor = 1.5;
// Repeated stamps and gaps listed by row (the rest are counted).
constexpr std::size_t kListed = 10;
// More than this fraction of repeated stamps: the clock is coarser than the
// sample rate, and dropping rows would lose most of the recording.
constexpr double kMostlyRepeated = 0.1;
constexpr std::size_t kChunk = std::size_t{1} << 20;
constexpr std::size_t kLongestLine = std::size_t{1} << 24;

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

bool iequal(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i)
    if (std::tolower(static_cast<unsigned char>(a[i])) != std::tolower(static_cast<unsigned char>(b[i]))) return false;
  return true;
}

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

std::string number_text(double v, int precision = 6) {
  std::ostringstream out;
  out.imbue(std::locale::classic());
  out << std::setprecision(precision) << v;
  return out.str();
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

// ---------------------------------------------------------------- lines

// Physical lines of a file or a text: "\n", "\r\n" and a lone "\r" all end a
// line; a UTF-8 byte order mark at the start is dropped. The file streams
// through a buffer of kChunk bytes (longer lines grow it).
class LineReader {
 public:
  explicit LineReader(std::string_view text) : data_(text.data()), end_(text.size()), eof_(true) { skip_bom(); }
  LineReader(std::FILE* file, std::string path) : file_(file), path_(std::move(path)), storage_(kChunk) {
    data_ = storage_.data();
    fill();
    skip_bom();
  }
  ~LineReader() {
    if (file_) std::fclose(file_);
  }
  LineReader(const LineReader&) = delete;
  LineReader& operator=(const LineReader&) = delete;

  // The next line (without its end); false after the last.
  bool next(std::string_view& line) {
    for (;;) {
      if (skip_lf_ && begin_ < end_) {
        if (data_[begin_] == '\n') ++begin_;
        skip_lf_ = false;
      }
      // memchr for '\n', then for a '\r' before it ("\r\n", or a lone "\r").
      const char* start = data_ + begin_;
      const auto* lf = static_cast<const char*>(std::memchr(start, '\n', end_ - begin_));
      const std::size_t limit = lf ? static_cast<std::size_t>(lf - start) : end_ - begin_;
      const auto* cr = static_cast<const char*>(std::memchr(start, '\r', limit));
      if (cr || lf) {
        const std::size_t length = cr ? static_cast<std::size_t>(cr - start) : limit;
        line = std::string_view(start, length);
        skip_lf_ = cr != nullptr;
        begin_ += length + 1;
        ++number_;
        return true;
      }
      if (eof_) {
        if (begin_ == end_) return false;
        line = std::string_view(data_ + begin_, end_ - begin_);
        begin_ = end_;
        ++number_;
        return true;
      }
      fill();
    }
  }
  std::size_t number() const { return number_; }
  std::uint64_t bytes() const { return bytes_; }

 private:
  void skip_bom() {
    if (end_ - begin_ >= 3 && std::memcmp(data_ + begin_, "\xEF\xBB\xBF", 3) == 0) begin_ += 3;
  }
  // Moves the unread rest to the front and reads more after it.
  void fill() {
    const std::size_t rest = end_ - begin_;
    if (begin_ > 0) std::memmove(storage_.data(), storage_.data() + begin_, rest);
    begin_ = 0;
    end_ = rest;
    if (storage_.size() - end_ < kChunk / 2) {
      if (storage_.size() >= kLongestLine)
        throw FieldTraceError(path_ + ":" + std::to_string(number_ + 1) + ": a line longer than " +
                              std::to_string(kLongestLine >> 20) + " MiB; is this a text file?");
      storage_.resize(storage_.size() * 2);
    }
    data_ = storage_.data();
    const std::size_t got = std::fread(storage_.data() + end_, 1, storage_.size() - end_, file_);
    if (got == 0) {
      if (std::ferror(file_)) throw FieldTraceError(path_ + ": cannot read: " + std::strerror(errno));
      eof_ = true;
    }
    end_ += got;
    bytes_ += got;
  }

  std::FILE* file_ = nullptr;
  std::string path_;
  std::vector<char> storage_;
  const char* data_ = nullptr;
  std::size_t begin_ = 0, end_ = 0;
  bool eof_ = false;
  bool skip_lf_ = false;
  std::size_t number_ = 0;
  std::uint64_t bytes_ = 0;
};

// ---------------------------------------------------------------- fields

// Splits one line into trimmed fields. A field in double quotes may hold the
// separator, and "" inside quotes is one quote (as spreadsheet programs write
// CSV); only lines with a quote take the slow path that copies.
class Splitter {
 public:
  // false: a quote is not closed.
  bool split(std::string_view line, char separator) {
    fields_.clear();
    if (line.find('"') == std::string_view::npos) {
      std::size_t start = 0;
      for (;;) {
        const std::size_t at = line.find(separator, start);
        fields_.push_back(trim(line.substr(start, at == std::string_view::npos ? std::string_view::npos : at - start)));
        if (at == std::string_view::npos) return true;
        start = at + 1;
      }
    }
    quoted_.clear();
    std::string field;
    bool in_quotes = false;
    auto finish = [&] {
      quoted_.emplace_back(trim(field));
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
    finish();
    for (const std::string& f : quoted_) fields_.push_back(f);
    return !in_quotes;
  }
  const std::vector<std::string_view>& fields() const { return fields_; }

 private:
  std::vector<std::string_view> fields_;
  std::vector<std::string> quoted_;
};

// ---------------------------------------------------------------- numbers

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

// The common case of a logger's number ("210.104", "-0.0375", "1.5e3"):
// when the digits make an integer w < 2^53 and the power of ten p has
// |p| <= 22, both are exact doubles and w * 10^p (or w / 10^-p) rounds once,
// correctly (W. D. Clinger, "How to read floating point numbers accurately",
// PLDI 1990: the fast path). The result is the one from_chars gives; any
// other text returns false and goes to from_chars.
bool fast_decimal(const char* begin, const char* end, double& value) {
  static const double powers[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,  1e8,  1e9,  1e10, 1e11,
                                  1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
  const char* c = begin;
  const bool negative = c != end && *c == '-';
  if (negative) ++c;
  std::uint64_t w = 0;
  int digits = 0, exponent = 0;
  bool any = false;
  for (; c != end && is_digit(*c); ++c, any = true) {
    if (w == 0 && *c == '0') continue;
    if (++digits > 15) return false;
    w = 10 * w + static_cast<std::uint64_t>(*c - '0');
  }
  if (c != end && *c == '.') {
    for (++c; c != end && is_digit(*c); ++c, any = true) {
      --exponent;
      if (w == 0 && *c == '0') continue;
      if (++digits > 15) return false;
      w = 10 * w + static_cast<std::uint64_t>(*c - '0');
    }
  }
  if (!any) return false;
  if (c != end && (*c == 'e' || *c == 'E')) {
    ++c;
    const bool minus = c != end && *c == '-';
    if (c != end && (*c == '-' || *c == '+')) ++c;
    int e = 0, n = 0;
    for (; c != end && is_digit(*c) && n < 4; ++c, ++n) e = 10 * e + (*c - '0');
    if (n == 0) return false;
    exponent += minus ? -e : e;
  }
  if (c != end || exponent < -22 || exponent > 22) return false;
  const double m = static_cast<double>(w);  // exact: w < 10^15 < 2^53
  value = exponent < 0 ? m / powers[-exponent] : m * powers[exponent];
  if (negative) value = -value;
  return true;
}

// Parses one field; returns an empty string or what was wrong.
// from_chars: exact, locale-independent, no hexadecimal.
std::string parse_number(std::string_view text, bool decimal_comma, double& value) {
  const std::string_view s = trim(text);
  if (s.empty()) return "expected a number, got an empty field";
  char buffer[64];
  const char* begin = s.data();
  const char* end = s.data() + s.size();
  bool bad_mark = false;
  if (decimal_comma) {
    if (s.size() >= sizeof buffer) return "expected a number, got " + shown(s);
    int commas = 0;
    for (std::size_t i = 0; i < s.size(); ++i) {
      buffer[i] = s[i] == ',' ? '.' : s[i];
      commas += s[i] == ',';
      bad_mark = bad_mark || s[i] == '.';
    }
    bad_mark = bad_mark || commas > 1;
    begin = buffer;
    end = buffer + s.size();
  }
  if (bad_mark)
    return "expected a number, got " + shown(s) +
           " (this file writes decimals with a comma; thousands separators are not supported)";
  if (begin != end && *begin == '+') {
    ++begin;
    if (begin != end && *begin == '-') --begin;  // "+-5" is refused, not read as -5
  }
  if (fast_decimal(begin, end, value)) return {};
  const auto [stop, error] = std::from_chars(begin, end, value);
  if (error == std::errc::result_out_of_range) return "expected a number, got " + shown(s) + ", which is out of range";
  if (error != std::errc() || stop != end || begin == end) {
    std::string why = "expected a number, got " + shown(s);
    if (looks_like_thousands(s))
      why += " (thousands separators are not supported)";
    else if (!decimal_comma && s.find(',') != std::string_view::npos)
      why += " (a decimal comma needs ';' or tab separators; thousands separators are not supported)";
    return why;
  }
  if (!std::isfinite(value)) return "expected a finite number, got " + shown(s);
  return {};
}

bool is_number_text(std::string_view s) {
  s = trim(s);
  if (!s.empty() && (s.front() == '+' || s.front() == '-')) s.remove_prefix(1);
  std::size_t i = 0, digits = 0;
  while (i < s.size() && is_digit(s[i])) ++i, ++digits;
  if (i < s.size() && (s[i] == '.' || s[i] == ',')) {
    ++i;
    while (i < s.size() && is_digit(s[i])) ++i, ++digits;
  }
  if (digits == 0) return false;
  if (i < s.size() && (s[i] == 'e' || s[i] == 'E')) {
    ++i;
    if (i < s.size() && (s[i] == '+' || s[i] == '-')) ++i;
    std::size_t exponent = 0;
    while (i < s.size() && is_digit(s[i])) ++i, ++exponent;
    if (exponent == 0) return false;
  }
  return i == s.size();
}

// ---------------------------------------------------------------- clock stamps

// Reads n digits at s[i..]; false when they are not all digits.
bool digits_at(std::string_view s, std::size_t i, std::size_t n, int& value) {
  if (i + n > s.size()) return false;
  value = 0;
  for (std::size_t k = i; k < i + n; ++k) {
    if (!is_digit(s[k])) return false;
    value = 10 * value + (s[k] - '0');
  }
  return true;
}

// "14:02:07", "4:02:07.1000", "14:02:07,25": seconds after midnight.
bool parse_time_of_day(std::string_view s, double& seconds) {
  std::size_t i = 0;
  int h = 0, m = 0, sec = 0;
  if (s.size() >= 2 && is_digit(s[0]) && is_digit(s[1])) {
    digits_at(s, 0, 2, h);
    i = 2;
  } else if (!s.empty() && is_digit(s[0])) {
    h = s[0] - '0';
    i = 1;
  } else {
    return false;
  }
  if (i >= s.size() || s[i] != ':' || !digits_at(s, i + 1, 2, m)) return false;
  i += 3;
  if (i >= s.size() || s[i] != ':' || !digits_at(s, i + 1, 2, sec)) return false;
  i += 3;
  double fraction = 0.0;
  if (i < s.size() && (s[i] == '.' || s[i] == ',')) {
    ++i;
    double scale = 0.1;
    const std::size_t first = i;
    while (i < s.size() && is_digit(s[i])) {
      fraction += scale * (s[i] - '0');
      scale *= 0.1;
      ++i;
    }
    if (i == first) return false;
  }
  if (i < s.size() && (s[i] == 'Z' || s[i] == 'z')) ++i;
  if (i != s.size() || h > 23 || m > 59 || sec > 60) return false;
  seconds = 3600.0 * h + 60.0 * m + sec + fraction;
  return true;
}

// Days since 1970-01-01 of a civil date (H. Hinnant's days_from_civil).
long long days_from_civil(int y, int m, int d) {
  y -= m <= 2;
  const long long era = (y >= 0 ? y : y - 399) / 400;
  const long long yoe = y - era * 400;
  const long long doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
  const long long doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return era * 146097 + doe - 719468;
}

// "2024-03-05", "2024/03/05", "05.03.2024" (day first, as written with dots).
bool parse_date(std::string_view s, long long& days) {
  int y = 0, m = 0, d = 0;
  if (s.size() == 10 && (s[4] == '-' || s[4] == '/') && s[7] == s[4]) {
    if (!digits_at(s, 0, 4, y) || !digits_at(s, 5, 2, m) || !digits_at(s, 8, 2, d)) return false;
  } else if (s.size() == 10 && s[2] == '.' && s[5] == '.') {
    if (!digits_at(s, 0, 2, d) || !digits_at(s, 3, 2, m) || !digits_at(s, 6, 4, y)) return false;
  } else {
    return false;
  }
  if (m < 1 || m > 12 || d < 1 || d > 31) return false;
  days = days_from_civil(y, m, d);
  return true;
}

// "2024-03-05 14:02:07.1", "2024-03-05T14:02:07,1Z", "05.03.2024 14:02:07".
bool parse_date_time(std::string_view s, long long& days, double& seconds) {
  if (s.size() < 12 || (s[10] != ' ' && s[10] != 'T' && s[10] != 't')) return false;
  return parse_date(s.substr(0, 10), days) && parse_time_of_day(trim(s.substr(11)), seconds);
}

enum class ValueKind { empty, number, time_of_day, date, date_time, other };

ValueKind classify(std::string_view s) {
  s = trim(s);
  if (s.empty()) return ValueKind::empty;
  if (is_number_text(s)) return ValueKind::number;
  double seconds = 0.0;
  long long days = 0;
  if (parse_time_of_day(s, seconds)) return ValueKind::time_of_day;
  if (parse_date(s, days)) return ValueKind::date;
  if (parse_date_time(s, days, seconds)) return ValueKind::date_time;
  return ValueKind::other;
}

// ---------------------------------------------------------------- units

// Headers write exponents without '^', a micro sign, "lpm", trade spellings
// in capitals: the relaxed unit parser of core/units takes them all.
Unit parse_header_unit(std::string_view text) {
  constexpr std::size_t kLongest = 40;  // also keeps the recursive unit parser shallow
  const std::string t(trim(text));
  if (t.empty()) throw UnitError("the unit is empty");
  if (t.size() > kLongest) throw UnitError("unknown unit " + shown(t) + ": too long to be a unit");
  return parse_unit_relaxed(t);
}

enum class Reference { unstated, gauge, absolute };

struct PressureUnit {
  Unit unit;
  Reference reference = Reference::unstated;
};

// A unit with what loggers append to say gauge or absolute: "bar(a)",
// "bar (abs)", "bara", "psia", "kPa abs", "bar a", "barg", "psig", "bar(g)",
// "bar rel", "kPa_abs" (an underscore name's words joined by '/'). Throws
// UnitError for a unit that is none.
PressureUnit parse_unit_with_reference(std::string_view text) {
  const std::string t(trim(text));
  try {
    return {parse_header_unit(t), Reference::unstated};
  } catch (const UnitError&) {
    const std::string l = lower(t);
    struct Mark {
      const char* ending;
      Reference reference;
    };
    static const Mark marks[] = {
        {"(absolute)", Reference::absolute}, {"(abs)", Reference::absolute}, {"(a)", Reference::absolute},
        {"absolute", Reference::absolute},   {"abs", Reference::absolute},   {"(gauge)", Reference::gauge},
        {"(g)", Reference::gauge},           {"gauge", Reference::gauge},    {"(rel)", Reference::gauge},
        {"rel", Reference::gauge},           {"a", Reference::absolute},     {"g", Reference::gauge},
    };
    for (const Mark& mark : marks) {
      const std::size_t n = std::strlen(mark.ending);
      if (l.size() <= n || l.compare(l.size() - n, n, mark.ending) != 0) continue;
      std::string rest(trim(std::string_view(t).substr(0, t.size() - n)));
      while (!rest.empty() && (rest.back() == '_' || rest.back() == '/' || rest.back() == '-')) rest.pop_back();
      if (rest.empty()) continue;
      Unit base;
      try {
        base = parse_header_unit(rest);
      } catch (const UnitError&) {
        continue;
      }
      if (base.dimension == dim::pressure) return {base, mark.reference};
    }
    throw;  // the problem with the unit as written
  }
}

// ---------------------------------------------------------------- header

struct Column {
  std::size_t index = 0;           // 0-based
  std::string text;                // as in the header
  std::string base;                // without the unit
  std::string unit_text;           // empty when the header gives none
  std::string key;                 // base for matching names: lower case, runs of other characters one '_'
  std::vector<std::string> words;  // of key
  ValueKind first_value = ValueKind::empty;
};

std::vector<std::string> words_of(std::string_view s) {
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

// Whether a word run from a header name is the unit of a recorded quantity.
// Only those: "p_in_bar" is "p_in" in bar, not "p" in in/bar.
bool is_trace_unit(const std::string& text) {
  try {
    const Dimension d = parse_unit_with_reference(text).unit.dimension;
    return d == dim::time || d == dim::pressure || d == dim::flow || d == dim::rotational_speed;
  } catch (const UnitError&) {
    return false;
  }
}

// The index of the bracket that opens the one closing `text`, or npos.
std::size_t matching_open(const std::string& text) {
  const char close = text.empty() ? '\0' : text.back();
  const char open = close == ']' ? '[' : close == ')' ? '(' : '\0';
  if (!open) return std::string::npos;
  int depth = 0;
  for (std::size_t i = text.size(); i-- > 0;) {
    if (text[i] == close) ++depth;
    if (text[i] == open && --depth == 0) return i;
  }
  return std::string::npos;
}

// Splits a header name into name and unit:
// - a bracketed unit at the end: "t [ms]", "Time (s)", "p (bar(a))";
// - trailing words (at most three, "per" skipped, at least one word of name
//   left, the longest that is a unit): "time_s", "p_bar", "pump_flow_L_min"
//   (-> "L/min"), "flow_m3_s" (-> "m^3/s"), "flow_L_per_min", "p_kPa_abs";
// - quantity/unit: "t/ms", "Q/(L/min)".
Column describe(std::size_t index, const std::string& text) {
  Column c;
  c.index = index;
  c.text = text;
  c.base = text;
  const std::size_t open = matching_open(text);
  const std::size_t slash = text.find('/');
  if (open != std::string::npos && open > 0) {
    c.base = std::string(trim(std::string_view(text).substr(0, open)));
    c.unit_text = std::string(trim(std::string_view(text).substr(open + 1, text.size() - open - 2)));
  } else {
    const std::vector<std::string> w = words_of(text);
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
  for (char ch : lower(c.base)) {
    if (is_letter(ch) || is_digit(ch))
      c.key += ch;
    else if (!c.key.empty() && c.key.back() != '_')
      c.key += '_';
  }
  if (!c.key.empty() && c.key.back() == '_') c.key.pop_back();
  c.words = words_of(c.key);
  return c;
}

bool has_word(const Column& c, std::initializer_list<const char*> names) {
  for (const std::string& w : c.words)
    for (const char* n : names)
      if (w == n) return true;
  return false;
}
bool key_is(const Column& c, std::initializer_list<const char*> names) {
  for (const char* n : names)
    if (c.key == n) return true;
  return false;
}

// 2: the name is the time ("time", "t"); 1: one of its words is; 0: unrelated.
int time_name_score(const Column& c) {
  if (key_is(c, {"time", "t", "timestamp", "datetime", "date_time", "clock", "time_of_day"})) return 2;
  if (!c.words.empty() && c.words.front() == "t") return 1;
  return has_word(c, {"time", "elapsed", "timestamp", "clock"}) ? 1 : 0;
}
bool is_index_name(const Column& c) {
  return key_is(c, {"index", "idx", "sample", "samples", "sample_no", "sample_nr", "sample_number", "sample_index", "n",
                    "no", "nr", "number", "point", "count", "row", "scan", ""});
}
bool is_date_name(const Column& c) { return key_is(c, {"date", "day", "datum"}); }

// The pressure a column's name says it is; none when it says only "pressure".
std::optional<FieldChannel> pressure_role(const Column& c) {
  if (has_word(c, {"control", "ctrl", "pilot", "servo", "stroke", "stroking"}) || key_is(c, {"pc", "p_c"}))
    return FieldChannel::control_pressure;
  if (has_word(c, {"load", "actuator", "cylinder", "consumer", "motor", "work"}) || key_is(c, {"pl", "p_l"}))
    return FieldChannel::load_pressure;
  if (has_word(c, {"outlet", "discharge", "pump", "delivery", "supply", "out", "system"}) || key_is(c, {"pd", "p_d"}))
    return FieldChannel::pressure;
  return std::nullopt;
}
bool is_pressure_name(const Column& c) {
  if (key_is(c, {"p", "pressure", "pd", "pc", "pl"})) return true;
  if (!c.words.empty() && c.words.front() == "p") return true;
  return has_word(c, {"pressure"});
}
bool is_flow_name(const Column& c) {
  if (key_is(c, {"flow", "q", "flow_rate", "flowrate"})) return true;
  if (!c.words.empty() && c.words.front() == "q") return true;
  return has_word(c, {"flow", "flowrate"});
}
bool is_speed_name(const Column& c) {
  return key_is(c, {"speed", "rpm", "shaft_speed", "pump_speed"}) || has_word(c, {"speed", "rpm"});
}

// ---------------------------------------------------------------- time formats

enum class TimeFormat { seconds, time_of_day, date_time, date_and_time_columns, index, row_count };

const char* describe(TimeFormat f) {
  switch (f) {
    case TimeFormat::seconds:
      return "seconds";
    case TimeFormat::time_of_day:
      return "time of day";
    case TimeFormat::date_time:
    case TimeFormat::date_and_time_columns:
      return "date and time";
    case TimeFormat::index:
      return "sample index";
    case TimeFormat::row_count:
      return "row count";
  }
  return "?";
}

// ---------------------------------------------------------------- the reader

struct HeldLine {
  std::size_t number;
  std::string text;
  bool comment;
};

struct ChannelColumn {
  std::optional<std::size_t> column;
  Unit unit;
  bool absolute = false;
  double to_stored = 1.0;  // extra factor after SI (speed: rad/s -> rev/min)
};

const char* short_name(FieldChannel c) {
  switch (c) {
    case FieldChannel::pressure:
      return "pressure";
    case FieldChannel::control_pressure:
      return "control pressure";
    case FieldChannel::load_pressure:
      return "load pressure";
    case FieldChannel::flow:
      return "flow";
    case FieldChannel::speed:
      return "speed";
  }
  return "?";
}

const std::optional<std::string>& column_option(const FieldTraceOptions& o, FieldChannel c) {
  switch (c) {
    case FieldChannel::pressure:
      return o.pressure_column;
    case FieldChannel::control_pressure:
      return o.control_column;
    case FieldChannel::load_pressure:
      return o.load_column;
    case FieldChannel::flow:
      return o.flow_column;
    case FieldChannel::speed:
      return o.speed_column;
  }
  return o.pressure_column;
}

bool is_pressure_channel(FieldChannel c) {
  return c == FieldChannel::pressure || c == FieldChannel::control_pressure || c == FieldChannel::load_pressure;
}

class Reader {
 public:
  Reader(std::unique_ptr<LineReader> lines, std::string source, const FieldTraceOptions& options)
      : lines_(std::move(lines)), source_(std::move(source)), options_(options) {
    report_.source = source_;
  }

  FieldReadReport run(const FieldRowSink& sink) {
    hold_first_lines();
    find_layout();
    bool go_on = true;
    for (std::size_t i = first_data_; i < held_.size() && go_on; ++i)
      if (!held_[i].comment) go_on = row(held_[i].number, held_[i].text, sink);
    held_.clear();
    std::string_view line;
    while (go_on && lines_->next(line)) {
      const std::string_view t = trim(line);
      if (t.empty() || t.front() == '#') continue;
      go_on = row(lines_->number(), t, sink);
    }
    report_.stopped = !go_on;
    finish();
    return std::move(report_);
  }

 private:
  [[noreturn]] void fail_header(const std::string& what) const { fail(source_, header_line_, what); }

  void hold_first_lines() {
    std::string_view line;
    std::size_t content = 0;
    while (content < kDetectLines && lines_->next(line)) {
      const std::string_view t = trim(line);
      if (t.empty()) continue;
      held_.push_back({lines_->number(), std::string(t), t.front() == '#'});
      if (t.front() != '#') ++content;
    }
    if (content == 0) fail(source_, 1, "no header row: the file is empty or has only blank and '#' lines");
  }

  // Data: at least two fields of values (numbers, stamps, dates), none other.
  bool is_data_line(std::string_view text, char separator) {
    if (!splitter_.split(text, separator)) return false;
    const auto& f = splitter_.fields();
    if (f.size() < 2) return false;
    std::size_t values = 0;
    for (std::string_view v : f) {
      const ValueKind k = classify(v);
      if (k == ValueKind::other) return false;
      if (k != ValueKind::empty) ++values;
    }
    return values >= 2;
  }

  void find_layout() {
    // The separator whose first row of values comes earliest (then: more
    // columns; then tab, ';', ',' in that order, since ',' may be a decimal comma).
    std::size_t best_line = held_.size();
    std::size_t best_columns = 0;
    for (char separator : {'\t', ';', ','}) {
      for (std::size_t i = 0; i < held_.size(); ++i) {
        if (held_[i].comment || !is_data_line(held_[i].text, separator)) continue;
        const std::size_t columns = splitter_.fields().size();
        if (i < best_line || (i == best_line && columns > best_columns)) {
          best_line = i;
          best_columns = columns;
          separator_ = separator;
        }
        break;
      }
    }
    std::size_t header = 0;
    while (header < held_.size() && held_[header].comment) ++header;
    const std::size_t first_content = header;
    if (best_line < held_.size()) {
      if (best_line == first_content)
        fail(source_, held_[first_content].number,
             "the first row holds numbers, not column names; the file needs a header row such as "
             "\"time_s,pressure_bar\"");
      // The header: the nearest line above with no values in it; lines in
      // between are rows with something wrong in them, reported as such.
      std::optional<std::size_t> found;
      for (std::size_t i = best_line; i-- > first_content;)
        if (!held_[i].comment && names_only(held_[i].text, separator_)) {
          found = i;
          break;
        }
      header = found ? *found : first_content;
      if (!found) separator_ = fallback_separator(header);
    } else {
      // No row of values: take the first line as the header, so that the
      // rows below it are reported with what is wrong with them.
      separator_ = fallback_separator(header);
    }
    first_data_ = header + 1;
    header_line_ = held_[header].number;
    report_.layout.header_line = header_line_;
    report_.layout.separator = separator_;
    if (!splitter_.split(held_[header].text, separator_)) fail_header("a quote in the header is not closed");
    std::vector<std::string> names(splitter_.fields().begin(), splitter_.fields().end());
    if (names.size() < 2)
      fail_header("the header " + shown(held_[header].text) +
                  " has only one column; expected columns separated by commas, semicolons or tabs, such as "
                  "\"time_s,pressure_bar\"");
    // A row of units under the names ("Time;Pressure" then "s;bar").
    std::size_t names_line = header;
    if (best_line < held_.size() && all_units(names)) {
      std::size_t above = header;
      while (above > 0 && held_[above - 1].comment) --above;
      if (above > 0 && splitter_.split(held_[above - 1].text, separator_) &&
          splitter_.fields().size() == names.size()) {
        names_line = above - 1;
        for (std::size_t k = 0; k < names.size(); ++k) {
          const std::string unit = names[k];
          names[k] = std::string(splitter_.fields()[k]);
          if (!unit.empty()) names[k] += " [" + unit + "]";
        }
      }
    }
    for (std::size_t i = 0; i < held_.size(); ++i)
      if (held_[i].comment || i < names_line) read_metadata(held_[i]);
    for (std::size_t k = 0; k < names.size(); ++k) columns_.push_back(describe(k, names[k]));
    if (best_line < held_.size() && splitter_.split(held_[best_line].text, separator_)) {
      const auto& f = splitter_.fields();
      for (std::size_t k = 0; k < columns_.size() && k < f.size(); ++k) columns_[k].first_value = classify(f[k]);
    }
    choose_columns();
    decide_decimal_mark();
    describe_layout();
  }

  bool names_only(std::string_view text, char separator) {
    if (!splitter_.split(text, separator)) return false;
    for (std::string_view v : splitter_.fields()) {
      const ValueKind k = classify(v);
      if (k != ValueKind::other && k != ValueKind::empty) return false;
    }
    return true;
  }

  bool all_units(const std::vector<std::string>& fields) {
    std::size_t units = 0;
    for (const std::string& f : fields) {
      if (f.empty() || f == "-") continue;
      try {
        parse_unit_with_reference(f);
        ++units;
      } catch (const UnitError&) {
        return false;
      }
    }
    return units >= 1;
  }

  // The separator that gives the header at least two columns and agrees with
  // the most of the next rows; tab and ';' win a tie over ','.
  char fallback_separator(std::size_t header) {
    char best = ',';
    std::size_t best_agreeing = 0;
    bool found = false;
    for (char separator : {'\t', ';', ','}) {
      splitter_.split(held_[header].text, separator);
      const std::size_t columns = splitter_.fields().size();
      if (columns < 2) continue;
      std::size_t agreeing = 0, looked = 0;
      for (std::size_t i = header + 1; i < held_.size() && looked < 5; ++i) {
        if (held_[i].comment) continue;
        ++looked;
        splitter_.split(held_[i].text, separator);
        if (splitter_.fields().size() == columns) ++agreeing;
      }
      if (!found || agreeing > best_agreeing) {
        best = separator;
        best_agreeing = agreeing;
        found = true;
      }
    }
    return best;
  }

  // "Sample rate: 1 kHz", "# sampling interval = 0.5 ms", "Barometer;0,987;bar".
  void read_metadata(const HeldLine& line) {
    std::string_view t = line.text;
    while (!t.empty() && (t.front() == '#' || is_space(t.front()))) t.remove_prefix(1);
    const std::size_t split_at = t.find_first_of(":=;,\t");
    if (split_at == std::string_view::npos) return;
    const std::string key = lower(trim(t.substr(0, split_at)));
    std::string value;
    for (char c : t.substr(split_at + 1)) value += (c == ';' || c == '\t' || c == '=' || c == ':') ? ' ' : c;
    value = std::string(trim(value));
    if (std::count(value.begin(), value.end(), ',') == 1 && value.find('.') == std::string::npos)
      std::replace(value.begin(), value.end(), ',', '.');  // a decimal comma
    else
      std::replace(value.begin(), value.end(), ',', ' ');  // "1000,Hz" from a comma-separated preamble
    const bool rate = key.find("rate") != std::string::npos || key.find("frequency") != std::string::npos;
    const bool interval = key.find("interval") != std::string::npos || key.find("period") != std::string::npos ||
                          key.find("time base") != std::string::npos;
    const bool atmosphere = key.find("atmospher") != std::string::npos || key.find("barometr") != std::string::npos ||
                            key.find("barometer") != std::string::npos ||
                            key.find("ambient pressure") != std::string::npos;
    if (!rate && !interval && !atmosphere) return;
    const std::string where = "line " + std::to_string(line.number);
    Quantity q;
    try {
      q = parse_quantity_relaxed(value);
    } catch (const UnitError&) {
      report_.notes.push_back(where + ": " + shown(t) + " not understood (expected a number and a unit)");
      return;
    }
    if (!q.has_unit) {
      report_.notes.push_back(where + ": " + shown(t) + " has no unit; not used");
      return;
    }
    if (atmosphere && q.unit.dimension == dim::pressure && q.si() > 0.0) {
      metadata_atmosphere_ = q.si();
      metadata_atmosphere_source_ = where;
    } else if ((rate && q.unit.dimension == dim::time.power(-1)) && q.si() > 0.0) {
      metadata_rate_ = q.si();
      metadata_rate_source_ = where;
    } else if (interval && q.unit.dimension == dim::time && q.si() > 0.0) {
      metadata_rate_ = 1.0 / q.si();
      metadata_rate_source_ = where;
    }
  }

  // What a column is already used as, or nullptr.
  const char* used_as(std::size_t index) const {
    if (time_column_ == index) return "time";
    if (date_column_ == index) return "date";
    for (FieldChannel c : kAllFieldChannels)
      if (channels_[index_of(c)].column == index) return channel_name(c);
    return nullptr;
  }
  bool taken(std::size_t index) const { return used_as(index) != nullptr; }

  std::string header_names() const {
    std::vector<std::string> names;
    for (const Column& c : columns_) names.push_back(c.text);
    return shown_list(names);
  }

  // A column named by an option: its header text, its name without the
  // unit, or its 1-based number.
  std::optional<std::size_t> column_from_option(const std::optional<std::string>& option, const std::string& what,
                                                const std::string& option_name, bool may_be_none) {
    if (!option) return std::nullopt;
    const std::string name(trim(*option));
    const std::string label = option_name + " " + shown(name);
    if (may_be_none && iequal(name, "none")) return std::nullopt;
    if (name.empty()) fail_header(label + " is empty");
    std::optional<std::size_t> found;
    for (bool by_base : {false, true}) {
      for (const Column& c : columns_) {
        if (!iequal(by_base ? c.base : c.text, name)) continue;
        if (found) fail_header(label + ": the header has more than one column of that name; give its number");
        found = c.index;
      }
      if (found) break;
    }
    if (!found && std::all_of(name.begin(), name.end(), is_digit)) {
      std::size_t number = 0;
      const auto [end, error] = std::from_chars(name.data(), name.data() + name.size(), number);
      if (error != std::errc() || end != name.data() + name.size() || number < 1 || number > columns_.size())
        fail_header(label + ": the header has " + std::to_string(columns_.size()) + " columns, numbered from 1");
      found = number - 1;
    }
    if (!found) fail_header(label + ": no such column; the header has " + header_names());
    if (const char* used = used_as(*found))
      fail_header(label + ": " + shown(columns_[*found].text) + " is already the " + used + " column");
    (void)what;
    return found;
  }

  // How well a column's header unit fits a dimension: 2 it fits, 1 none
  // given, 0 it does not. This ranks before the name, so "t [s]" is the time
  // even beside "T [degC]".
  int unit_fit(const Column& c, const Dimension& d) const {
    if (c.unit_text.empty()) return 1;
    try {
      return parse_unit_with_reference(c.unit_text).unit.dimension == d ? 2 : 0;
    } catch (const UnitError&) {
      return 0;
    }
  }
  bool unit_is(const Column& c, const Dimension& d) const { return !c.unit_text.empty() && unit_fit(c, d) == 2; }

  ChannelColumn& channel(FieldChannel c) { return channels_[index_of(c)]; }

  void choose_columns() {
    // Options first, so that detection does not take their columns.
    time_column_ = column_from_option(options_.time_column, "time", "--time-column", false);
    for (FieldChannel c : kAllFieldChannels)
      channel(c).column =
          column_from_option(column_option(options_, c), channel_name(c), channel_option(c),
                             c == FieldChannel::flow || c == FieldChannel::speed ||
                                 c == FieldChannel::control_pressure || c == FieldChannel::load_pressure);
    if (!time_column_) detect_time_column();
    detect_date_column();
    detect_pressures();
    for (FieldChannel c : {FieldChannel::flow, FieldChannel::speed})
      if (!channel(c).column && !column_option(options_, c)) channel(c).column = detect_other(c);
    for (FieldChannel c : kAllFieldChannels)
      if (channel(c).column) set_unit(c, columns_[*channel(c).column]);
    choose_time_format();
    for (const Column& c : columns_)
      if (!taken(c.index) && !(c.text.empty())) report_.layout.unused_columns.push_back(c.text);
  }

  void detect_time_column() {
    std::vector<const Column*> best;
    std::pair<int, int> best_rank{0, 0};
    for (const Column& c : columns_) {
      if (taken(c.index)) continue;
      const bool clock = c.first_value == ValueKind::time_of_day || c.first_value == ValueKind::date_time;
      const int score = clock ? 3 : time_name_score(c);
      if (score == 0) continue;
      // "T [degC]" is a temperature: a lone letter t with a unit of another kind.
      if (!clock && c.key == "t" && unit_fit(c, dim::time) == 0) continue;
      const std::pair<int, int> rank{clock ? 2 : unit_fit(c, dim::time), score};
      if (best.empty() || rank > best_rank) {
        best = {&c};
        best_rank = rank;
      } else if (rank == best_rank) {
        best.push_back(&c);
      }
    }
    if (best.size() > 1) {
      std::vector<std::string> names;
      for (const Column* c : best) names.push_back(c->text);
      fail_header("several columns could be the time: " + shown_list(names) + "; choose one with --time-column");
    }
    if (!best.empty()) {
      time_column_ = best.front()->index;
      return;
    }
    for (const Column& c : columns_)
      if (!taken(c.index) && is_index_name(c) && c.first_value == ValueKind::number) {
        time_column_ = c.index;
        index_column_ = true;
        return;
      }
  }

  // A date in a column of its own, beside a time-of-day column.
  void detect_date_column() {
    if (!time_column_ || columns_[*time_column_].first_value != ValueKind::time_of_day) return;
    for (const Column& c : columns_)
      if (!taken(c.index) && c.first_value == ValueKind::date && (is_date_name(c) || c.base.empty())) {
        date_column_ = c.index;
        return;
      }
    for (const Column& c : columns_)
      if (!taken(c.index) && c.first_value == ValueKind::date) {
        date_column_ = c.index;
        return;
      }
  }

  // Pressure columns: by unit or by name. Names say which pressure they are
  // ("p_control", "outlet pressure"); a single unqualified one is the pump
  // outlet's. Anything ambiguous is refused with the option that settles it.
  void detect_pressures() {
    // Named as a pressure with a unit that fits or none, or any column with a
    // pressure unit that is not named as something else; a pressure name with
    // a wrong unit only when nothing better exists (its unit is then refused).
    std::array<std::vector<const Column*>, 3> qualified;
    std::vector<const Column*> plain;
    const auto none_found = [&] {
      return plain.empty() && std::all_of(qualified.begin(), qualified.end(), [](const auto& q) { return q.empty(); });
    };
    for (int pass = 0; pass < 2 && (pass == 0 || none_found()); ++pass) {
      for (const Column& c : columns_) {
        if (taken(c.index)) continue;
        const bool other_name = is_flow_name(c) || is_speed_name(c) || time_name_score(c) > 0;
        const bool candidate = pass == 0 ? (unit_is(c, dim::pressure) && !other_name) ||
                                               (is_pressure_name(c) && unit_fit(c, dim::pressure) >= 1)
                                         : is_pressure_name(c);
        if (!candidate) continue;
        if (const std::optional<FieldChannel> role = pressure_role(c))
          qualified[static_cast<std::size_t>(index_of(*role))].push_back(&c);
        else
          plain.push_back(&c);
      }
    }
    for (FieldChannel role : {FieldChannel::pressure, FieldChannel::control_pressure, FieldChannel::load_pressure}) {
      if (channel(role).column || column_option(options_, role)) continue;
      const auto& found = qualified[static_cast<std::size_t>(index_of(role))];
      if (found.size() > 1) {
        std::vector<std::string> names;
        for (const Column* c : found) names.push_back(c->text);
        fail_header("several columns could be the " + std::string(channel_name(role)) + ": " + shown_list(names) +
                    "; choose one with " + channel_option(role));
      }
      if (found.size() == 1) channel(role).column = found.front()->index;
    }
    std::vector<const Column*> left;
    for (const Column* c : plain)
      if (!taken(c->index)) left.push_back(c);
    if (!channel(FieldChannel::pressure).column && !options_.pressure_column) {
      if (left.size() == 1) {
        channel(FieldChannel::pressure).column = left.front()->index;
      } else if (left.size() > 1) {
        std::vector<std::string> names;
        for (const Column* c : left) names.push_back(c->text);
        fail_header("several columns could be the pump outlet pressure: " + shown_list(names) +
                    "; choose one with --pressure-column (and --control-column, --load-column for the others)");
      }
    }
    if (!channel(FieldChannel::pressure).column)
      fail_header("no pressure column in the header (" + header_names() +
                  "); name it pressure, p, p_bar or \"pressure (psi)\", or choose one with --pressure-column");
  }

  std::optional<std::size_t> detect_other(FieldChannel role) {
    const Dimension d = role == FieldChannel::flow ? dim::flow : dim::rotational_speed;
    std::vector<const Column*> best;
    std::pair<int, int> best_rank{0, 0};
    for (const Column& c : columns_) {
      if (taken(c.index)) continue;
      const bool named = role == FieldChannel::flow ? is_flow_name(c) : is_speed_name(c);
      const int fit = unit_fit(c, d);
      if (!named && fit != 2) continue;
      const std::pair<int, int> rank{fit, named ? 1 : 0};
      if (best.empty() || rank > best_rank) {
        best = {&c};
        best_rank = rank;
      } else if (rank == best_rank) {
        best.push_back(&c);
      }
    }
    if (best.size() > 1) {
      std::vector<std::string> names;
      for (const Column* c : best) names.push_back(c->text);
      fail_header("several columns could be the " + std::string(channel_name(role)) + ": " + shown_list(names) +
                  "; choose one with " + channel_option(role) + " (or \"none\")");
    }
    if (best.empty()) return std::nullopt;
    return best.front()->index;
  }

  // The option wins over the header; no unit at all is an error, since a
  // guessed unit would silently scale the whole trace.
  void set_unit(FieldChannel role, const Column& c) {
    ChannelColumn& ch = channel(role);
    const std::string name = short_name(role);
    const std::optional<std::string>& option = is_pressure_channel(role)    ? options_.pressure_unit
                                               : role == FieldChannel::flow ? options_.flow_unit
                                                                            : std::optional<std::string>{};
    const char* option_name = is_pressure_channel(role)    ? "--pressure-unit"
                              : role == FieldChannel::flow ? "--flow-unit"
                                                           : nullptr;
    const Dimension wanted = is_pressure_channel(role)    ? dim::pressure
                             : role == FieldChannel::flow ? dim::flow
                                                          : dim::rotational_speed;
    const char* example = is_pressure_channel(role) ? "bar" : role == FieldChannel::flow ? "L/min" : "rpm";
    std::string label, text;
    if (option) {
      label = std::string(option_name) + " " + shown(*option);
      text = *option;
    } else if (!c.unit_text.empty()) {
      label = name + " column " + shown(c.text);
      text = c.unit_text;
    } else {
      const std::string base = c.base.empty() ? c.text : c.base;
      fail_header(name + " column " + shown(c.text) + " has no unit; give one in the header, e.g. \"" + base + " [" +
                  example + "]\"" + (option_name ? std::string(", or with ") + option_name : std::string()));
    }
    PressureUnit unit;
    try {
      unit = parse_unit_with_reference(text);
    } catch (const UnitError& e) {
      fail_header(label + ": " + e.what());
    }
    if (unit.unit.dimension != wanted)
      fail_header(label + ": " + shown(trim(text)) + " is " + with_article(dimension_name(unit.unit.dimension)) +
                  " unit, not " + with_article(dimension_name(wanted)) + " unit" +
                  (option_name && !option ? std::string("; give the unit with ") + option_name : std::string()));
    ch.unit = unit.unit;
    const bool name_says_absolute = has_word(c, {"abs", "absolute"});
    ch.absolute =
        unit.reference == Reference::absolute || (unit.reference == Reference::unstated && name_says_absolute);
    if (role == FieldChannel::speed) ch.to_stored = 60.0 / kTwoPi;  // rad/s -> rev/min
    report_.layout.header[index_of(role)] = c.text;
    report_.layout.unit[index_of(role)] = std::string(trim(text));
    report_.layout.absolute[index_of(role)] = ch.absolute;
  }

  void choose_time_format() {
    FieldLayout& layout = report_.layout;
    if (options_.sample_rate && !(*options_.sample_rate > 0.0 && std::isfinite(*options_.sample_rate)))
      fail_header("--rate must be a positive frequency, e.g. --rate 1kHz");
    if (!time_column_) {
      rate_ = options_.sample_rate ? options_.sample_rate : metadata_rate_;
      if (!rate_)
        fail_header("no time column in the header (" + header_names() +
                    "); name it time, t, time_s or \"t [ms]\", choose one with --time-column, or give the sample "
                    "rate with --rate (e.g. --rate 1kHz) when the rows are equally spaced");
      time_format_ = TimeFormat::row_count;
    } else {
      const Column& c = columns_[*time_column_];
      layout.time_header = c.text;
      if (c.first_value == ValueKind::time_of_day) {
        time_format_ = date_column_ ? TimeFormat::date_and_time_columns : TimeFormat::time_of_day;
      } else if (c.first_value == ValueKind::date_time) {
        time_format_ = TimeFormat::date_time;
      } else if (index_column_ || (is_index_name(c) && c.unit_text.empty() && !options_.time_unit)) {
        time_format_ = TimeFormat::index;
        rate_ = options_.sample_rate ? options_.sample_rate : metadata_rate_;
        if (!rate_)
          fail_header("the time column " + shown(c.text) +
                      " counts samples; give the sample rate with --rate (e.g. --rate 1kHz) or in a line above the "
                      "header (\"sample rate: 1 kHz\")");
      } else {
        time_format_ = TimeFormat::seconds;
        std::string label, text;
        if (options_.time_unit) {
          label = "--time-unit " + shown(*options_.time_unit);
          text = *options_.time_unit;
        } else if (!c.unit_text.empty()) {
          label = "time column " + shown(c.text);
          text = c.unit_text;
        } else {
          const std::string base = c.base.empty() ? c.text : c.base;
          fail_header("time column " + shown(c.text) + " has no unit; give one in the header, e.g. \"" + base +
                      " [s]\", or with --time-unit");
        }
        try {
          time_unit_ = parse_header_unit(text);
        } catch (const UnitError& e) {
          fail_header(label + ": " + e.what());
        }
        if (time_unit_.dimension != dim::time)
          fail_header(label + ": " + shown(trim(text)) + " is " + with_article(dimension_name(time_unit_.dimension)) +
                      " unit, not a time unit" + (options_.time_unit ? "" : "; give the unit with --time-unit"));
      }
      if (options_.sample_rate && time_format_ != TimeFormat::index)
        fail_header("the time column " + shown(c.text) +
                    " already gives the time; --rate is for files that count samples (an index column) or have no "
                    "time column");
    }
    if (rate_) {
      layout.sample_rate = rate_;
      layout.sample_rate_source = options_.sample_rate ? "--rate" : metadata_rate_source_;
    }
    layout.time_format = describe(time_format_);
    if (options_.atmospheric_pressure) {
      if (!(*options_.atmospheric_pressure > 0.0 && *options_.atmospheric_pressure < 2e5))
        fail_header("--atmosphere must be an absolute pressure between 0 and 2 bar, e.g. --atmosphere 0.98bar");
      layout.atmospheric_pressure = *options_.atmospheric_pressure;
      layout.atmosphere_source = "--atmosphere";
    } else if (metadata_atmosphere_) {
      layout.atmospheric_pressure = *metadata_atmosphere_;
      layout.atmosphere_source = metadata_atmosphere_source_;
    } else {
      layout.atmosphere_source = "standard atmosphere";
    }
  }

  // A decimal comma is only possible when ',' does not separate columns; it
  // is decided on the rows held (a later row that disagrees is an error).
  void decide_decimal_mark() {
    if (separator_ == ',') return;
    for (std::size_t i = first_data_; i < held_.size(); ++i) {
      if (held_[i].comment || !splitter_.split(held_[i].text, separator_)) continue;
      const auto& f = splitter_.fields();
      for (const ChannelColumn& c : channels_)
        if (c.column && *c.column < f.size() && f[*c.column].find(',') != std::string_view::npos) decimal_comma_ = true;
      if (time_column_ && time_format_ == TimeFormat::seconds && *time_column_ < f.size() &&
          f[*time_column_].find(',') != std::string_view::npos)
        decimal_comma_ = true;
    }
    report_.layout.decimal_comma = decimal_comma_;
  }

  void describe_layout() {
    FieldLayout& layout = report_.layout;
    for (FieldChannel c : kAllFieldChannels) {
      ChannelColumn& ch = channel(c);
      if (ch.absolute) {
        ch.unit.offset -= layout.atmospheric_pressure;
        report_.notes.push_back(
            std::string(channel_name(c)) + " column " + shown(layout.header[index_of(c)]) +
            " is absolute; converted to gauge with an atmospheric pressure of " +
            number_text(layout.atmospheric_pressure * 1e-5) + " bar (" + layout.atmosphere_source +
            (layout.atmosphere_source == "standard atmosphere" ? "; set --atmosphere for the site's" : "") + ")");
      }
    }
    if (date_column_) report_.notes.push_back("date from column " + shown(columns_[*date_column_].text));
  }

  // ------------------------------------------------------------ rows

  double value_of(std::size_t line, std::string_view text, const ChannelColumn& c, const char* name) {
    double v = 0.0;
    const std::string error = parse_number(text, decimal_comma_, v);
    if (!error.empty()) fail(source_, line, std::string(name) + ": " + error);
    const double si = (v * c.unit.factor + c.unit.offset) * c.to_stored;
    if (!std::isfinite(si)) fail(source_, line, std::string(name) + ": " + shown(trim(text)) + " is out of range");
    return si;
  }

  double time_of(std::size_t line, const std::vector<std::string_view>& f) {
    switch (time_format_) {
      case TimeFormat::row_count:
        return static_cast<double>(report_.rows - 1) / *rate_;
      case TimeFormat::index: {
        double v = 0.0;
        const std::string error = parse_number(f[*time_column_], decimal_comma_, v);
        if (!error.empty()) fail(source_, line, "time: " + error);
        return v / *rate_;
      }
      case TimeFormat::seconds: {
        double v = 0.0;
        const std::string error = parse_number(f[*time_column_], decimal_comma_, v);
        if (!error.empty()) fail(source_, line, "time: " + error);
        const double si = v * time_unit_.factor + time_unit_.offset;
        if (!std::isfinite(si)) fail(source_, line, "time: " + shown(f[*time_column_]) + " is out of range");
        return si;
      }
      case TimeFormat::time_of_day: {
        double sod = 0.0;
        const std::string_view text = trim(f[*time_column_]);
        if (!parse_time_of_day(text, sod))
          fail(source_, line, "time: expected a time of day such as 14:02:07.100, got " + shown(text));
        if (!clock_origin_) {
          clock_origin_ = sod;
          previous_clock_ = sod;
          report_.layout.clock_start = std::string(text);
        }
        // The clock going back by more than half a day is the next day.
        if (sod < previous_clock_ - 0.5 * kDay) {
          ++day_;
          ++report_.midnight_rollovers;
          if (report_.midnight_rollovers <= kListed)
            report_.notes.push_back("line " + std::to_string(line) + ": the clock passes midnight (" +
                                    std::string(text) + ")");
        }
        previous_clock_ = sod;
        return static_cast<double>(day_) * kDay + sod - *clock_origin_;
      }
      case TimeFormat::date_time:
      case TimeFormat::date_and_time_columns: {
        long long days = 0;
        double sod = 0.0;
        const std::string_view text = trim(f[*time_column_]);
        bool ok = false;
        std::string stamp(text);
        if (time_format_ == TimeFormat::date_time) {
          ok = parse_date_time(text, days, sod);
        } else {
          const std::string_view date = trim(f[*date_column_]);
          ok = parse_date(date, days) && parse_time_of_day(text, sod);
          stamp = std::string(date) + " " + std::string(text);
        }
        if (!ok)
          fail(source_, line,
               "time: expected a date and time such as 2024-03-05 14:02:07.100 or 05.03.2024 14:02:07,100, got " +
                   shown(stamp));
        if (!first_day_) {
          first_day_ = days;
          clock_origin_ = sod;
          report_.layout.clock_start = stamp;
        }
        return static_cast<double>(days - *first_day_) * kDay + (sod - *clock_origin_);
      }
    }
    return 0.0;
  }

  bool row(std::size_t line, std::string_view text, const FieldRowSink& sink) {
    if (!splitter_.split(text, separator_)) fail(source_, line, "a quote is not closed");
    const std::vector<std::string_view>& f = splitter_.fields();
    std::size_t count = f.size();
    while (count > columns_.size() && f[count - 1].empty()) --count;  // a trailing separator
    if (count != columns_.size())
      fail(source_, line,
           "found " + std::to_string(count) + " columns, but the header (line " + std::to_string(header_line_) +
               ") has " + std::to_string(columns_.size()) +
               (separator_ == ',' && count > columns_.size()
                    ? "; numbers with a decimal comma need ';' or tab separators"
                    : ""));
    if (++report_.rows == 1) first_row_line_ = line;
    FieldRow out;
    out.line = line;
    out.time = time_of(line, f);
    for (FieldChannel c : kAllFieldChannels) {
      const ChannelColumn& ch = channels_[index_of(c)];
      out.value[index_of(c)] = ch.column ? value_of(line, f[*ch.column], ch, short_name(c)) : kNaN;
    }
    if (report_.kept > 0) {
      if (out.time == last_time_) {
        ++report_.repeated;
        if (report_.repeated_lines.size() < kListed) report_.repeated_lines.push_back(line);
        return true;
      }
      if (!(out.time > last_time_)) {
        const auto [now, before] = distinct_numbers(out.time, last_time_);
        fail(source_, line, "time " + now + " s is not after the previous row's " + before + " s");
      }
      interval(line, out.time - last_time_, last_time_, out.time);
    } else {
      report_.first_time = out.time;
    }
    last_time_ = out.time;
    report_.last_time = out.time;
    ++report_.kept;
    return sink ? sink(out) : true;
  }

  void note_gap(const FieldGap& g) {
    ++report_.gaps;
    if (report_.gap_list.size() < kListed) report_.gap_list.push_back(g);
    if (g.to - g.from > report_.largest_gap.to - report_.largest_gap.from) report_.largest_gap = g;
  }

  // Gaps are intervals longer than kGapFactor nominal intervals, the nominal
  // being the median of the first kNominalIntervals (held until known).
  void interval(std::size_t line, double dt, double from, double to) {
    if (report_.nominal_interval > 0.0) {
      if (dt > kGapFactor * report_.nominal_interval) note_gap({line, from, to});
      return;
    }
    early_.push_back({line, from, to});
    if (early_.size() >= kNominalIntervals) settle_nominal();
  }

  void settle_nominal() {
    if (early_.empty()) return;
    std::vector<double> dts;
    for (const FieldGap& g : early_) dts.push_back(g.to - g.from);
    std::nth_element(dts.begin(), dts.begin() + static_cast<std::ptrdiff_t>(dts.size() / 2), dts.end());
    report_.nominal_interval = dts[dts.size() / 2];
    for (const FieldGap& g : early_)
      if (g.to - g.from > kGapFactor * report_.nominal_interval) note_gap(g);
    early_.clear();
  }

  void finish() {
    settle_nominal();
    report_.bytes = lines_->bytes();
    if (report_.stopped) {  // the caller wanted only the first rows
      if (clock_origin_) report_.layout.clock_origin = clock_origin_;
      return;
    }
    if (report_.rows == 0) fail(source_, header_line_, "no data rows after the header");
    if (report_.kept < 2) {
      if (report_.rows == 1) fail(source_, first_row_line_, "only one data row; a trace needs at least two");
      fail(source_, header_line_, "every row has the same time stamp; a trace needs at least two times");
    }
    if (report_.repeated > kMostlyRepeated * static_cast<double>(report_.rows) && time_format_ != TimeFormat::index) {
      fail(source_, report_.repeated_lines.front(),
           std::to_string(report_.repeated) + " of " + std::to_string(report_.rows) +
               " rows repeat the time stamp of the row before: the clock is coarser than the sample rate. Give the "
               "sample rate with --rate and choose an index column with --time-column, or export finer stamps");
    }
    if (report_.repeated > 0) {
      std::string lines;
      for (std::size_t i = 0; i < report_.repeated_lines.size(); ++i)
        lines += (i ? ", " : "") + std::to_string(report_.repeated_lines[i]);
      report_.notes.push_back(std::to_string(report_.repeated) +
                              " row(s) repeat the time stamp of the row before and " + "were dropped (lines " + lines +
                              (report_.repeated > kListed ? ", ..." : "") + ")");
    }
    if (clock_origin_) report_.layout.clock_origin = clock_origin_;
  }

  std::unique_ptr<LineReader> lines_;
  std::string source_;
  const FieldTraceOptions& options_;
  FieldReadReport report_;
  std::vector<HeldLine> held_;
  std::size_t first_data_ = 0;
  std::size_t header_line_ = 0;
  std::size_t first_row_line_ = 0;
  char separator_ = ',';
  bool decimal_comma_ = false;
  Splitter splitter_;
  std::vector<Column> columns_;
  std::optional<std::size_t> time_column_, date_column_;
  bool index_column_ = false;
  std::array<ChannelColumn, kFieldChannels> channels_{};
  TimeFormat time_format_ = TimeFormat::seconds;
  Unit time_unit_;
  std::optional<double> rate_;
  std::optional<double> metadata_rate_, metadata_atmosphere_;
  std::string metadata_rate_source_, metadata_atmosphere_source_;
  std::optional<double> clock_origin_;
  std::optional<long long> first_day_;
  double previous_clock_ = 0.0;
  long long day_ = 0;
  double last_time_ = 0.0;
  std::vector<FieldGap> early_;
};

std::unique_ptr<LineReader> open_lines(const std::string& path) {
  std::FILE* f = std::fopen(path.c_str(), "rb");
  if (!f) throw FieldTraceError(path + ": cannot open: " + std::strerror(errno));
  return std::make_unique<LineReader>(f, path);
}

// Holds the kept rows inside from/to.
class Holder {
 public:
  Holder(FieldTrace& trace, const FieldTraceOptions& options) : trace_(trace), options_(options) {}

  bool operator()(const FieldRow& r) {
    if (options_.from && r.time < *options_.from) return true;
    if (options_.to && r.time > *options_.to) return false;  // the rest is later still
    if (trace_.time.size() >= options_.max_samples) {
      over_ = true;
      return false;
    }
    trace_.time.push_back(r.time);
    trace_.pressure.push_back(r[FieldChannel::pressure]);
    if (!std::isnan(r[FieldChannel::control_pressure]))
      trace_.control_pressure.push_back(r[FieldChannel::control_pressure]);
    if (!std::isnan(r[FieldChannel::load_pressure])) trace_.load_pressure.push_back(r[FieldChannel::load_pressure]);
    if (!std::isnan(r[FieldChannel::flow])) trace_.flow.push_back(r[FieldChannel::flow]);
    if (!std::isnan(r[FieldChannel::speed])) trace_.speed.push_back(r[FieldChannel::speed]);
    return true;
  }
  bool over() const { return over_; }

 private:
  FieldTrace& trace_;
  const FieldTraceOptions& options_;
  bool over_ = false;
};

FieldTrace hold(std::unique_ptr<LineReader> lines, const std::string& source, const FieldTraceOptions& options) {
  if (options.from && options.to && !(*options.from < *options.to))
    throw FieldTraceError(source + ": --from must be before --to");
  FieldTrace trace;
  trace.source = source;
  Holder holder(trace, options);
  trace.report = Reader(std::move(lines), source, options).run(std::ref(holder));
  if (holder.over())
    throw FieldTraceError(source + ": more than " + std::to_string(options.max_samples) +
                          " samples to hold in memory; choose a shorter part with --from and --to");
  if (trace.time.size() < 2)
    throw FieldTraceError(source + ": " + std::to_string(trace.time.size()) +
                          " sample(s) between --from and --to; the recording runs from " +
                          number_text(trace.report.first_time) + " s to " + number_text(trace.report.last_time) + " s");
  const FieldLayout& layout = trace.report.layout;
  trace.time_header = layout.time_header;
  trace.pressure_header = layout.header[index_of(FieldChannel::pressure)];
  trace.flow_header = layout.header[index_of(FieldChannel::flow)];
  return trace;
}

}  // namespace

FieldReadReport scan_field_trace(const std::string& path, const FieldTraceOptions& options, const FieldRowSink& sink) {
  return Reader(open_lines(path), path, options).run(sink);
}

FieldReadReport scan_field_text(const std::string& text, const std::string& source_name,
                                const FieldTraceOptions& options, const FieldRowSink& sink) {
  return Reader(std::make_unique<LineReader>(text), source_name, options).run(sink);
}

FieldTrace read_field_trace(const std::string& path, const FieldTraceOptions& options) {
  return hold(open_lines(path), path, options);
}

FieldTrace parse_field_trace(const std::string& text, const std::string& source_name,
                             const FieldTraceOptions& options) {
  return hold(std::make_unique<LineReader>(text), source_name, options);
}

double parse_time_option(const std::string& text, const std::string& option, const FieldLayout* layout) {
  const std::string_view t = trim(text);
  double sod = 0.0;
  if (parse_time_of_day(t, sod)) {
    if (!layout || !layout->clock_origin)
      throw FieldTraceError(option + " " + shown(t) +
                            ": a time of day needs a recording with clock stamps; give a time from the start, e.g. " +
                            option + " 100ms");
    double from_start = sod - *layout->clock_origin;
    if (from_start < 0.0) from_start += kDay;  // after midnight
    return from_start;
  }
  Quantity q;
  try {
    q = parse_quantity_relaxed(t);
  } catch (const UnitError& e) {
    throw FieldTraceError(option + " " + shown(t) + ": " + e.what() + "; write a time with its unit, e.g. " + option +
                          " 100ms");
  }
  if (!q.has_unit)
    throw FieldTraceError(option + " " + shown(t) + ": give the unit, e.g. " + option + " " + std::string(t) +
                          "ms or " + option + " " + std::string(t) + "s");
  if (q.unit.dimension != dim::time)
    throw FieldTraceError(option + " " + shown(t) + ": expected a time, got " +
                          with_article(dimension_name(q.unit.dimension)));
  return q.si();
}

std::string clock_time(const FieldLayout& layout, double t) {
  if (!layout.clock_origin) return {};
  double sod = std::fmod(*layout.clock_origin + t, kDay);
  if (sod < 0.0) sod += kDay;
  const int h = static_cast<int>(sod / 3600.0);
  const int m = static_cast<int>((sod - 3600.0 * h) / 60.0);
  const double s = sod - 3600.0 * h - 60.0 * m;
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%02d:%02d:%07.4f", h, m, s);
  return buffer;
}

}  // namespace swashtune
