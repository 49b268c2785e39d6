// Sensitivities of the figures users act on to every tunable design
// parameter (issue 15, item 1), at the present design.
//
// The least damped mode's eigenvalue follows the first-order perturbation
// result for a simple eigenvalue (Wilkinson, The Algebraic Eigenvalue
// Problem, 1965, ch. 2): d lambda = w^H dA v / (w^H v), v and w its right
// and left eigenvectors. dA is the change of the closed-loop matrix, with
// the operating point solved again on both sides (a central difference of
// the matrices, not of the eigenvalues). The loop margins are central
// differences of the margins, and the transient figures (peak, overshoot,
// off- and on-stroke times, droop) central differences of the data-sheet
// test's runs (datasheet.hpp, from load.opening 1: full flow), computed on
// several threads. Where dry friction decides the loop's small motions no
// linear figure is given.
#pragma once

#include <Eigen/Core>
#include <array>
#include <complex>
#include <optional>
#include <string>
#include <vector>

#include "swashtune/analysis.hpp"
#include "swashtune/parameters.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/units.hpp"

namespace swashtune {

enum class Response {
  modulus_margin,  // min |1 + L(jw)|
  gain_margin,     // dB
  phase_margin,    // deg
  damping,         // damping ratio of the least damped oscillatory mode
  frequency,       // its damped frequency, Hz
  peak,            // data-sheet slam peak, Pa
  overshoot,       // (peak - deadhead) / deadhead
  off_stroke,      // s
  on_stroke,       // s
  droop,           // fraction of the setting
};
inline constexpr int response_count = 10;
inline constexpr Response all_responses[response_count] = {
    Response::modulus_margin, Response::gain_margin, Response::phase_margin, Response::damping,
    Response::frequency,      Response::peak,        Response::overshoot,    Response::off_stroke,
    Response::on_stroke,      Response::droop};

const char* key_of(Response r);    // "phase_margin"
const char* words_of(Response r);  // "the phase margin"
const char* heading_of(Response r);  // short, for table headings: "PM", "off"
const char* unit_of(Response r);   // stored unit: "-", "dB", "deg", "Hz", "Pa", "s"
// Whether the figure is better when larger (margins, damping); false for
// the peak, overshoot and times; nullopt for the frequency and droop, where
// neither is better in general.
std::optional<bool> larger_is_better(Response r);

struct ResponseValues {
  std::array<std::optional<double>, response_count> value{};
  std::optional<double>& operator[](Response r) { return value[static_cast<int>(r)]; }
  const std::optional<double>& operator[](Response r) const { return value[static_cast<int>(r)]; }
};

struct ParameterEffect {
  const ParameterSpec* spec = nullptr;
  double value = 0.0;  // present, stored unit
  // The change the effects are given for: a fraction of the value when
  // relative (0.1: 10 % larger), else an amount in the stored unit.
  double change = 0.0;
  bool relative = true;
  // Change of each response for that change (first order), stored units;
  // empty where the response does not exist on both sides or the runs failed.
  ResponseValues effect;
  // Change of the least damped eigenvalue for that change, 1/s (the
  // perturbation formula), and its central difference for comparison.
  std::optional<std::complex<double>> eigenvalue_change;
  std::optional<std::complex<double>> eigenvalue_change_by_differences;
  // Why the parameter was not varied ("not fitted", "value 0"); empty when it was.
  std::string skipped;
  // A change of the stop contact or of the layout between the two sides:
  // the linear figures then jump and are left empty.
  std::string note;
};

struct SensitivityOptions {
  double load_opening = 0.0;  // where the loop is linearised: 0 = deadhead, where the compensator holds
  int jobs = 1;               // threads
  // The central differences step this share of each parameter's reported
  // change to either side: for the linear figures 1/100 (10 %: +-0.1 %;
  // the eigenvalues bend enough that +-1 % moves the formula's result by up
  // to 3 % against the eigenvalues' own differences), for the runs 1/10
  // (+-1 %: the crossing times are interpolated between samples).
  double linear_step_fraction = 0.01;
  double transient_step_fraction = 0.1;
  bool transient = true;  // also the data-sheet test's figures (runs)
};

struct SensitivityReport {
  ResponseValues present;
  StabilityReport stability;        // at the present design and the chosen opening
  // Share of full stroke at which the data-sheet test (from load.opening 1)
  // starts; below 0.95 it gives no transient figures.
  double start_stroke = 0.0;
  std::vector<ParameterEffect> effects;  // in registry order, one per tunable parameter
};

SensitivityReport sensitivity(const Scenario& scenario, const SensitivityOptions& options = {});

// The first-order change of every eigenvalue of a (simple eigenvalues) for
// the change da: (V^-1 da V)_ii with V the right eigenvectors; the rows of
// V^-1 are the left eigenvectors normalised so that w^H v = 1. Returned
// beside the eigenvalues, in Eigen's order.
struct EigenvalueChanges {
  Eigen::VectorXcd eigenvalues;
  Eigen::VectorXcd changes;
};
EigenvalueChanges eigenvalue_changes(const Eigen::MatrixXd& a, const Eigen::MatrixXd& da);

// "a 10 % larger compensator control orifice lowers the phase margin by 4.0 deg".
std::string effect_in_words(const ParameterEffect& e, Response r, UnitSystem units);
// A response's value (or change) as a number in the unit system's display
// unit (bar or psi, ms, % or points of %), and that unit ("" for a ratio).
double response_shown(Response r, double stored, UnitSystem units);
const char* response_shown_unit(Response r, UnitSystem units);
// A response's value or change in the unit system's display unit, with it.
std::string response_text(Response r, double stored, UnitSystem units, bool is_change);

}  // namespace swashtune
