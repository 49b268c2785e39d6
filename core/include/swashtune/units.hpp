// Physical units: parsing "number unit" strings, dimension checks, SI
// conversion. Conversion factors follow NIST SP 811 (exact definitions).
#pragma once

#include <array>
#include <stdexcept>
#include <string>
#include <string_view>

namespace swashtune {

// The units results are shown in: SI, metric (bar, L/min, deg, mm) or US.
enum class UnitSystem { si, metric, us };

// Exponents of the base quantities. Angle is kept as its own base quantity
// (although SI treats the radian as 1) so that "17 kg" or "17 %" cannot be
// taken for a swash angle, and "rpm" cannot be taken for "Hz".
struct Dimension {
  std::array<int, 5> exponent{};  // mass, length, time, angle, temperature

  constexpr Dimension() = default;
  constexpr Dimension(int mass, int length, int time, int angle = 0, int temperature = 0)
      : exponent{mass, length, time, angle, temperature} {}

  friend constexpr bool operator==(const Dimension& a, const Dimension& b) {
    for (std::size_t i = 0; i < a.exponent.size(); ++i)
      if (a.exponent[i] != b.exponent[i]) return false;
    return true;
  }
  friend constexpr bool operator!=(const Dimension& a, const Dimension& b) { return !(a == b); }
  friend constexpr Dimension operator*(const Dimension& a, const Dimension& b) {
    Dimension r;
    for (std::size_t i = 0; i < r.exponent.size(); ++i) r.exponent[i] = a.exponent[i] + b.exponent[i];
    return r;
  }
  constexpr Dimension power(int n) const {
    Dimension r;
    for (std::size_t i = 0; i < r.exponent.size(); ++i) r.exponent[i] = exponent[i] * n;
    return r;
  }
};

namespace dim {
inline constexpr Dimension none{0, 0, 0};
inline constexpr Dimension mass{1, 0, 0};
inline constexpr Dimension length{0, 1, 0};
inline constexpr Dimension time{0, 0, 1};
inline constexpr Dimension angle{0, 0, 0, 1};
inline constexpr Dimension temperature{0, 0, 0, 0, 1};
inline constexpr Dimension area{0, 2, 0};
inline constexpr Dimension volume{0, 3, 0};
inline constexpr Dimension pressure{1, -1, -2};
inline constexpr Dimension force{1, 1, -2};
inline constexpr Dimension flow{0, 3, -1};
inline constexpr Dimension displacement{0, 3, 0, -1};      // volume per radian of shaft angle
inline constexpr Dimension rotational_speed{0, 0, -1, 1};  // rad/s
inline constexpr Dimension density{1, -3, 0};
inline constexpr Dimension spring_rate{1, 0, -2};             // N/m
inline constexpr Dimension linear_damping{1, 0, -1};          // N*s/m
inline constexpr Dimension torque{1, 2, -2};                  // N*m
inline constexpr Dimension rotational_damping{1, 2, -1, -1};  // N*m*s/rad
inline constexpr Dimension inertia{1, 2, 0};                  // kg*m^2
inline constexpr Dimension leakage_coefficient{-1, 4, 1};     // m^3/(s*Pa)
inline constexpr Dimension torque_per_pressure{0, 3, 0};      // N*m/Pa
inline constexpr Dimension kinematic_viscosity{0, 2, -1};     // m^2/s
}  // namespace dim

// A readable name for a dimension ("pressure", "flow rate", ...), or its
// exponents in SI base units when it has no common name.
std::string dimension_name(const Dimension& d);

class UnitError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// A parsed unit expression: si = value * factor + offset.
struct Unit {
  double factor = 1.0;
  double offset = 0.0;  // non-zero only for degC
  Dimension dimension;
};

// Parses a unit expression such as "bar", "cm^3/rev", "N*m*s/rad",
// "m^3/(s*Pa)", "L/min". "-" and "" mean dimensionless. Throws UnitError.
Unit parse_unit(std::string_view text);

struct Quantity {
  double value = 0.0;  // the number as written
  bool has_unit = false;
  Unit unit;
  double si() const { return value * unit.factor + unit.offset; }
};

// Parses "number [unit]", e.g. "3000 psi", "1.2e-3 m^3", "17deg". Throws UnitError.
Quantity parse_quantity(std::string_view text);

// As parse_unit and parse_quantity, for what loggers and people at a command
// line write: a unit spelt exactly is taken as such; otherwise names in any
// case where that is not ambiguous ("PSI", "RPM", "KPA", "HZ"), exponents
// without '^' ("cm3/rev", "m3/s"), a micro sign for "u", "lpm" for L/min.
// Scenario files keep the strict spelling. Throws UnitError.
Unit parse_unit_relaxed(std::string_view text);
Quantity parse_quantity_relaxed(std::string_view text);

// Converts a quantity string into the given target unit (e.g. a parameter's
// unit "rev/min"), checking that the dimensions agree. A bare number is
// taken to be in the target unit already. Throws UnitError.
double convert_to(std::string_view quantity_text, std::string_view target_unit);

// Converts a value between two unit expressions of equal dimension.
double convert(double value, std::string_view from_unit, std::string_view to_unit);

// The double nearest to v written with 15 significant digits, when that is
// at most two units in the last place from v. A decimal scaled by an inexact
// factor or stepped along a grid gains noise in its last bit (1.125 L is
// 0.0011250000000000001 m^3); this takes it off, so that a file written back
// shows the decimal that was meant. Real digits (15 deg in radians) stay.
double decimal_clean(double v);

}  // namespace swashtune
