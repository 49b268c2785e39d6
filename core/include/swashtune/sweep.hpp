// Parameter sweeps: one base scenario run at many points of parameter space
// (a Cartesian grid or a Latin hypercube), each point giving one row of a
// CSV table: transient figures of the run and loop margins at the point's
// initial load opening (or at a given one).
//
// Every point is computed on its own (no neighbour seeds a solution), so a
// row depends only on the sweep and its index: the same table comes out
// whatever the number of threads, the split into shards or the interruptions.
#pragma once

#include <cstddef>
#include <cstdint>
#include <functional>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "swashtune/analysis.hpp"
#include "swashtune/parameters.hpp"
#include "swashtune/scenario.hpp"

namespace swashtune {

// Bad sweep input: an axis, a shard, a table that does not fit the sweep.
class SweepError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

inline constexpr std::size_t max_sweep_points = 10'000'000;

// The interval a Latin hypercube samples one parameter in, stored units.
struct SweepRange {
  const ParameterSpec* spec = nullptr;
  double from = 0.0;
  double to = 0.0;
};

// "line.volume=0.5 L:2 L:7" (as for stability --map); messages name --vary.
Axis parse_sweep_axis(const std::string& text);
// "line.volume=0.5 L:2 L" for --samples; the count is the sample count.
SweepRange parse_sweep_range(const std::string& text);

class Sweep {
 public:
  // Cartesian product of the axes; the first axis varies fastest.
  static Sweep grid(const Scenario& base, const std::vector<Axis>& axes);
  // `samples` points; each range is cut into that many equal strata and every
  // stratum holds exactly one sample. The generator and the shuffle are
  // written out here (not the standard library's distributions, whose output
  // differs between implementations) so that a seed gives the same points
  // everywhere.
  static Sweep latin_hypercube(const Scenario& base, const std::vector<SweepRange>& ranges, std::size_t samples,
                               std::uint64_t seed);

  std::size_t size() const { return size_; }
  const Scenario& base() const { return base_; }
  const std::vector<const ParameterSpec*>& keys() const { return keys_; }
  // Parameter values of point `index` (stored units), in the order of keys().
  std::vector<double> values(std::size_t index) const;
  // The base scenario with point `index`'s initial parameters.
  Scenario scenario_at(std::size_t index) const;

  // The load opening the margins are taken at (--opening); none: each
  // point's initial opening (for a study that starts at full stroke the loop
  // is then inactive and every margin empty).
  void set_margin_opening(std::optional<double> opening);
  const std::optional<double>& margin_opening() const { return margin_opening_; }

 private:
  Scenario base_;
  std::vector<const ParameterSpec*> keys_;
  std::size_t size_ = 0;
  std::vector<std::vector<double>> axis_values_;  // grid: per key
  std::vector<double> samples_;                   // hypercube: size_ x keys, row-major
  std::optional<double> margin_opening_;
};

// The sweep that `swashtune-cli sweep` runs: the grid of `vary` axes
// ("KEY=FROM:TO:N"), or with `samples` a Latin hypercube in the `vary` ranges
// ("KEY=FROM:TO") drawn with `seed`. Throws SweepError or ScenarioError.
// `margin_opening` as for Sweep::set_margin_opening (checked to be 0..1).
Sweep make_sweep(const Scenario& base, const std::vector<std::string>& vary, const std::optional<std::size_t>& samples,
                 std::uint64_t seed, const std::optional<double>& margin_opening = std::nullopt);

// Points [index % count == part - 1] of a sweep split into `count` shards.
struct Shard {
  std::size_t part = 1;  // 1-based
  std::size_t count = 1;
  bool contains(std::size_t index) const { return index % count == part - 1; }
};
// "K/N" with 1 <= K <= N. Throws SweepError.
Shard parse_shard(const std::string& text);

// Everything a table row holds; figures are empty when not computed.
struct SweepRow {
  std::size_t index = 0;
  std::vector<double> values;
  std::string status = "ok";  // or "solver failed: ...", "failed: ..."
  std::optional<double> peak_discharge_pressure, final_discharge_pressure;
  // of the first event window (interfaces.md, "Event metrics v2")
  std::optional<double> overshoot_percent, undershoot_percent, settling_time, swash_response_time, swash_travel_time;
  std::string event_note;   // "no change", "does not settle: hunting", ...
  std::string oscillation;  // "settled", "settling", ... ("" without events)
  std::optional<double> oscillation_frequency_hz;
  // loop margins and modes at the point's initial parameters, the load
  // opening set to margin_opening; the margins only where they apply (a
  // margin that is not a stability margin is no figure to sort a table by)
  std::optional<double> margin_opening;
  std::optional<bool> margins_apply;
  std::optional<double> gain_margin_db, phase_margin_deg, modulus_margin, dominant_frequency_hz, dominant_damping_ratio;
  std::optional<bool> stable;
};

// Runs the scenario of point `index` (all events), its event metrics and the
// stability analysis at its initial parameters. A solver failure becomes the
// row's status; it does not throw.
SweepRow run_sweep_point(const Sweep& sweep, std::size_t index);

// Throws SweepError naming the first point of `indices` whose parameters
// contradict each other (check_consistency).
void check_sweep_points(const Sweep& sweep, const std::vector<std::size_t>& indices);

// The CSV table: one header line, one line per row, "\n" line ends.
std::string sweep_header(const Sweep& sweep);     // without the line end
std::string sweep_csv_line(const SweepRow& row);  // with the line end

// Runs `indices` on `jobs` threads (each with its own simulator). `on_row` is
// called once per point, in the order the points finish, never by two threads
// at once. If it throws, the remaining points are abandoned and the exception
// is rethrown here once the threads have stopped.
void run_sweep(const Sweep& sweep, const std::vector<std::size_t>& indices, int jobs,
               const std::function<void(const SweepRow&)>& on_row);

// A sweep table read back: the header and the complete rows by their index.
struct SweepTable {
  std::string header;
  struct Line {
    std::size_t index;
    std::string text;  // without the line end
  };
  std::vector<Line> rows;
  bool truncated = false;  // the text ended in a partial line, which was left out
};

// Reads a table (as sweep_header / sweep_csv_line write it). A partial last
// line (no line end) is dropped and flagged. Throws SweepError naming the
// source and line for anything else that does not parse.
SweepTable parse_sweep_table(const std::string& text, const std::string& source);

// Refuses (SweepError) a table that was not made by this sweep and shard:
// another header, a point outside the sweep or the shard, other values.
void check_sweep_table(const SweepTable& table, const Sweep& sweep, const Shard& shard, const std::string& source);

// The values of a row's varied parameters (the columns after the index).
std::vector<double> sweep_row_values(const SweepTable::Line& row, std::size_t keys, const std::string& source);

// Rows sorted by index, one copy of each; throws SweepError for two rows with
// the same index and different text.
std::string sorted_sweep_table(const std::string& header, std::vector<SweepTable::Line> rows,
                               const std::string& source);

// Formats a double in its shortest form that reads back exactly.
std::string exact_number(double value);

}  // namespace swashtune
