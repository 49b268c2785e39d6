#include "swashtune/sweep.hpp"

#include <algorithm>
#include <atomic>
#include <charconv>
#include <cmath>
#include <exception>
#include <mutex>
#include <new>
#include <random>
#include <set>
#include <thread>

#include "swashtune/metrics.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune {

namespace {

// parse_axis speaks of --map; a sweep's user typed --vary.
Axis axis_for_vary(const std::string& text) {
  try {
    return parse_axis(text);
  } catch (const ScenarioError& e) {
    std::string message = e.what();
    if (message.rfind("--map ", 0) == 0) message.replace(0, 5, "--vary");
    throw SweepError(message);
  }
}

void refuse_repeated_keys(const std::vector<const ParameterSpec*>& keys) {
  std::set<const ParameterSpec*> seen;
  for (const ParameterSpec* spec : keys)
    if (!seen.insert(spec).second) throw SweepError("--vary: " + std::string(spec->key) + " is given twice");
}

// Uniform integer in [0, bound) without the modulo bias.
std::uint64_t uniform_below(std::mt19937_64& g, std::uint64_t bound) {
  const std::uint64_t threshold = (0 - bound) % bound;
  for (;;) {
    const std::uint64_t r = g();
    if (r >= threshold) return r % bound;
  }
}

// Uniform in [0, 1) from the top 53 bits.
double uniform_unit(std::mt19937_64& g) { return static_cast<double>(g() >> 11) * 0x1.0p-53; }

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n\r") == std::string::npos) return text;
  std::string quoted = "\"";
  for (char c : text) {
    if (c == '"') quoted += '"';
    quoted += (c == '\n' || c == '\r') ? ' ' : c;
  }
  return quoted + "\"";
}

std::string optional_number(const std::optional<double>& v) { return v ? exact_number(*v) : std::string(); }

std::size_t parse_index(const std::string& field, const std::string& where) {
  std::size_t index = 0;
  const char* end = field.data() + field.size();
  const auto [ptr, ec] = std::from_chars(field.data(), end, index);
  if (field.empty() || ec != std::errc() || ptr != end)
    throw SweepError(where + ": expected a point index in the first column, got \"" + field + "\"");
  return index;
}

// Field `column` (0-based) of a CSV line as written by csv_field: quoted
// fields may hold commas and doubled quotes.
std::string csv_field_at(const std::string& line, std::size_t column) {
  std::string field;
  std::size_t current = 0;
  bool quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (quoted) {
      if (c == '"' && i + 1 < line.size() && line[i + 1] == '"') {
        if (current == column) field += '"';
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else if (current == column) {
        field += c;
      }
    } else if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      if (current == column) return field;
      ++current;
    } else if (current == column) {
      field += c;
    }
  }
  return current == column ? field : std::string();
}

// The load opening the margins of point `index` are taken at.
double margin_opening_of(const Sweep& sweep, std::size_t index) {
  if (sweep.margin_opening()) return *sweep.margin_opening();
  ModelParameters p = sweep.base().parameters;
  const std::vector<double> v = sweep.values(index);
  for (std::size_t k = 0; k < v.size(); ++k) sweep.keys()[k]->set(p, v[k]);
  return p.opening;
}

// A point that cannot be computed is a result of the sweep, not the end of
// it: the row keeps its index and values, its figures stay empty.
SweepRow failed_row(const SweepRow& row, const std::string& status) {
  SweepRow failed;
  failed.index = row.index;
  failed.values = row.values;
  failed.status = status;
  return failed;
}

}  // namespace

std::string exact_number(double value) {
  if (!std::isfinite(value)) return "";  // a null: empty field
  char buffer[32];
  const auto result = std::to_chars(buffer, buffer + sizeof buffer, value);
  return std::string(buffer, result.ptr);
}

Axis parse_sweep_axis(const std::string& text) { return axis_for_vary(text); }

SweepRange parse_sweep_range(const std::string& text) {
  const auto equals = text.find('=');
  const std::string rest = equals == std::string::npos ? "" : text.substr(equals + 1);
  const auto colons = std::count(rest.begin(), rest.end(), ':');
  if (colons == 2)
    throw SweepError("--vary " + text + ": with --samples give KEY=FROM:TO; the number of points is --samples");
  if (colons != 1) throw SweepError("--vary " + text + ": expected KEY=FROM:TO");
  // Two grid values are exactly the two ends, checked against the registry.
  try {
    const Axis ends = axis_for_vary(text + ":2");
    return SweepRange{ends.spec, ends.values.front(), ends.values.back()};
  } catch (const SweepError& e) {
    std::string message = e.what();  // name the argument as the user typed it
    const auto at = message.find(text + ":2");
    if (at != std::string::npos) message.erase(at + text.size(), 2);
    throw SweepError(message);
  }
}

Sweep Sweep::grid(const Scenario& base, const std::vector<Axis>& axes) {
  if (axes.empty()) throw SweepError("a sweep needs at least one --vary KEY=FROM:TO:N");
  Sweep sweep;
  sweep.base_ = base;
  sweep.size_ = 1;
  for (const Axis& axis : axes) {
    sweep.keys_.push_back(axis.spec);
    sweep.axis_values_.push_back(axis.values);
    if (sweep.size_ > max_sweep_points / axis.values.size())
      throw SweepError("the grid has more than " + std::to_string(max_sweep_points) + " points");
    sweep.size_ *= axis.values.size();
  }
  refuse_repeated_keys(sweep.keys_);
  return sweep;
}

Sweep Sweep::latin_hypercube(const Scenario& base, const std::vector<SweepRange>& ranges, std::size_t samples,
                             std::uint64_t seed) {
  if (ranges.empty()) throw SweepError("--samples needs at least one --vary KEY=FROM:TO");
  if (samples < 1 || samples > max_sweep_points)
    throw SweepError("--samples: must be from 1 to " + std::to_string(max_sweep_points));
  Sweep sweep;
  sweep.base_ = base;
  sweep.size_ = samples;
  for (const SweepRange& r : ranges) sweep.keys_.push_back(r.spec);
  refuse_repeated_keys(sweep.keys_);
  // std::mt19937_64's output is fixed by the standard; everything drawn from
  // it is done by hand below, so a seed means the same points everywhere.
  std::mt19937_64 generator(seed);
  const std::size_t columns = ranges.size();
  sweep.samples_.assign(samples * columns, 0.0);
  std::vector<std::size_t> strata(samples);
  for (std::size_t k = 0; k < columns; ++k) {
    for (std::size_t i = 0; i < samples; ++i) strata[i] = i;
    for (std::size_t i = samples; i > 1; --i) std::swap(strata[i - 1], strata[uniform_below(generator, i)]);
    const SweepRange& r = ranges[k];
    for (std::size_t i = 0; i < samples; ++i) {
      const double u = (static_cast<double>(strata[i]) + uniform_unit(generator)) / static_cast<double>(samples);
      sweep.samples_[i * columns + k] = r.from + (r.to - r.from) * u;
    }
  }
  return sweep;
}

std::vector<double> Sweep::values(std::size_t index) const {
  std::vector<double> v(keys_.size());
  if (!samples_.empty()) {
    std::copy_n(samples_.begin() + static_cast<std::ptrdiff_t>(index * keys_.size()), keys_.size(), v.begin());
    return v;
  }
  for (std::size_t k = 0; k < keys_.size(); ++k) {  // first axis fastest
    v[k] = axis_values_[k][index % axis_values_[k].size()];
    index /= axis_values_[k].size();
  }
  return v;
}

Scenario Sweep::scenario_at(std::size_t index) const {
  Scenario s = base_;
  const std::vector<double> v = values(index);
  for (std::size_t k = 0; k < keys_.size(); ++k) keys_[k]->set(s.parameters, v[k]);
  return s;
}

Sweep make_sweep(const Scenario& base, const std::vector<std::string>& vary, const std::optional<std::size_t>& samples,
                 std::uint64_t seed, const std::optional<double>& margin_opening) {
  if (vary.empty())
    throw SweepError("give what to vary: --vary KEY=FROM:TO:N (a grid), or --vary KEY=FROM:TO with --samples N");
  Sweep sweep;
  if (samples) {
    std::vector<SweepRange> ranges;
    for (const std::string& text : vary) ranges.push_back(parse_sweep_range(text));
    sweep = Sweep::latin_hypercube(base, ranges, *samples, seed);
  } else {
    std::vector<Axis> axes;
    for (const std::string& text : vary) axes.push_back(parse_sweep_axis(text));
    sweep = Sweep::grid(base, axes);
  }
  sweep.set_margin_opening(margin_opening);
  return sweep;
}

void Sweep::set_margin_opening(std::optional<double> opening) {
  if (opening && !(*opening >= 0.0 && *opening <= 1.0))
    throw SweepError("--opening: must be a load opening from 0 to 1, got " + exact_number(*opening));
  margin_opening_ = opening;
}

Shard parse_shard(const std::string& text) {
  const std::string usage = "--shard " + text + ": expected K/N with 1 <= K <= N, e.g. 3/16";
  const auto slash = text.find('/');
  if (slash == std::string::npos) throw SweepError(usage);
  Shard shard;
  const auto read = [&](std::size_t from, std::size_t to, std::size_t& out) {
    const char* end = text.data() + to;
    const auto [ptr, ec] = std::from_chars(text.data() + from, end, out);
    if (from == to || ec != std::errc() || ptr != end) throw SweepError(usage);
  };
  read(0, slash, shard.part);
  read(slash + 1, text.size(), shard.count);
  if (shard.part < 1 || shard.count < 1 || shard.part > shard.count) throw SweepError(usage);
  return shard;
}

SweepRow run_sweep_point(const Sweep& sweep, std::size_t index) {
  SweepRow row;
  row.index = index;
  row.values = sweep.values(index);
  const Scenario scenario = sweep.scenario_at(index);
  try {
    RunOptions options;
    options.max_trace_samples = 1024;  // the row needs no trace: the figures come from every step
    const RunResult run = run_scenario(scenario, options);
    const std::vector<EventMetrics> events = event_metrics(scenario, run);
    ModelParameters margin_parameters = scenario.parameters;
    if (sweep.margin_opening()) margin_parameters.opening = *sweep.margin_opening();
    const StabilityReport stability = analyse_stability(margin_parameters, scenario.settings);
    row.peak_discharge_pressure = run.peak_discharge_pressure;
    row.final_discharge_pressure = discharge_pressure_of(run.final_sample);  // right even for a thinned trace
    if (!events.empty()) {
      const EventMetrics& first = events.front();
      row.overshoot_percent = first.overshoot_percent;
      row.undershoot_percent = first.undershoot_percent;
      row.settling_time = first.settling_time;
      row.swash_response_time = first.swash_response_time;
      row.swash_travel_time = first.swash_travel_time;
      row.event_note = first.note;
      row.oscillation = to_string(first.oscillation.kind);
      if (first.oscillation.kind != OscillationKind::settled)
        row.oscillation_frequency_hz = first.oscillation.frequency_hz;
    }
    row.margin_opening = margin_parameters.opening;
    row.margins_apply = stability.margins_apply;
    if (stability.margins_apply) {
      row.gain_margin_db = stability.margins.gain_margin_db;
      row.phase_margin_deg = stability.margins.phase_margin_deg;
      row.modulus_margin = stability.margins.modulus_margin;
    }
    if (stability.dominant) {
      row.dominant_frequency_hz = stability.dominant->damped_frequency_hz;
      row.dominant_damping_ratio = stability.dominant->damping_ratio;
    }
    row.stable = stability.stable;
  } catch (const SolverError& e) {
    return failed_row(row, e.what());  // "solver failed at t = ...: why"
  } catch (const std::bad_alloc&) {
    throw;  // not a property of the point: the sweep stops (its finished rows stay for --resume)
  } catch (const std::exception& e) {
    return failed_row(row, "failed: " + std::string(e.what()));
  }
  return row;
}

void check_sweep_points(const Sweep& sweep, const std::vector<std::size_t>& indices) {
  for (std::size_t index : indices) {
    ModelParameters p = sweep.base().parameters;  // not the whole scenario: this runs for every point
    const std::vector<double> v = sweep.values(index);
    for (std::size_t k = 0; k < v.size(); ++k) sweep.keys()[k]->set(p, v[k]);
    const std::vector<std::string> problems = check_consistency(p);
    if (problems.empty()) continue;
    std::string where = "sweep point " + std::to_string(index) + " (";
    for (std::size_t k = 0; k < v.size(); ++k)
      where += (k ? ", " : "") + std::string(sweep.keys()[k]->key) + " = " + exact_number(v[k]);
    throw SweepError(where + "): " + problems.front() + "; narrow the ranges");
  }
}

std::string sweep_header(const Sweep& sweep) {
  std::string header = "index";
  for (const ParameterSpec* spec : sweep.keys()) header += "," + std::string(spec->key);
  return header +
         ",peak_discharge_pressure_Pa,final_discharge_pressure_Pa,overshoot_percent,undershoot_percent,"
         "settling_time_s,swash_response_time_s,swash_travel_time_s,event_note,oscillation,oscillation_frequency_Hz,"
         "margin_opening,margins_apply,gain_margin_dB,phase_margin_deg,modulus_margin,dominant_frequency_Hz,"
         "dominant_damping_ratio,stable,status";
}

std::string sweep_csv_line(const SweepRow& row) {
  const auto flag = [](const std::optional<bool>& b) { return std::string(b ? (*b ? "true" : "false") : ""); };
  std::string line = std::to_string(row.index);
  for (double v : row.values) line += "," + exact_number(v);
  for (const auto& v : {row.peak_discharge_pressure, row.final_discharge_pressure, row.overshoot_percent,
                        row.undershoot_percent, row.settling_time, row.swash_response_time, row.swash_travel_time})
    line += "," + optional_number(v);
  line += "," + csv_field(row.event_note) + "," + csv_field(row.oscillation) + "," +
          optional_number(row.oscillation_frequency_hz);
  line += "," + optional_number(row.margin_opening) + "," + flag(row.margins_apply);
  for (const auto& v : {row.gain_margin_db, row.phase_margin_deg, row.modulus_margin, row.dominant_frequency_hz,
                        row.dominant_damping_ratio})
    line += "," + optional_number(v);
  line += "," + flag(row.stable);
  return line + "," + csv_field(row.status) + "\n";
}

void run_sweep(const Sweep& sweep, const std::vector<std::size_t>& indices, int jobs,
               const std::function<void(const SweepRow&)>& on_row) {
  std::atomic<std::size_t> next{0};
  std::atomic<bool> stop{false};
  std::mutex mutex;  // guards on_row and failure
  std::exception_ptr failure;
  // No exception may leave a thread (that would end the program): the first
  // one stops the others and is rethrown below.
  auto work = [&] {
    for (std::size_t i = next++; i < indices.size() && !stop; i = next++) {
      try {
        const SweepRow row = run_sweep_point(sweep, indices[i]);
        const std::lock_guard<std::mutex> lock(mutex);
        if (!stop) on_row(row);
      } catch (...) {
        const std::lock_guard<std::mutex> lock(mutex);
        if (!failure) failure = std::current_exception();
        stop = true;
      }
    }
  };
  const std::size_t threads = std::min<std::size_t>(static_cast<std::size_t>(std::max(jobs, 1)), indices.size());
  std::vector<std::thread> pool;
  for (std::size_t t = 1; t < threads; ++t) pool.emplace_back(work);
  work();  // this thread is one of the workers
  for (std::thread& t : pool) t.join();
  if (failure) std::rethrow_exception(failure);
}

SweepTable parse_sweep_table(const std::string& text, const std::string& source) {
  SweepTable table;
  std::size_t start = 0;
  int line_number = 0;
  while (start < text.size()) {
    const std::size_t end = text.find('\n', start);
    if (end == std::string::npos) {
      table.truncated = true;  // written up to a crash or a kill: not a row
      break;
    }
    std::string line = text.substr(start, end - start);
    start = end + 1;
    if (++line_number == 1) {
      if (line.rfind("index,", 0) != 0) throw SweepError(source + ":1: not a sweep table (no \"index\" column first)");
      table.header = std::move(line);
      continue;
    }
    const std::string where = source + ":" + std::to_string(line_number);
    const std::size_t index = parse_index(line.substr(0, line.find(',')), where);
    table.rows.push_back({index, std::move(line)});
  }
  return table;
}

void check_sweep_table(const SweepTable& table, const Sweep& sweep, const Shard& shard, const std::string& source) {
  const std::string header = sweep_header(sweep);
  if (table.header != header)
    throw SweepError(source + ": its header does not match this sweep:\n  file:  " + table.header +
                     "\n  sweep: " + header);
  std::size_t opening_column = 0;
  while (csv_field_at(header, opening_column) != "margin_opening") ++opening_column;  // the header has it
  for (const SweepTable::Line& row : table.rows) {
    const std::string where = source + ": point " + std::to_string(row.index);
    if (row.index >= sweep.size())
      throw SweepError(where + " is not in this sweep of " + std::to_string(sweep.size()) + " points");
    if (!shard.contains(row.index))
      throw SweepError(where + " is not in shard " + std::to_string(shard.part) + "/" + std::to_string(shard.count));
    if (sweep_row_values(row, sweep.keys().size(), source) != sweep.values(row.index))
      throw SweepError(where + " has other parameter values than this sweep gives it (other ranges, counts or seed?)");
    // The margins must be taken at the same load opening (--opening).
    const std::string opening = csv_field_at(row.text, opening_column);
    if (!opening.empty() && opening != exact_number(margin_opening_of(sweep, row.index)))
      throw SweepError(where + " has margins at load opening " + opening + ", this sweep takes them at " +
                       exact_number(margin_opening_of(sweep, row.index)) + " (another --opening?)");
  }
}

std::vector<double> sweep_row_values(const SweepTable::Line& row, std::size_t keys, const std::string& source) {
  std::vector<double> values;
  std::size_t start = row.text.find(',');
  for (std::size_t k = 0; k < keys; ++k) {
    const std::size_t from = start == std::string::npos ? row.text.size() : start + 1;
    start = row.text.find(',', from);
    const std::size_t to = start == std::string::npos ? row.text.size() : start;
    double v = 0.0;
    const auto [ptr, ec] = std::from_chars(row.text.data() + from, row.text.data() + to, v);
    if (from == to || ec != std::errc() || ptr != row.text.data() + to)
      throw SweepError(source + ": row of point " + std::to_string(row.index) + ": parameter column " +
                       std::to_string(k + 1) + " is not a number");
    values.push_back(v);
  }
  return values;
}

std::string sorted_sweep_table(const std::string& header, std::vector<SweepTable::Line> rows,
                               const std::string& source) {
  std::stable_sort(rows.begin(), rows.end(), [](const auto& a, const auto& b) { return a.index < b.index; });
  std::string out = header + "\n";
  for (std::size_t i = 0; i < rows.size(); ++i) {
    if (i > 0 && rows[i].index == rows[i - 1].index) {
      if (rows[i].text != rows[i - 1].text)
        throw SweepError(source + ": point " + std::to_string(rows[i].index) +
                         " appears twice with different results; were the parts made from the same sweep?");
      continue;
    }
    out += rows[i].text + "\n";
  }
  return out;
}

}  // namespace swashtune
