#include "swashtune/units.hpp"

#include <cctype>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <sstream>
#include <utility>

namespace swashtune {
namespace {

constexpr double pi = 3.14159265358979323846;

struct NamedUnit {
  std::string_view name;
  double factor;
  Dimension dimension;
};

// Exact factors from NIST SP 811 (appendix B) where the unit is not SI.
constexpr double psi = 6894.757293168;  // as NIST SP 811 tabulates it (lbf/in^2 to 13 digits)
constexpr double lbf = 4.4482216152605;
constexpr double inch = 0.0254;
constexpr double us_gallon = 3.785411784e-3;
constexpr double pound = 0.45359237;
constexpr double foot = 0.3048;

constexpr NamedUnit kUnits[] = {
    // pressure
    {"Pa", 1.0, dim::pressure},
    {"kPa", 1e3, dim::pressure},
    {"MPa", 1e6, dim::pressure},
    {"GPa", 1e9, dim::pressure},
    {"bar", 1e5, dim::pressure},
    {"mbar", 1e2, dim::pressure},
    {"psi", psi, dim::pressure},
    {"ksi", 1e3 * psi, dim::pressure},
    // length
    {"m", 1.0, dim::length},
    {"cm", 1e-2, dim::length},
    {"mm", 1e-3, dim::length},
    {"um", 1e-6, dim::length},
    {"in", inch, dim::length},
    {"ft", foot, dim::length},
    // volume
    {"L", 1e-3, dim::volume},
    {"l", 1e-3, dim::volume},
    {"mL", 1e-6, dim::volume},
    {"cc", 1e-6, dim::volume},
    {"gal", us_gallon, dim::volume},
    {"gpm", us_gallon / 60.0, dim::flow},
    // time
    {"s", 1.0, dim::time},
    {"ms", 1e-3, dim::time},
    {"us", 1e-6, dim::time},
    {"min", 60.0, dim::time},
    {"h", 3600.0, dim::time},
    {"Hz", 1.0, dim::time.power(-1)},
    {"kHz", 1e3, dim::time.power(-1)},
    // angle and speed
    {"rad", 1.0, dim::angle},
    {"deg", pi / 180.0, dim::angle},
    {"rev", 2.0 * pi, dim::angle},
    {"rpm", 2.0 * pi / 60.0, dim::rotational_speed},
    // mass and force
    {"kg", 1.0, dim::mass},
    {"g", 1e-3, dim::mass},
    {"lb", pound, dim::mass},
    {"N", 1.0, dim::force},
    {"kN", 1e3, dim::force},
    {"lbf", lbf, dim::force},
    // power
    {"W", 1.0, Dimension{1, 2, -3}},
    {"kW", 1e3, Dimension{1, 2, -3}},
    {"hp", 550.0 * foot* lbf, Dimension{1, 2, -3}},
    // viscosity
    {"cSt", 1e-6, dim::kinematic_viscosity},
    {"K", 1.0, dim::temperature},
    // ratio
    {"%", 1e-2, dim::none},
};

// Recursive-descent parser for unit expressions:
//   product := power (('*' | '/') power)*
//   power   := primary ('^' integer)?
//   primary := name | '(' product ')'
class UnitParser {
 public:
  explicit UnitParser(std::string_view text, bool relaxed = false) : text_(text), relaxed_(relaxed) {}

  Unit parse() {
    skip_space();
    if (pos_ == text_.size()) return Unit{};
    Unit u = product();
    skip_space();
    if (pos_ != text_.size()) fail("unexpected '" + std::string(1, text_[pos_]) + "'");
    return u;
  }

 private:
  [[noreturn]] void fail(const std::string& why) const {
    throw UnitError("unknown unit \"" + std::string(text_) + "\": " + why);
  }
  void skip_space() {
    while (pos_ < text_.size() && std::isspace(static_cast<unsigned char>(text_[pos_]))) ++pos_;
  }
  bool accept(char c) {
    skip_space();
    if (pos_ < text_.size() && text_[pos_] == c) {
      ++pos_;
      return true;
    }
    return false;
  }

  Unit product() {
    Unit u = power();
    for (;;) {
      if (accept('*')) {
        Unit v = power();
        u.factor *= v.factor;
        u.dimension = u.dimension * v.dimension;
      } else if (accept('/')) {
        Unit v = power();
        u.factor /= v.factor;
        u.dimension = u.dimension * v.dimension.power(-1);
      } else {
        return u;
      }
    }
  }

  Unit power() {
    Unit u = primary();
    // Relaxed: an exponent may follow the name directly ("cm3/rev", "m3/s").
    const bool bare_exponent = relaxed_ && pos_ < text_.size() && std::isdigit(static_cast<unsigned char>(text_[pos_]));
    if (bare_exponent || accept('^')) {
      skip_space();
      std::size_t start = pos_;
      if (pos_ < text_.size() && (text_[pos_] == '-' || text_[pos_] == '+')) ++pos_;
      while (pos_ < text_.size() && std::isdigit(static_cast<unsigned char>(text_[pos_]))) ++pos_;
      std::string_view digits = text_.substr(start, pos_ - start);
      if (!digits.empty() && digits.front() == '+') digits.remove_prefix(1);
      int n = 0;
      const auto [end, error] = std::from_chars(digits.data(), digits.data() + digits.size(), n);
      if (digits.empty() || error != std::errc() || end != digits.data() + digits.size())
        fail("expected a whole-number exponent after '^'");
      if (n < -max_exponent || n > max_exponent) fail("exponent " + std::string(digits) + " is out of range");
      u.factor = std::pow(u.factor, n);
      u.dimension = u.dimension.power(n);
    }
    return u;
  }

  Unit primary() {
    if (accept('(')) {
      Unit u = product();
      if (!accept(')')) fail("missing ')'");
      return u;
    }
    skip_space();
    std::size_t start = pos_;
    while (pos_ < text_.size() && (std::isalpha(static_cast<unsigned char>(text_[pos_])) || text_[pos_] == '%')) ++pos_;
    std::string_view name = text_.substr(start, pos_ - start);
    if (name.empty()) fail("expected a unit name");
    for (const NamedUnit& n : kUnits)
      if (n.name == name) return Unit{n.factor, 0.0, n.dimension};
    if (relaxed_) {
      // Any case, when every name that matches means the same unit ("L" and
      // "l"); "PSI", "RPM", "KPA" are what loggers and people write.
      const NamedUnit* match = nullptr;
      bool ambiguous = false;
      for (const NamedUnit& n : kUnits) {
        if (!same_letters(n.name, name)) continue;
        if (match && (match->factor != n.factor || match->dimension != n.dimension)) ambiguous = true;
        match = &n;
      }
      if (match && !ambiguous) return Unit{match->factor, 0.0, match->dimension};
      if (ambiguous) fail("'" + std::string(name) + "' is ambiguous in any case; write it as the unit is spelt");
    }
    fail("'" + std::string(name) + "' is not a known unit");
  }

  static bool same_letters(std::string_view a, std::string_view b) {
    if (a.size() != b.size()) return false;
    for (std::size_t i = 0; i < a.size(); ++i)
      if (std::tolower(static_cast<unsigned char>(a[i])) != std::tolower(static_cast<unsigned char>(b[i])))
        return false;
    return true;
  }

  static constexpr int max_exponent = 12;
  std::string_view text_;
  bool relaxed_ = false;
  std::size_t pos_ = 0;
};

std::string_view trim(std::string_view s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  return s;
}

std::string with_article(const std::string& noun) {
  const bool vowel = !noun.empty() && std::string_view("aeiou").find(noun.front()) != std::string_view::npos;
  return (vowel ? "an " : "a ") + noun;
}

}  // namespace

std::string dimension_name(const Dimension& d) {
  static const std::pair<Dimension, const char*> names[] = {
      {dim::none, "plain number"},
      {dim::mass, "mass"},
      {dim::length, "length"},
      {dim::time, "time"},
      {dim::angle, "angle"},
      {dim::temperature, "temperature"},
      {dim::area, "area"},
      {dim::volume, "volume"},
      {dim::pressure, "pressure"},
      {dim::force, "force"},
      {dim::flow, "flow rate"},
      {dim::displacement, "displacement per revolution"},
      {dim::rotational_speed, "rotational speed"},
      {dim::density, "density"},
      {dim::spring_rate, "spring rate"},
      {dim::linear_damping, "damping coefficient (force per velocity)"},
      {dim::torque, "torque"},
      {dim::rotational_damping, "rotational damping (torque per angular velocity)"},
      {dim::inertia, "moment of inertia"},
      {dim::leakage_coefficient, "leakage coefficient (flow per pressure)"},
      {dim::torque_per_pressure, "torque per pressure"},
      {dim::time.power(-1), "frequency"},
      {dim::kinematic_viscosity, "kinematic viscosity"},
  };
  for (const auto& [dimension, name] : names)
    if (dimension == d) return name;
  static const char* base[] = {"kg", "m", "s", "rad", "K"};
  std::ostringstream out;
  out << "quantity in";
  for (std::size_t i = 0; i < d.exponent.size(); ++i)
    if (d.exponent[i] != 0) out << ' ' << base[i] << '^' << d.exponent[i];
  return out.str();
}

Unit parse_unit(std::string_view text) {
  text = trim(text);
  if (text == "-") return Unit{};
  if (text == "degC") return Unit{1.0, 273.15, dim::temperature};
  if (text == "degF") return Unit{5.0 / 9.0, 273.15 - 32.0 * 5.0 / 9.0, dim::temperature};
  return UnitParser(text).parse();
}

Unit parse_unit_relaxed(std::string_view text) {
  std::string t(trim(text));
  for (std::string_view micro : {"\xC2\xB5", "\xCE\xBC"})  // U+00B5 and U+03BC
    for (std::size_t at = t.find(micro); at != std::string::npos; at = t.find(micro)) t.replace(at, micro.size(), "u");
  std::string folded;
  for (char c : t) folded += static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  if (folded == "degc" || folded ==
                              "\xC2\xB0"
                              "c")
    return parse_unit("degC");
  if (folded == "degf" || folded ==
                              "\xC2\xB0"
                              "f")
    return parse_unit("degF");
  if (folded == "lpm") return parse_unit("L/min");
  if (t == "-") return Unit{};
  try {
    return UnitParser(t).parse();  // exactly as spelt first: "Pa", never "PA" read as something else
  } catch (const UnitError&) {
    return UnitParser(t, true).parse();
  }
}

namespace {
Quantity parse_quantity_with(std::string_view text, Unit (*unit_parser)(std::string_view));
}

Quantity parse_quantity(std::string_view text) { return parse_quantity_with(text, parse_unit); }
Quantity parse_quantity_relaxed(std::string_view text) { return parse_quantity_with(text, parse_unit_relaxed); }

namespace {
Quantity parse_quantity_with(std::string_view text, Unit (*unit_parser)(std::string_view)) {
  std::string_view s = trim(text);
  if (s.empty()) throw UnitError("expected a number with a unit, got an empty string");
  // from_chars: independent of the C locale (a desktop session may set one
  // with a decimal comma) and refuses hexadecimal and "inf".
  const char* begin = s.data();
  if (*begin == '+') ++begin;
  double value = 0.0;
  const auto [end, error] = std::from_chars(begin, s.data() + s.size(), value);
  if (error == std::errc::result_out_of_range || (error == std::errc() && !std::isfinite(value)))
    throw UnitError("the number in \"" + std::string(s) + "\" is out of range");
  if (error != std::errc() || end == begin)
    throw UnitError("expected a number with a unit, got \"" + std::string(s) + "\"");
  std::string_view unit_text = trim(std::string_view(end, static_cast<std::size_t>(s.data() + s.size() - end)));
  Quantity q;
  q.value = value;
  q.has_unit = !unit_text.empty();
  q.unit = unit_parser(unit_text);
  return q;
}
}  // namespace

double convert_to(std::string_view quantity_text, std::string_view target_unit) {
  const Quantity q = parse_quantity(quantity_text);
  if (!q.has_unit) return q.value;
  const Unit target = parse_unit(target_unit);
  if (q.unit.dimension != target.dimension) {
    const std::string example =
        (target_unit == "-" || target_unit.empty()) ? std::string() : " (e.g. in " + std::string(target_unit) + ")";
    throw UnitError("expected " + with_article(dimension_name(target.dimension)) + example + ", got \"" +
                    std::string(trim(quantity_text)) + "\", " + with_article(dimension_name(q.unit.dimension)));
  }
  // One rounding, not two: "1500 rpm" must give exactly 1500 rev/min; the
  // written number was a decimal, so the result is cleaned to one.
  if (q.unit.offset == 0.0 && target.offset == 0.0) return decimal_clean(q.value * (q.unit.factor / target.factor));
  return decimal_clean((q.si() - target.offset) / target.factor);
}

double decimal_clean(double v) {
  if (!std::isfinite(v) || v == 0.0) return v;
  char buffer[40];
  const auto written = std::to_chars(buffer, buffer + sizeof buffer, v, std::chars_format::scientific, 14);
  double clean = v;
  std::from_chars(buffer, written.ptr, clean);
  // Noise is a unit or two in the last place; a larger difference is real
  // digits (15 deg in radians, a third) and stays.
  const double up = std::nextafter(std::nextafter(v, HUGE_VAL), HUGE_VAL);
  const double down = std::nextafter(std::nextafter(v, -HUGE_VAL), -HUGE_VAL);
  return clean >= down && clean <= up ? clean : v;
}

double convert(double value, std::string_view from_unit, std::string_view to_unit) {
  const Unit from = parse_unit(from_unit);
  const Unit to = parse_unit(to_unit);
  if (from.dimension != to.dimension)
    throw UnitError("cannot convert " + std::string(from_unit) + " to " + std::string(to_unit));
  if (from.offset == 0.0 && to.offset == 0.0) return value * (from.factor / to.factor);
  return (value * from.factor + from.offset - to.offset) / to.factor;
}

}  // namespace swashtune
