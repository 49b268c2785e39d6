#include "line_bench.hpp"

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <vector>

#include "swashtune/model.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune::bench {



namespace {

struct LineRow {
  std::string model;
  int reaches = 0, states = 0;
  long long steps = 0, runs = 0;
  double wall = 0.0;  // s, median of the runs
  double pump_peak = 0.0, valve_peak = 0.0;
};

LineRow measure(const Scenario& s, const std::string& model, int reaches, double repeat_time) {
  LineRow row;
  row.model = model;
  row.reaches = reaches;
  row.states = layout_of(s.parameters).size;
  std::vector<double> walls;
  double total = 0.0;
  RunResult result;
  do {
    const auto t0 = std::chrono::steady_clock::now();
    result = run_scenario(s);
    walls.push_back(std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count());
    total += walls.back();
  } while (repeat_time > 0.0 && (total < repeat_time || walls.size() < 3) && walls.size() < 1000);
  std::sort(walls.begin(), walls.end());
  row.wall = walls[walls.size() / 2];
  row.runs = static_cast<long long>(walls.size());
  row.steps = result.stats.steps;
  for (const Sample& sample : result.trace) {
    row.pump_peak = std::max(row.pump_peak, sample.x[state::discharge_pressure]);
    row.valve_peak = std::max(row.valve_peak, sample.valve_end_pressure);
  }
  return row;
}

}  // namespace

void run_line_bench(const LineBenchOptions& options, bool json, std::ostream& out) {
  Scenario base = load_scenario(options.scenario);
  base.parameters.line_length = options.length;
  base.parameters.line_bore = options.bore;
  base.parameters.line_volume = default_parameters().line_volume;
  const double duration = base.settings.duration;
  std::vector<LineRow> rows;
  {
    Scenario lumped = base;
    lumped.parameters.line_model = static_cast<double>(LineModel::lumped);
    rows.push_back(measure(lumped, "lumped", 0, options.repeat_time));
  }
  for (int reaches : {2, 4, 8, 12, 15}) {
    Scenario s = base;
    s.parameters.line_model = static_cast<double>(LineModel::distributed);
    s.parameters.line_reaches = reaches;
    rows.push_back(measure(s, "distributed", reaches, options.repeat_time));
  }
  char buffer[256];
  if (json) {
    out << "{\n  \"scenario\": \"" << options.scenario << "\", \"line_length_m\": " << options.length
        << ", \"line_bore_m\": " << options.bore << ", \"simulated_s\": " << duration << ",\n  \"rows\": [";
    for (std::size_t i = 0; i < rows.size(); ++i) {
      const LineRow& r = rows[i];
      std::snprintf(buffer, sizeof buffer,
                    "%s\n    {\"model\": \"%s\", \"reaches\": %d, \"states\": %d, \"steps\": %lld, \"wall_s\": %.6g, "
                    "\"times_real_time\": %.4g, \"pump_end_peak_Pa\": %.8g, \"valve_end_peak_Pa\": %.8g}",
                    i ? "," : "", r.model.c_str(), r.reaches, r.states, r.steps, r.wall, duration / r.wall,
                    r.pump_peak, r.valve_peak);
      out << buffer;
    }
    out << "\n  ]\n}\n";
    return;
  }
  out << "Distributed line cost: " << options.scenario << ", line " << options.length << " m x " << 1e3 * options.bore
      << " mm, " << duration << " s simulated (median of repeated runs, this machine)\n";
  out << "  model        reaches  states   steps    wall [ms]  x real time  pump-end peak [bar]  valve-end peak [bar]\n";
  for (const LineRow& r : rows) {
    std::snprintf(buffer, sizeof buffer, "  %-12s %7d %7d %7lld %12.2f %12.2f %20.2f %21.2f\n", r.model.c_str(),
                  r.reaches, r.states, r.steps, 1e3 * r.wall, duration / r.wall, r.pump_peak / 1e5,
                  r.model == "lumped" ? r.pump_peak / 1e5 : r.valve_peak / 1e5);
    out << buffer;
  }
}

}  // namespace swashtune::bench
