// Operating points, linearisation and loop margins.
//
// The loop examined is the compensator's pressure feedback opened at the
// spool's sensing area (interfaces.md): the spool feels an input pressure u
// in place of p_d. Linearised, x' = A x + B u, y = p_d = C x; the loop
// transfer is L(s) = -C (sI - A)^-1 B and the closed loop is A + B C.
#pragma once

#include <Eigen/Core>
#include <complex>
#include <optional>
#include <string>
#include <vector>

#include "swashtune/model.hpp"
#include "swashtune/parameters.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune {

// ---- steady state -------------------------------------------------------

// Equilibrium of the model at the given parameters. Newton (Eigen, damped,
// Jacobian by automatic differentiation) over each plausible combination of
// stop contacts, keeping the solution that is consistent (free coordinates
// inside their travel, held ones pressed onto their stop); when none is,
// integration to rest. `guess` seeds Newton (e.g. the neighbour on a sweep).
OperatingPoint steady_state(const ModelParameters& p, const RunSettings& settings,
                            const std::optional<InitialCondition>& guess = std::nullopt);

const char* stop_name(Stop s, bool swash);  // "free", "zero stroke", "full stroke", "closed end", ...

// ---- linearisation ------------------------------------------------------

// The linear model on the coordinates that are free to move (a coordinate
// held on a stop does not respond to small disturbances).
struct LinearModel {
  std::vector<int> states;  // indices into State of the free coordinates
  Eigen::MatrixXd a;        // open loop (u replaces p_d at the sensing area)
  Eigen::VectorXd b;
  Eigen::RowVectorXd c;      // picks p_d
  Eigen::VectorXd scale;     // the state scales, for well-conditioned algebra
  bool loop_active = false;  // false when the spool is held: no feedback path

  Eigen::MatrixXd closed_loop() const { return a + b * c; }
  // G(jw) = C (jw I - A)^-1 B; the loop transfer is -G.
  std::complex<double> open_loop_response(double omega) const;
};

LinearModel linearise(const ModelParameters& p, const InitialCondition& at);

struct Mode {
  std::complex<double> eigenvalue;
  double natural_frequency_hz = 0.0;  // |lambda| / 2 pi
  double damped_frequency_hz = 0.0;   // |Im lambda| / 2 pi
  double damping_ratio = 1.0;         // -Re lambda / |lambda|
  bool oscillatory() const { return eigenvalue.imag() != 0.0; }
};

Mode mode_of(std::complex<double> eigenvalue);

// Eigenvalues of a real matrix, balanced by the given diagonal similarity
// (scale) first; sorted by decreasing real part.
std::vector<Mode> modes_of(const Eigen::MatrixXd& a, const Eigen::VectorXd& scale);

struct BodePoint {
  double frequency_hz;
  double magnitude_db;  // of L(jw)
  double phase_deg;     // of L(jw), unwrapped from the lowest frequency
};

struct LoopMargins {
  std::optional<double> gain_margin_db;
  std::optional<double> phase_margin_deg;
  std::optional<double> crossover_frequency_hz;        // |L| = 1
  std::optional<double> phase_crossover_frequency_hz;  // phase of L = -180 deg
};

inline constexpr double margin_search_low_hz = 0.1;
inline constexpr double margin_search_high_hz = 1e5;

std::vector<BodePoint> loop_bode(const LinearModel& m, double from_hz, double to_hz, int points);
LoopMargins loop_margins(const LinearModel& m);

struct StabilityReport {
  OperatingPoint operating_point;
  double load_opening = 0.0;
  LinearModel model;
  std::vector<Mode> modes;       // closed loop
  std::optional<Mode> dominant;  // the oscillatory pair with the least damping ratio
  LoopMargins margins;
  // Poles of the opened loop (eigenvalues of A) with Re >= 0. With any, the
  // margins must be read by the Nyquist criterion (that many encirclements)
  // and only the closed-loop eigenvalues decide stability.
  int open_loop_unstable_poles = 0;
  bool stable = false;  // every closed-loop eigenvalue in the left half plane
};

StabilityReport analyse_stability(const ModelParameters& p, const RunSettings& settings,
                                  const std::optional<InitialCondition>& guess = std::nullopt);

// ---- steady characteristic ------------------------------------------------

struct CharacteristicPoint {
  double load_opening;
  double discharge_pressure;  // Pa
  double pump_flow;           // m^3/s delivered (geometric less leakage)
  double load_flow;           // m^3/s
  double swash_angle;         // rad
  SteadyMethod method;
};

struct Characteristic {
  std::vector<CharacteristicPoint> points;  // openings from 0 to 1
  double deadhead_pressure = 0.0;           // Pa, at opening 0
  std::optional<double> cut_in_pressure;    // Pa, where the pump flow is 5 % below its full-stroke flow
};

Characteristic steady_characteristic(const ModelParameters& p, const RunSettings& settings, int points);

// ---- stability map ----------------------------------------------------------

struct Axis {
  const ParameterSpec* spec = nullptr;
  std::vector<double> values;  // stored units
};

// "line.volume=0.5 L:2 L:7" -> 7 values evenly from 0.5e-3 to 2e-3 m^3.
// Throws ScenarioError with a message that names the argument.
Axis parse_axis(const std::string& text);

struct MapPoint {
  double x, y;
  bool solved = false;  // false when no operating point could be found
  std::optional<double> gain_margin_db, phase_margin_deg, crossover_frequency_hz;
  std::optional<double> dominant_frequency_hz, dominant_damping_ratio;
  bool stable = false;
};

struct StabilityMap {
  Axis x, y;
  std::vector<MapPoint> points;  // x varies fastest
};

StabilityMap stability_map(const ModelParameters& p, const RunSettings& settings, const Axis& x, const Axis& y);

}  // namespace swashtune
