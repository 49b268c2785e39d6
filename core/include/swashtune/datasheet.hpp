// The figures a pump's data sheet gives (off-stroke and on-stroke times,
// droop, deadhead and cut-in pressure, the slam peak), computed on the
// scenario's machine in one fixed test, and a fit of unknown internal
// parameters to published figures, for a user who has a data sheet but no
// recording (issue 13, item 5). The fit says which figures it could not
// meet and which parameters the figures cannot determine.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "swashtune/fit.hpp"
#include "swashtune/scenario.hpp"

namespace swashtune {

// The data-sheet test, on the scenario's machine without its events: the
// pump runs steady at the scenario's load opening (full flow), the load
// valve closes over valve_time at closing_at, stays shut for hold, then
// opens again over valve_time to the same opening and the run goes on for
// recover. Swash positions are fractions of the full-stroke angle.
struct DataSheetTest {
  double valve_time = 5e-3;  // s: the valve's closing and opening ramp
  double closing_at = 0.02;  // s
  double hold = 0.5;         // s
  double recover = 1.0;      // s
  double sample_interval = 0.1e-3;  // s: the crossing times are interpolated between samples
};

enum class Figure { off_stroke, on_stroke, droop, deadhead, cut_in, peak };
inline constexpr Figure all_figures[] = {Figure::off_stroke, Figure::on_stroke, Figure::droop,
                                         Figure::deadhead,   Figure::cut_in,    Figure::peak};
const char* key_of(Figure f);          // "off_stroke", as --target names it
const char* description_of(Figure f);  // how it is measured, in words
const char* unit_of(Figure f);         // the stored unit: "s", "%" (droop as a fraction), "Pa"

struct DataSheetFigures {
  // off_stroke: from the start of the closure until the swash falls below
  // 10 % of full stroke; on_stroke: from the start of the reopening until it
  // rises above 90 %. Empty when not reached in the hold (or recover) time.
  std::optional<double> off_stroke;  // s
  std::optional<double> on_stroke;   // s
  // From the steady characteristic (analysis.hpp): cut-in where the pump's
  // flow is 5 % below its full-stroke flow, deadhead at opening 0, droop =
  // (deadhead - cut-in) / setting.
  std::optional<double> cut_in;  // Pa
  double deadhead = 0.0;         // Pa
  std::optional<double> droop;   // fraction of the setting
  double peak = 0.0;             // Pa: the highest discharge pressure after the closure, before the reopening
  double start_stroke = 0.0;     // fraction of full stroke at the start of the test
  std::optional<double> value(Figure f) const;
};

// `figures` chooses what to compute (the transient is run only for the
// times and the peak, the characteristic only for droop and cut-in).
// Throws SolverError when a run fails.
DataSheetFigures datasheet_figures(const Scenario& scenario, const DataSheetTest& test = {},
                                   const std::vector<Figure>& figures = {std::begin(all_figures),
                                                                         std::end(all_figures)});

// One published figure: a value and the tolerance it is known to (one
// standard deviation), both in the figure's stored unit.
struct FigureTarget {
  Figure figure = Figure::off_stroke;
  double value = 0.0;
  double tolerance = 0.0;
  bool tolerance_given = false;  // false: the default (see parse_targets)
};

// "off_stroke=35ms,on_stroke=90ms+-10ms,droop=3%,deadhead=3100psi": every
// value takes a unit of its figure's dimension (a bare number is refused,
// naming the unit it wants). Without "+-" a figure's tolerance is 10 % of
// its value for the times and droop (data sheets give typical values;
// from memory) and 1 % for the pressures (a class 1 gauge's reading;
// common practice). Throws ScenarioError naming `option` and the item.
std::vector<FigureTarget> parse_targets(const std::string& text, const std::string& option = "--target");

struct FigureResult {
  FigureTarget target;
  std::optional<double> initial;   // at the scenario's values
  std::optional<double> achieved;  // at the fitted values
  double normalised_miss = 0.0;    // (achieved - target) / tolerance
  bool met = false;                // |normalised_miss| <= 1
};

struct DataSheetFitResult {
  std::vector<FittedParameter> parameters;  // standard errors from the targets' tolerances
  std::vector<FigureResult> figures;
  int simulations = 0;  // data-sheet tests run
  bool converged = false;
  bool cancelled = false;
  FitStop stop = FitStop::cancelled;
  std::string message;  // how the search ended, naming the criterion
  std::vector<FitStart> starts;
  bool starts_agree = true;
  std::string starts_note;
  bool all_met = false;
  // What the figures cannot determine: fewer figures than free parameters,
  // a parameter they do not depend on, or two that only the figures'
  // combination fixes; empty when every parameter is determined.
  std::vector<std::string> undetermined;
  // Over-determined (more figures than parameters): the chi-square of the
  // misses and whether it is within the 99th percentile of its degrees of
  // freedom, i.e. whether the figures agree with one another on this model.
  std::optional<double> chi_square;
  int degrees_of_freedom = 0;
  bool consistent = true;
  std::string verdict_text;  // in plain words
  DataSheetTest test;
  Scenario fitted;
};

struct DataSheetFitOptions {
  std::vector<std::string> free_keys;
  std::vector<FigureTarget> targets;
  DataSheetTest test;
  int max_iterations = 40;
  int starts = 3;
};

// Throws ScenarioError for no targets, an unknown key, a figure named twice,
// or a start that is not at full flow (the test needs the pump on full
// stroke at the scenario's opening).
DataSheetFitResult fit_to_datasheet(const Scenario& scenario, const DataSheetFitOptions& options,
                                    const FitProgress& progress = nullptr);

// The chi-square distribution's 99th percentile for k degrees of freedom
// (the Wilson-Hilferty cube-root approximation, Wilson & Hilferty 1931;
// exact tabled values for k <= 2).
double chi_square_99(int k);

}  // namespace swashtune
