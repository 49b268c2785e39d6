// Result files of a run: trace.csv in the chosen units and summary.json in SI
// (interfaces.md). Both are written atomically by the caller.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "swashtune/analysis.hpp"
#include "swashtune/field_trace.hpp"
#include "swashtune/datasheet.hpp"
#include "swashtune/fit.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/sensitivity.hpp"
#include "swashtune/simulator.hpp"
#include "swashtune/units.hpp"

namespace swashtune {

std::optional<UnitSystem> parse_unit_system(std::string_view name);

// One column of the trace: its name in each unit system and how to read it.
struct TraceColumn {
  std::string_view quantity;  // "discharge_pressure"
  std::string_view si_unit;   // unit expression of the stored value
  std::string_view metric_unit;
  std::string_view us_unit;
  double (*read)(const Sample&);
};

const std::vector<TraceColumn>& trace_columns();

// Unit expression of a column in a unit system, e.g. "bar".
std::string_view column_unit(const TraceColumn& column, UnitSystem units);

// The optional states a study's elements add, after the columns above and in
// the order of the contributor guide's state layout: port_pressure (control
// orifice present), released_air_line, released_air_chamber,
// released_air_port (cavitation; the last with the port), shaft_angle (flow
// ripple). They let outside checks compare every state of the model.
std::vector<TraceColumn> optional_state_columns(const ModelParameters& parameters);

// The pressure at the load valve (a distributed line's far end; the
// discharge pressure otherwise): among the optional columns when the line
// is distributed.
const TraceColumn& valve_end_pressure_column();

// Header name of a column in a unit system, e.g. "discharge_pressure_bar".
std::string column_header(const TraceColumn& column, UnitSystem units);

// Samples `run` keeps in memory for a run's metrics (RunOptions::
// max_trace_samples): a longer trace is thinned, so memory stays bounded.
inline constexpr std::size_t run_kept_trace_samples = 1u << 16;

// Formats trace rows in a unit system; shared by the whole-trace writer and
// the streaming one (StreamingFile, atomic_file.hpp).
class TraceRowFormatter {
 public:
  explicit TraceRowFormatter(UnitSystem units);
  // With the optional state columns of these parameters' elements.
  TraceRowFormatter(UnitSystem units, const ModelParameters& parameters);
  const std::string& header() const { return header_; }
  void append(std::string& out, const Sample& s) const;

 private:
  std::vector<TraceColumn> columns_;
  std::vector<double> factors_;
  std::string header_;
};

std::string trace_csv(const std::vector<Sample>& trace, UnitSystem units);

// An oscillation report as a JSON object (peak_to_peak, noise and mean in the
// signal's own SI unit).
std::string oscillation_json(const OscillationReport& report);

std::string summary_json(const Scenario& scenario, const RunResult& result, const std::vector<EventMetrics>& events);

// Analysis results as JSON (interfaces.md's keys first, SI units), with the
// open-loop realisation (A, B, C) so that outside tools can check the figures.
// `run_guide`: the event metrics of a run of the scenario, given where a
// linear model does not describe the loop (dry friction); written as
// "run_oscillation".
std::string stability_json(const StabilityReport& report, const std::vector<EventMetrics>* run_guide = nullptr);
std::string characteristic_json(const Characteristic& characteristic);
std::string stability_map_json(const StabilityMap& map);
// Bode data of the loop transfer L(jw): frequency_Hz, magnitude_dB, phase_deg.
std::string bode_csv(const std::vector<BodePoint>& bode);

// A recording's oscillation analysis (field --json) and a fit (fit --json).
std::string fit_json(const FitResult& fit);
// The recording and the fitted pressure at its samples (time_s, recorded_Pa,
// fitted_Pa, residual_Pa), to plot one over the other.
std::string fit_trace_csv(const FitResult& fit);
// A fit to data-sheet figures (fit --target --json), SI; each figure in its
// stored unit (s, Pa, droop as a fraction of the setting).
std::string datasheet_fit_json(const DataSheetFitResult& fit);

// Sensitivities (sensitivity --json), SI: every response by its key in its
// stored unit (unit_of), each parameter's change and the effect of that
// change on each response (null where it has none), the least damped
// eigenvalue's change by the perturbation formula and by differences.
std::string sensitivity_json(const SensitivityReport& report);

// JSON helpers shared by the writers: finite numbers in the shortest form that reads back exactly,
// non-finite ones as null; strings escaped.
std::string json_number(double value);
std::string json_string(std::string_view text);

}  // namespace swashtune
