// Unit parsing and conversion (core/src/units.cpp).

#include <gtest/gtest.h>

#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "swashtune/parameters.hpp"
#include "swashtune/units.hpp"

namespace {

using namespace swashtune;

constexpr double pi = 3.14159265358979323846;

// NIST SP 811 (2008), appendix B: exact conversion factors to SI.
constexpr double kPsi = 6894.757293168;      // Pa
constexpr double kLbf = 4.4482216152605;     // N
constexpr double kInch = 0.0254;             // m
constexpr double kCubicInch = 1.6387064e-5;  // m^3
constexpr double kGallon = 3.785411784e-3;   // m^3, US liquid gallon = 231 in^3
constexpr double kGpm = 6.30901964e-5;       // m^3/s, US gallon per minute
constexpr double kHorsepower = 745.6998716;  // W, 550 ft lbf/s (rounded by NIST to 10 digits)
constexpr double kBar = 1e5;                 // Pa
constexpr double kPound = 0.45359237;        // kg, avoirdupois pound

// Relative comparison for factors built from several exact decimals, where
// the last bit may differ from the product rounded once.
void expect_relative(double actual, double expected, double tolerance, const std::string& what) {
  EXPECT_NEAR(actual, expected, tolerance * std::abs(expected)) << what;
}

TEST(Units, NistExactFactors) {
  expect_relative(convert(1.0, "psi", "Pa"), kPsi, 1e-15, "psi");
  expect_relative(convert(1.0, "lbf", "N"), kLbf, 1e-15, "lbf");
  expect_relative(convert(1.0, "in", "m"), kInch, 1e-15, "in");
  expect_relative(convert(1.0, "in^3", "m^3"), kCubicInch, 1e-15, "in^3");
  expect_relative(convert(1.0, "gal", "m^3"), kGallon, 1e-15, "gal");
  expect_relative(convert(1.0, "gal", "in^3"), 231.0, 1e-15, "gal = 231 in^3");
  expect_relative(convert(1.0, "gpm", "m^3/s"), kGpm, 1e-15, "gpm");
  expect_relative(convert(1.0, "bar", "Pa"), kBar, 1e-15, "bar");
  expect_relative(convert(1.0, "lb", "kg"), kPound, 1e-15, "lb");
  // NIST gives the horsepower to 10 significant digits only.
  expect_relative(convert(1.0, "hp", "W"), kHorsepower, 1e-9, "hp");
  // psi is lbf/in^2; 6894.757293168 is that quotient (6894.757293168361...)
  // cut to 13 digits, hence the looser tolerance.
  expect_relative(convert(1.0, "lbf/in^2", "psi"), 1.0, 1e-12, "lbf/in^2");
}

struct UnitCase {
  const char* unit;
  const char* stored;  // the unit of a registry key with this dimension
  double factor;       // 1 `unit` expressed in `stored`
};

// Every unit interfaces.md promises, against independently written factors.
// clang-format off
const std::vector<UnitCase> kListedUnits = {
    {"Pa", "Pa", 1.0}, {"kPa", "Pa", 1e3}, {"MPa", "Pa", 1e6}, {"GPa", "Pa", 1e9},
    {"bar", "Pa", kBar}, {"psi", "Pa", kPsi},
    {"m", "m", 1.0}, {"cm", "m", 1e-2}, {"mm", "m", 1e-3}, {"um", "m", 1e-6}, {"in", "m", kInch},
    {"m^2", "m^2", 1.0}, {"cm^2", "m^2", 1e-4}, {"mm^2", "m^2", 1e-6}, {"in^2", "m^2", kInch * kInch},
    {"m^3", "m^3", 1.0}, {"cm^3", "m^3", 1e-6}, {"cc", "m^3", 1e-6}, {"L", "m^3", 1e-3},
    {"mL", "m^3", 1e-6}, {"in^3", "m^3", kCubicInch}, {"gal", "m^3", kGallon},
    {"m^3/s", "m^3/s", 1.0}, {"L/min", "m^3/s", 1e-3 / 60.0}, {"gpm", "m^3/s", kGpm},
    {"m^3/rev", "m^3/rev", 1.0}, {"cm^3/rev", "m^3/rev", 1e-6}, {"cc/rev", "m^3/rev", 1e-6},
    {"in^3/rev", "m^3/rev", kCubicInch},
    {"rpm", "rev/min", 1.0}, {"rev/min", "rev/min", 1.0},
    {"rad", "rad", 1.0}, {"deg", "rad", pi / 180.0},
    {"kg", "kg", 1.0}, {"g", "kg", 1e-3}, {"lb", "kg", kPound},
    {"N", "N", 1.0}, {"kN", "N", 1e3}, {"lbf", "N", kLbf},
    {"N/m", "N/m", 1.0}, {"kN/m", "N/m", 1e3}, {"N/mm", "N/m", 1e3}, {"lbf/in", "N/m", kLbf / kInch},
    {"N*m", "N*m", 1.0}, {"N*m*s/rad", "N*m*s/rad", 1.0}, {"kg*m^2", "kg*m^2", 1.0},
    {"N*s/m", "N*s/m", 1.0},
    {"s", "s", 1.0}, {"ms", "s", 1e-3},
};
// clang-format on

TEST(Units, EveryListedUnitConverts) {
  for (const UnitCase& c : kListedUnits) {
    SCOPED_TRACE(c.unit);
    ASSERT_NO_THROW(parse_unit(c.unit));
    expect_relative(convert(1.0, c.unit, c.stored), c.factor, 1e-14, c.unit);
    // The quantity form used in scenario files gives the same number.
    const std::string text = "2.5 " + std::string(c.unit);
    expect_relative(convert_to(text, c.stored), 2.5 * c.factor, 1e-14, text);
  }
}

TEST(Units, CompoundUnits) {
  expect_relative(convert(60.0, "L/min", "m^3/s"), 1e-3, 1e-15, "L/min");
  expect_relative(convert(45.0, "cm^3/rev", "m^3/rev"), 45e-6, 1e-15, "cm^3/rev");
  // A rotational damping of 1 N*m per rad/s, written three ways.
  expect_relative(convert(1.0, "N*m*s/rad", "kg*m^2/(s*rad)"), 1.0, 1e-15, "N*m*s/rad");
  expect_relative(convert(1.0, "N*m/(rad/s)", "N*m*s/rad"), 1.0, 1e-15, "N*m/(rad/s)");
  // Leakage: 1 L/min per bar in m^3/(s*Pa).
  expect_relative(convert(1.0, "L/min/bar", "m^3/(s*Pa)"), 1e-3 / 60.0 / kBar, 1e-15, "L/min/bar");
  expect_relative(convert(1.0, "m^3/(s*Pa)", "m^3/s/Pa"), 1.0, 1e-15, "m^3/(s*Pa)");
  expect_relative(convert(1.0, "lbf/in", "N/m"), kLbf / kInch, 1e-15, "lbf/in");
  // Spaces inside and around a unit expression are allowed.
  expect_relative(convert_to(" 20  kN / m ", "N/m"), 20e3, 1e-15, "spaced");
  // Pressure from its SI base units: 1 Pa = 1 kg/(m*s^2).
  expect_relative(convert(1.0, "kg/(m*s^2)", "Pa"), 1.0, 1e-15, "kg/(m*s^2)");
  expect_relative(convert(1.0, "kg*m^-1*s^-2", "Pa"), 1.0, 1e-15, "negative exponents");
}

TEST(Units, RpmIsRevolutionsPerMinute) {
  EXPECT_DOUBLE_EQ(convert(1.0, "rpm", "rev/min"), 1.0);
  EXPECT_DOUBLE_EQ(convert_to("1800 rpm", "rev/min"), 1800.0);
  expect_relative(convert(60.0, "rpm", "rad/s"), 2.0 * pi, 1e-15, "60 rpm in rad/s");
  // Angle is a dimension of its own: rpm is not a frequency.
  EXPECT_THROW(convert(1.0, "rpm", "Hz"), UnitError);
}

// A unit and its alias must give back the number as written: "1500 rpm" is
// exactly 1500 rev/min, so a scenario written back says 1500, not
// 1500.0000000000002. Multiplying by one factor and dividing by the same
// factor rounds twice; the ratio of the factors is exactly 1.
TEST(Units, AliasConvertsExactly) {
  int mismatches = 0;
  std::ostringstream first;
  first.precision(17);
  for (int n = 1; n <= 5000; ++n) {
    const double back = convert_to(std::to_string(n) + " rpm", "rev/min");
    if (back != n && mismatches++ == 0) first << n << " rpm -> " << back << " rev/min";
  }
  EXPECT_EQ(mismatches, 0) << "first: " << first.str();
  EXPECT_EQ(convert(1500.0, "rpm", "rev/min"), 1500.0);
  EXPECT_EQ(convert(1500.0, "rev/min", "rpm"), 1500.0);
}

TEST(Units, CelsiusHasAnOffset) {
  EXPECT_DOUBLE_EQ(convert_to("20 degC", "K"), 293.15);
  EXPECT_DOUBLE_EQ(convert(100.0, "degC", "K"), 373.15);
  EXPECT_NEAR(convert_to("300 K", "degC"), 26.85, 1e-12);
  EXPECT_NEAR(convert(-40.0, "degC", "degF"), -40.0, 1e-12);
}

TEST(Units, QuantityForms) {
  EXPECT_DOUBLE_EQ(convert_to("17deg", "rad"), 17.0 * pi / 180.0);
  EXPECT_DOUBLE_EQ(convert_to("  3000 psi  ", "Pa"), 3000.0 * kPsi);
  EXPECT_DOUBLE_EQ(convert_to("1.2e-3 m^3", "L"), 1.2);
  EXPECT_DOUBLE_EQ(convert_to("-5 ms", "s"), -5e-3);
  // A bare number is already in the target unit.
  EXPECT_DOUBLE_EQ(convert_to("0.25", "m^3"), 0.25);
  EXPECT_DOUBLE_EQ(convert_to("50 %", "-"), 0.5);
  const Quantity q = parse_quantity("45 cm^3/rev");
  EXPECT_EQ(q.value, 45.0);
  EXPECT_TRUE(q.has_unit);
  EXPECT_EQ(q.unit.dimension, dim::displacement);
}

TEST(Units, WrongDimensionIsAClearError) {
  try {
    convert_to("210 kg", "Pa");
    FAIL() << "a mass was accepted as a pressure";
  } catch (const UnitError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("pressure"), std::string::npos) << message;
    EXPECT_NE(message.find("\"210 kg\""), std::string::npos) << message;
    EXPECT_NE(message.find("mass"), std::string::npos) << message;
  }
  EXPECT_THROW(convert_to("1800 rpm", "m^3/rev"), UnitError);
  EXPECT_THROW(convert_to("45 cm^3", "m^3/rev"), UnitError);  // volume, not per revolution
  EXPECT_THROW(convert_to("17 %", "rad"), UnitError);         // a ratio is not an angle
  EXPECT_THROW(convert_to("1 L/min", "m^3"), UnitError);
  EXPECT_THROW(convert(1.0, "N", "Pa"), UnitError);
  EXPECT_THROW(convert(1.0, "degC", "s"), UnitError);
}

TEST(Units, GarbageIsAnErrorNotACrash) {
  const char* garbage[] = {
      "",       "   ",       "abc",    "12 furlongs", "1e999 Pa",   "-1e999 Pa", "nan Pa", "inf",      "Pa",
      "1 m^",   "1 m^x",     "1 m^-",  "1 (m",        "1 m)",       "1 m/",      "1 */m",  "1 m**2",   "1 ()",
      "1 m^2^", "1 bar bar", "1 2 Pa", "1 Pa\x01",    "1 \xc3\xa9", "1 m^3/(s*", "--1 Pa", "1 degC/s",
  };
  for (const char* text : garbage) {
    SCOPED_TRACE(std::string("\"") + text + "\"");
    EXPECT_THROW(convert_to(text, "Pa"), UnitError);
    EXPECT_THROW(parse_quantity(std::string(text) + " junk"), UnitError);
  }
  EXPECT_THROW(parse_unit("furlongs"), UnitError);
  EXPECT_THROW(parse_unit("m^"), UnitError);
  // The message says what was wrong with what.
  try {
    convert_to("12 furlongs", "m");
    FAIL() << "an unknown unit was accepted";
  } catch (const UnitError& e) {
    EXPECT_NE(std::string(e.what()).find("furlongs"), std::string::npos) << e.what();
  }
}

// The registry's stored units and display units must all be understood, and
// the display units must fit the stored unit, or the editor could not convert.
TEST(Units, RegistryUnitsParseAndAgree) {
  const auto check = [](std::string_view key, std::string_view unit, std::string_view metric, std::string_view us) {
    SCOPED_TRACE(std::string(key));
    Unit stored, shown_metric, shown_us;
    ASSERT_NO_THROW(stored = parse_unit(unit));
    ASSERT_NO_THROW(shown_metric = parse_unit(metric));
    ASSERT_NO_THROW(shown_us = parse_unit(us));
    EXPECT_EQ(shown_metric.dimension, stored.dimension) << metric << " vs " << unit;
    EXPECT_EQ(shown_us.dimension, stored.dimension) << us << " vs " << unit;
  };
  for (const ParameterSpec& p : parameter_registry()) check(p.key, p.unit, p.metric_unit, p.us_unit);
  for (const SettingSpec& s : setting_registry()) check(s.key, s.unit, s.metric_unit, s.us_unit);
}

// What loggers and people at a command line write: trade spellings in any
// case, exponents without '^'. Factors from NIST SP 811 as above.
TEST(Units, RelaxedSpellings) {
  expect_relative(parse_unit_relaxed("PSI").factor, kPsi, 1e-15, "PSI");
  expect_relative(parse_unit_relaxed("Psi").factor, kPsi, 1e-15, "Psi");
  EXPECT_EQ(parse_unit_relaxed("RPM").dimension, parse_unit("rpm").dimension);
  expect_relative(parse_quantity_relaxed("1800RPM").si(), 1800.0 * 2.0 * pi / 60.0, 1e-15, "1800RPM");
  expect_relative(parse_unit_relaxed("cm3/rev").factor, 1e-6 / (2.0 * pi), 1e-15, "cm3/rev");
  EXPECT_EQ(parse_unit_relaxed("cm3/rev").dimension, dim::displacement);
  expect_relative(parse_unit_relaxed("CM3/REV").factor, 1e-6 / (2.0 * pi), 1e-15, "CM3/REV");
  expect_relative(parse_unit_relaxed("m3/s").factor, 1.0, 1e-15, "m3/s");
  expect_relative(parse_unit_relaxed("KPA").factor, 1e3, 1e-15, "KPA");
  expect_relative(parse_unit_relaxed("BAR").factor, kBar, 1e-15, "BAR");
  expect_relative(parse_unit_relaxed("lpm").factor, 1e-3 / 60.0, 1e-15, "lpm");
  expect_relative(parse_unit_relaxed("L/MIN").factor, 1e-3 / 60.0, 1e-15, "L/MIN");
  expect_relative(parse_quantity_relaxed("1kHz").si(), 1000.0, 1e-15, "1kHz");
  expect_relative(parse_quantity_relaxed("1 KHZ").si(), 1000.0, 1e-15, "1 KHZ");
  expect_relative(parse_quantity_relaxed("100MS").si(), 0.1, 1e-15, "100MS");
  expect_relative(parse_unit_relaxed("\xC2\xB5s").factor, 1e-6, 1e-15, "micro sign");
  // Exact spellings keep their meaning: "mL" is a millilitre, "MPa" a megapascal.
  expect_relative(parse_unit_relaxed("MPa").factor, 1e6, 1e-15, "MPa");
  expect_relative(parse_unit_relaxed("mpa").factor, 1e6, 1e-15, "mpa: no millipascal in the table");
  EXPECT_THROW(parse_unit_relaxed("furlong"), UnitError);
  // Scenario files stay strict.
  EXPECT_THROW(parse_unit("PSI"), UnitError);
  EXPECT_THROW(parse_unit("cm3/rev"), UnitError);
}

TEST(Units, DimensionNames) {
  EXPECT_EQ(dimension_name(dim::pressure), "pressure");
  EXPECT_EQ(dimension_name(dim::mass), "mass");
  EXPECT_EQ(dimension_name(parse_unit("L/min").dimension), "flow rate");
  // An unnamed dimension still says something readable.
  EXPECT_FALSE(dimension_name(Dimension{2, 7, -1}).empty());
}

// A decimal written with a unit is stored as the double nearest that decimal
// in SI, so that a file written back shows it as typed (1 L = 1e-3 m^3
// exactly by definition, NIST SP 811).
TEST(Units, DecimalsStayDecimalsInStoredUnits) {
  EXPECT_EQ(convert_to("1.125 L", "m^3"), 0.001125);  // 1.125 * 1e-3 alone gives 0.0011250000000000001
  EXPECT_EQ(convert_to("0.35 L", "m^3"), 0.00035);
  EXPECT_EQ(convert_to("8.4 mm", "m"), 0.0084);
  EXPECT_EQ(convert_to("1500 rpm", "rev/min"), 1500.0);
  EXPECT_EQ(decimal_clean(1.125 * 1e-3), 0.001125);
  EXPECT_EQ(decimal_clean(0.1 + 0.2), 0.3);
  // Real digits beyond the 15th are not noise: they stay.
  EXPECT_EQ(decimal_clean(1.0 / 3.0), 1.0 / 3.0);
  EXPECT_EQ(convert_to("15 deg", "rad"), 15.0 * (3.14159265358979323846 / 180.0));
  EXPECT_EQ(decimal_clean(0.0), 0.0);
  EXPECT_TRUE(std::isinf(decimal_clean(HUGE_VAL)));
}

}  // namespace
