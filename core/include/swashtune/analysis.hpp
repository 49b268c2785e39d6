// Operating points, linearisation and loop margins.
//
// The loop examined is the displacement loop, opened at the swash angle where
// it sets the pump's geometric flow (interfaces.md, "Stability v2"): in the
// tangent law Q_g = D_max N/60 tan(u)/tan(a_max) an input u replaces the
// swash angle, and nothing else changes. Linearised, x' = A x + B u,
// y = a = C x; the loop transfer is L(s) = -C (sI - A)^-1 B and the closed
// loop is A + B C (the model's own Jacobian).
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
// held on a stop does not respond to small disturbances). Sized by the
// model's state, whatever its length.
struct LinearModel {
  std::vector<int> states;   // indices into State of the free coordinates
  Eigen::MatrixXd a;         // open loop: u replaces the swash angle in the tangent law
  Eigen::VectorXd b;         // d(rates)/du
  Eigen::RowVectorXd c;      // picks the swash angle (zero when the swash is held)
  Eigen::VectorXd scale;     // the state scales, for well-conditioned algebra
  bool loop_active = false;  // false when the swashplate rests on a stop: no loop to open

  Eigen::MatrixXd closed_loop() const { return a + b * c; }
  // G(jw) = C (jw I - A)^-1 B; the loop transfer is -G.
  std::complex<double> open_loop_response(double omega) const;
  std::complex<double> loop_transfer(double hz) const;  // L(j 2 pi hz)
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

// Eigenvalues with Re >= 0.
int unstable_count(const std::vector<Mode>& modes);

struct BodePoint {
  double frequency_hz;
  double magnitude_db;  // of L(jw)
  double phase_deg;     // of L(jw), unwrapped from the lowest frequency
};

struct GainCrossover {  // |L(jw)| = 1
  double frequency_hz;
  double phase_margin_deg;  // 180 + phase of L, wrapped into (-180, 180]
};

struct PhaseCrossover {  // L(jw) on the negative real axis: phase an odd multiple of -180 deg
  double frequency_hz;
  double gain_margin_db;  // -20 log10 |L|
};

struct LoopMargins {
  // The smallest (signed) over all crossings in 0.1 Hz..100 kHz; null when
  // there is no crossing of that kind.
  std::optional<double> gain_margin_db;
  std::optional<double> phase_margin_deg;
  std::optional<double> crossover_frequency_hz;        // of the gain crossover giving the phase margin
  std::optional<double> phase_crossover_frequency_hz;  // of the phase crossover giving the gain margin
  std::optional<double> modulus_margin;                // min |1 + L(jw)|
  std::optional<double> modulus_margin_frequency_hz;
  std::vector<GainCrossover> gain_crossovers;  // every one, by frequency
  std::vector<PhaseCrossover> phase_crossovers;
};

inline constexpr double margin_search_low_hz = 0.1;
inline constexpr double margin_search_high_hz = 1e5;

std::vector<BodePoint> loop_bode(const LinearModel& m, double from_hz, double to_hz, int points);
// Every crossing of L(jw) in 0.1 Hz..100 kHz: a 200-a-decade grid, refined
// wherever L turns by more than 20 deg or changes by more than 40 % between
// neighbours, crossings located by bisection, the modulus margin by a
// golden-section search around the closest grid point.
LoopMargins loop_margins(const LinearModel& m);

// Number of times L(jw) encircles -1 clockwise as w runs over the whole
// imaginary axis (the Nyquist contour; L is strictly proper, so the large
// arc adds nothing). By the Nyquist criterion it equals closed-loop minus
// open-loop unstable poles. Counted from the frequency response alone, as a
// check on the eigenvalues; nullopt when L passes too close to -1 to count.
std::optional<int> nyquist_encirclements(const LinearModel& m);

// Dry (Coulomb) friction or stiction anywhere in the model, named with its
// value ("faults.spool_friction = 15 N"); a linear model cannot describe the
// stick-slip it causes. Every friction parameter belongs here.
std::vector<std::string> dry_friction_sources(const ModelParameters& p);
// The same as one line: "faults.spool_friction = 15 N, pump.swash_friction = 5 N*m".
std::string listed_dry_friction(const ModelParameters& p);
bool has_dry_friction(const ModelParameters& p);

// Whether dry friction decides the loop's small motions, so that no linear
// model describes it: any friction on the compensator spool above 2 % of the
// sensing force at the setting (a sticky spool), or a cradle friction moment
// above half the bias spring's moment at full stroke. Smaller friction only
// widens the characteristic into a hysteresis band; the loop is then
// linearised without it (see linearisation_parameters).
bool dry_friction_dominates(const ModelParameters& p);

// The parameters the loop is linearised with: every dry friction set to zero,
// so the operating point is the middle of the friction's hysteresis band and
// the modes are those of motions large enough to slide.
ModelParameters linearisation_parameters(const ModelParameters& p);

struct StabilityReport {
  OperatingPoint operating_point;
  double load_opening = 0.0;
  LinearModel model;
  std::vector<Mode> modes;       // closed loop
  std::optional<Mode> dominant;  // the oscillatory pair with the least damping ratio
  LoopMargins margins;
  int open_loop_unstable_poles = 0;    // eigenvalues of A with Re >= 0
  int closed_loop_unstable_poles = 0;  // eigenvalues of A + B C with Re >= 0
  bool stable = false;                 // every closed-loop eigenvalue in the left half plane
  // Whether the margins are stability margins: the loop is active, the
  // opened loop is stable by itself and the model is linear enough (no dry
  // friction). When false, `note` says why in plain words, and no view may
  // present the margins as safe.
  bool margins_apply = false;
  std::string note;
  // dry_friction: the model has any; dry_friction_dominates: it decides the
  // small motions and the margins do not apply (else it was left out of the
  // linear model, and the explanation says so).
  bool dry_friction = false;
  bool dry_friction_dominates = false;
  // What a plant engineer should read first: the verdict and the margins in
  // plain words, shared by every front end.
  std::vector<std::string> explanation;
};

StabilityReport analyse_stability(const ModelParameters& p, const RunSettings& settings,
                                  const std::optional<InitialCondition>& guess = std::nullopt);

// "the loop can take 4.5 times more gain before it hunts": the report in
// plain words (the verdict from the eigenvalues first). Fills
// StabilityReport::explanation; exposed for tests.
std::vector<std::string> explain_stability(const StabilityReport& report);

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
  // With dry friction (cradle or spool) the characteristic is a band: the
  // steady states reached while the load valve closes slowly (the pressure
  // rises, the swash destrokes against its friction) and while it opens
  // slowly, each friction held at its sliding level. Both empty without dry
  // friction; `points` is then the one curve, else the band's middle.
  std::vector<CharacteristicPoint> rising, falling;  // the same openings as `points`
  // Deadhead pressure on the rising branch less that on the falling one.
  std::optional<double> deadhead_hysteresis;
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
  std::optional<double> gain_margin_db, phase_margin_deg, crossover_frequency_hz, modulus_margin;
  bool margins_apply = false;
  std::optional<double> dominant_frequency_hz, dominant_damping_ratio;
  bool stable = false;
};

struct StabilityMap {
  Axis x, y;
  std::vector<MapPoint> points;  // x varies fastest
};

StabilityMap stability_map(const ModelParameters& p, const RunSettings& settings, const Axis& x, const Axis& y);

}  // namespace swashtune
