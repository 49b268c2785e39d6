// swashtune-bench: the project's own solver against a SUNDIALS CVODE peer on
// the demo scenarios: work (steps, evaluations), wall time, and accuracy
// against a tight-tolerance reference run of the project's solver.
#include <CLI/CLI.hpp>
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <iostream>
#include <limits>
#include <new>
#include <optional>
#include <sstream>
#include <stdexcept>
#include <string>
#include <thread>
#include <vector>

#include "cvode_peer.hpp"
#include "line_bench.hpp"
#include "swashtune/results_io.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/simulator.hpp"
#include "swashtune/version.hpp"
#include "sweep_bench.hpp"

namespace {

using namespace swashtune;

constexpr int exit_ok = 0;
constexpr int exit_check_failed = 1;
constexpr int exit_bad_input = 2;
constexpr int exit_solver_failed = 3;
constexpr int exit_out_of_memory = 4;

// The reference: the project's own solver far tighter than any benchmarked
// tolerance, so its own error is negligible against theirs.
constexpr double reference_tolerance = 1e-10;

// --check bounds. The global error of an rtol-controlled integrator is
// typically a small multiple (1 to 10) of rtol times the solution's scale
// (local errors of size rtol accumulate over the run and through each
// restart at a stop event). 100 x rtol x peak leaves that margin and still
// fails when the tolerance is not honoured: at the demo's rtol = 1e-6 the
// bound is 0.01 % of the peak, a tenth of what a loose 1e-5 run would show.
constexpr double error_bound_factor = 100.0;
constexpr double agreement_bound = 0.01;  // |CVODE - Swashtune| as a fraction of the peak

struct Difference {
  double value = 0.0;  // Pa
  double time = 0.0;   // s, where it is largest
};

struct MethodRun {
  std::string method;
  SolverStats stats;  // of the last run; wall_time_s replaced by the median
  // Swashtune only: the median wall time of a whole run_scenario, which also
  // works out every event's figures (settling, overshoot, the oscillation
  // diagnosis) on the way; the peer does none of that work.
  double run_wall = 0.0;
  long long runs = 0;
  double peak = 0.0;     // Pa, over every step
  Difference max_error;  // |p_d - p_d,ref| over the samples
  std::vector<Sample> trace;
  std::optional<bench::PeerStats> cvode;  // CVODE's own break-down, for the peer
};

struct RtolRun {
  double rtol = 0.0;
  double atol = 0.0;
  MethodRun own;
  MethodRun peer;
  Difference max_difference;  // |CVODE - Swashtune| over the samples
};

struct ScenarioBench {
  std::string path;
  std::string name;
  double duration = 0.0;
  std::size_t samples = 0;
  RunResult reference;
  double reference_wall = 0.0;
  // The CVODE peer at the reference tolerance: how far the reference itself
  // can be trusted (shown, not checked).
  Difference reference_vs_peer;
  std::vector<RtolRun> runs;
};

double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  const std::size_t n = v.size();
  return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

// Repeats `once` (which returns the wall time of one run) until `min_total`
// seconds have been measured and at least three runs made; one run when
// min_total is 0. Returns the median.
template <class Run>
double median_wall(double min_total, long long& runs, Run once) {
  std::vector<double> walls;
  double total = 0.0;
  do {
    walls.push_back(once());
    total += walls.back();
  } while (min_total > 0.0 && (total < min_total || walls.size() < 3) && walls.size() < 100000);
  runs = static_cast<long long>(walls.size());
  return median(walls);
}

// Largest |p_d(a) - p_d(b)| over two traces on the same grid.
Difference max_pressure_difference(const std::vector<Sample>& a, const std::vector<Sample>& b) {
  if (a.size() != b.size())
    throw std::runtime_error("traces of different lengths (" + std::to_string(a.size()) + " and " +
                             std::to_string(b.size()) + " samples)");
  Difference worst;
  for (std::size_t i = 0; i < a.size(); ++i) {
    if (std::abs(a[i].time - b[i].time) > 1e-9 * std::max(1.0, std::abs(a[i].time)))
      throw std::runtime_error("traces on different grids at sample " + std::to_string(i));
    const double d = std::abs(a[i].x[state::discharge_pressure] - b[i].x[state::discharge_pressure]);
    if (d > worst.value) worst = {d, a[i].time};
  }
  return worst;
}

ScenarioBench bench_scenario(const std::string& path, const std::vector<double>& rtols, double repeat_time) {
  const Scenario scenario = load_scenario(path);
  ScenarioBench b;
  b.path = path;
  b.name = scenario.name;
  b.duration = scenario.settings.duration;

  Scenario tight = scenario;
  tight.settings.rtol = reference_tolerance;
  tight.settings.atol = reference_tolerance;
  b.reference = run_scenario(tight);
  b.reference_wall = b.reference.stats.wall_time_s;
  b.samples = b.reference.trace.size();
  b.reference_vs_peer =
      max_pressure_difference(bench::run_cvode_peer(tight, b.reference.start.condition).trace, b.reference.trace);

  for (double rtol : rtols.empty() ? std::vector<double>{scenario.settings.rtol} : rtols) {
    RtolRun r;
    Scenario s = scenario;
    // atol follows rtol in the scenario's proportion, so that a sweep tightens
    // both (at the scenario's own rtol, both are the scenario's).
    r.rtol = rtol;
    r.atol = scenario.settings.atol * rtol / scenario.settings.rtol;
    s.settings.rtol = r.rtol;
    s.settings.atol = r.atol;

    // Timed: the integration with the work the peer does as well (every
    // sample made and stored, the peak); the run with its event figures is
    // timed apart.
    RunResult own = run_scenario(s);
    r.own.method = "swashtune";
    SolverStats solver_only;
    std::vector<Sample> trace;
    double peak = 0.0;
    const double own_wall = median_wall(repeat_time, r.own.runs, [&] {
      Simulator sim(s.parameters, s.settings, own.start.condition);
      for (const Event& e : s.events) sim.add_event(e);
      trace.clear();
      trace.reserve(b.samples);
      peak = -std::numeric_limits<double>::infinity();
      sim.set_step_observer([&](double, const State& x) { peak = std::max(peak, x[state::discharge_pressure]); });
      sim.advance_to(s.settings.duration, [&](const Sample& sample) {
        peak = std::max(peak, sample.x[state::discharge_pressure]);
        trace.push_back(sample);
      });
      solver_only = sim.stats();
      return solver_only.wall_time_s;
    });
    long long whole_runs = 0;
    r.own.run_wall = median_wall(repeat_time, whole_runs, [&] { return run_scenario(s).stats.wall_time_s; });
    r.own.stats = solver_only;
    r.own.stats.wall_time_s = own_wall;
    r.own.peak = peak;
    r.own.trace = std::move(trace);

    // The peer starts where the project's run starts (its steady state).
    bench::PeerResult peer;
    r.peer.method = "cvode-bdf";
    const double peer_wall = median_wall(repeat_time, r.peer.runs, [&] {
      peer = bench::run_cvode_peer(s, own.start.condition);
      return peer.stats.solver.wall_time_s;
    });
    r.peer.stats = peer.stats.solver;
    r.peer.cvode = peer.stats;
    r.peer.stats.wall_time_s = peer_wall;
    r.peer.peak = peer.peak_discharge_pressure;
    r.peer.trace = std::move(peer.trace);

    r.own.max_error = max_pressure_difference(r.own.trace, b.reference.trace);
    r.peer.max_error = max_pressure_difference(r.peer.trace, b.reference.trace);
    r.max_difference = max_pressure_difference(r.peer.trace, r.own.trace);
    b.runs.push_back(std::move(r));
  }
  return b;
}

std::string fixed(double v, int decimals) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, v);
  return buffer;
}
std::string general(double v, int digits = 3) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*g", digits, v);
  return buffer;
}
double percent_of(double value, double peak) { return 100.0 * value / peak; }

void print_table(const ScenarioBench& b, std::ostream& out) {
  const double peak = b.reference.peak_discharge_pressure;
  out << b.name << "\n  " << b.path << ": " << general(b.duration) << " s simulated, " << b.samples << " samples\n";
  out << "  reference: Swashtune's own solver at rtol = atol = " << general(reference_tolerance)
      << ": peak discharge pressure " << fixed(peak * 1e-5, 3) << " bar, " << b.reference.stats.steps << " steps, "
      << fixed(b.reference_wall * 1e3, 1) << " ms\n";
  out << "  the CVODE peer at the same tolerance differs from it by up to " << general(b.reference_vs_peer.value, 3)
      << " Pa (" << general(percent_of(b.reference_vs_peer.value, peak), 3) << " % of the peak) at "
      << general(b.reference_vs_peer.time, 6) << " s\n\n";
  char line[256];
  std::snprintf(line, sizeof line, "  %-7s %-7s %-10s %7s %6s %8s %7s %5s %9s %10s %11s %9s %9s %10s\n", "rtol", "atol",
                "method", "steps", "rej", "RHS", "Jac", "stops", "wall ms", "x realtime", "max err Pa", "% peak",
                "at s", "peak bar");
  out << line;
  for (const RtolRun& r : b.runs) {
    for (const MethodRun* m : {&r.own, &r.peer}) {
      const SolverStats& s = m->stats;
      std::snprintf(
          line, sizeof line, "  %-7s %-7s %-10s %7lld %6lld %8lld %7lld %5lld %9.3f %10.0f %11.4g %9.2e %9.5f %10.3f\n",
          general(r.rtol, 2).c_str(), general(r.atol, 2).c_str(), m->method.c_str(), s.steps, s.rejected_steps,
          s.rhs_evaluations, s.jacobian_evaluations, s.stop_events, s.wall_time_s * 1e3, b.duration / s.wall_time_s,
          m->max_error.value, percent_of(m->max_error.value, peak), m->max_error.time, m->peak * 1e-5);
      out << line;
    }
    out << "  " << std::string(7, ' ')
        << " CVODE wall / Swashtune wall = " << fixed(r.peer.stats.wall_time_s / r.own.stats.wall_time_s, 2)
        << "; max |CVODE - Swashtune| = " << general(r.max_difference.value, 4) << " Pa ("
        << general(percent_of(r.max_difference.value, peak), 3) << " % of the peak) at "
        << general(r.max_difference.time, 6) << " s\n"
        << "  " << std::string(7, ' ') << " Swashtune's whole run, with every event's figures worked out on the way: "
        << fixed(r.own.run_wall * 1e3, 3) << " ms, " << fixed(b.duration / r.own.run_wall, 0) << " x real time\n";
  }
  out << "\n";
}

std::string method_json(const MethodRun& m, double duration, double peak) {
  const SolverStats& s = m.stats;
  std::ostringstream o;
  o << "{ \"method\": " << json_string(m.method) << ", \"steps\": " << s.steps
    << ", \"rejected_steps\": " << s.rejected_steps << ", \"rhs_evaluations\": " << s.rhs_evaluations
    << ", \"jacobian_evaluations\": " << s.jacobian_evaluations << ", \"stop_events\": " << s.stop_events
    << ", \"runs\": " << m.runs << ", \"median_wall_s\": " << json_number(s.wall_time_s)
    << ", \"times_real_time\": " << json_number(duration / s.wall_time_s);
  if (m.run_wall > 0.0)
    o << ", \"median_wall_with_event_figures_s\": " << json_number(m.run_wall)
      << ", \"times_real_time_with_event_figures\": " << json_number(duration / m.run_wall);
  o << ", \"peak_discharge_pressure_Pa\": " << json_number(m.peak)
    << ", \"max_error_Pa\": " << json_number(m.max_error.value)
    << ", \"max_error_percent_of_peak\": " << json_number(percent_of(m.max_error.value, peak))
    << ", \"max_error_time_s\": " << json_number(m.max_error.time);
  if (m.cvode)
    o << ", \"error_test_failures\": " << m.cvode->error_test_failures
      << ", \"newton_convergence_failures\": " << m.cvode->convergence_failures
      << ", \"newton_iterations\": " << m.cvode->newton_iterations << ", \"restarts\": " << m.cvode->restarts;
  o << " }";
  return o.str();
}

std::string bench_json(const std::vector<ScenarioBench>& benches, bool checked, bool passed) {
  std::ostringstream o;
  o << "{\n  \"reference\": { \"solver\": \"swashtune\", \"rtol\": " << json_number(reference_tolerance)
    << ", \"atol\": " << json_number(reference_tolerance) << " },\n";
  o << "  \"wall_time\": \"median per run of the integration and its samples (the same work for both methods), "
       "without finding the start\",\n";
  o << "  \"scenarios\": [";
  for (std::size_t i = 0; i < benches.size(); ++i) {
    const ScenarioBench& b = benches[i];
    const double peak = b.reference.peak_discharge_pressure;
    o << (i ? ",\n" : "\n") << "    { \"file\": " << json_string(b.path) << ", \"name\": " << json_string(b.name)
      << ", \"duration_s\": " << json_number(b.duration) << ", \"samples\": " << b.samples
      << ",\n      \"reference_peak_Pa\": " << json_number(peak) << ", \"reference_steps\": " << b.reference.stats.steps
      << ", \"reference_vs_cvode_at_reference_tolerance_Pa\": " << json_number(b.reference_vs_peer.value)
      << ",\n      \"runs\": [";
    for (std::size_t j = 0; j < b.runs.size(); ++j) {
      const RtolRun& r = b.runs[j];
      o << (j ? ",\n" : "\n") << "        { \"rtol\": " << json_number(r.rtol) << ", \"atol\": " << json_number(r.atol)
        << ",\n          \"methods\": [" << method_json(r.own, b.duration, peak) << ",\n                      "
        << method_json(r.peer, b.duration, peak) << "],\n          \"cvode_over_swashtune_wall\": "
        << json_number(r.peer.stats.wall_time_s / r.own.stats.wall_time_s)
        << ", \"max_difference_Pa\": " << json_number(r.max_difference.value)
        << ", \"max_difference_percent_of_peak\": " << json_number(percent_of(r.max_difference.value, peak))
        << ", \"max_difference_time_s\": " << json_number(r.max_difference.time) << " }";
    }
    o << "\n      ] }";
  }
  o << "\n  ]";
  if (checked) o << ",\n  \"check\": { \"passed\": " << (passed ? "true" : "false") << " }";
  o << "\n}\n";
  return o.str();
}

// The --check verdict; prints one line per comparison to `out`.
bool check(const std::vector<ScenarioBench>& benches, std::ostream& out) {
  bool passed = true;
  auto verdict = [&](bool ok, const std::string& what, double value, double bound) {
    out << (ok ? "ok    " : "FAIL  ") << what << ": " << general(value, 4) << " Pa " << (ok ? "< " : ">= ")
        << general(bound, 4) << " Pa\n";
    passed = passed && ok;
  };
  for (const ScenarioBench& b : benches) {
    const double peak = b.reference.peak_discharge_pressure;
    for (const RtolRun& r : b.runs) {
      const std::string where = b.path + " rtol " + general(r.rtol, 2);
      const double error_bound = error_bound_factor * r.rtol * peak;
      for (const MethodRun* m : {&r.own, &r.peer})
        verdict(m->max_error.value < error_bound,
                where + ": " + m->method + " error against the reference (bound 100 x rtol x peak)", m->max_error.value,
                error_bound);
      verdict(r.max_difference.value < agreement_bound * peak, where + ": |CVODE - Swashtune| (bound 1 % of the peak)",
              r.max_difference.value, agreement_bound * peak);
    }
  }
  return passed;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{
      "swashtune-bench: Swashtune's own solver against a SUNDIALS CVODE peer (BDF, dense, same model and "
      "end-stop logic), with a reference run of Swashtune at rtol = atol = 1e-10"};
  std::vector<std::string> scenarios{SWASHTUNE_SOURCE_DIR "/scenarios/valve-slam.toml",
                                     SWASHTUNE_SOURCE_DIR "/scenarios/setting-under-flow.toml",
                                     SWASHTUNE_SOURCE_DIR "/scenarios/hunting-oversized-damping-orifice.toml"};
  std::vector<double> rtols;
  double repeat_time = 0.3;
  bool json = false;
  bool check_mode = false;
  app.set_version_flag("--version", std::string("swashtune-bench (Swashtune) ") + swashtune::version,
                       "Print the version and exit");
  app.add_option("scenarios", scenarios, "scenario files (default: the three demos)");
  app.add_option("--rtol", rtols, "relative tolerances to run, comma-separated (default: each scenario's own)")
      ->delimiter(',')
      ->allow_extra_args(false)
      ->check(CLI::Range(1e-12, 1e-2));
  app.add_option("--repeat-time", repeat_time,
                 "seconds of measured runs per method for the median wall time (0: one run)")
      ->check(CLI::Range(0.0, 60.0));
  app.add_flag("--json", json, "print a JSON document instead of the table");
  app.add_flag("--check", check_mode,
               "exit 1 unless each method's error against the reference is below 100 x rtol x peak and the two "
               "methods agree within 1 % of the peak (does not depend on timing)");
  bool sweep_mode = false;
  bench::SweepBenchOptions sweep;
  sweep.cli = SWASHTUNE_CLI;
  sweep.vary = {"line.volume=0.5L:4L:40", "compensator.setting=150bar:250bar:25"};  // the README's job
  sweep.cores = static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  app.add_flag("--sweep", sweep_mode,
               "throughput of swashtune-cli sweep on the first scenario: runs per second and memory per process on "
               "1, 2 and N threads and as N shards (exit 1 if the layouts' merged tables differ)");
  app.add_option("--vary", sweep.vary, "with --sweep: the sweep's axes, as for swashtune-cli sweep (repeatable)")
      ->allow_extra_args(false);
  app.add_option("--cores", sweep.cores, "with --sweep: N (default: the cores of this machine)")
      ->check(CLI::Range(1, 256));
  app.add_option("--cli", sweep.cli, "with --sweep: the swashtune-cli to measure")->capture_default_str();
  bool line_mode = false;
  bench::LineBenchOptions line;
  app.add_flag("--line", line_mode,
               "cost of the distributed discharge line by its number of reaches, on the first scenario with its "
               "line given as --length x --bore (steel)");
  app.add_option("--length", line.length, "with --line: line length, m")->check(CLI::Range(0.1, 1e4))->capture_default_str();
  app.add_option("--bore", line.bore, "with --line: line bore, m")->check(CLI::Range(1e-3, 1.0))->capture_default_str();
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    return app.exit(e) == 0 ? exit_ok : exit_bad_input;
  }

  if (line_mode) {
    line.scenario = scenarios.front();
    line.repeat_time = repeat_time;
    try {
      bench::run_line_bench(line, json, std::cout);
      return exit_ok;
    } catch (const ScenarioError& e) {
      std::cerr << e.what() << "\n";
      return exit_bad_input;
    } catch (const std::exception& e) {
      std::cerr << "swashtune-bench --line: " << e.what() << "\n";
      return exit_solver_failed;
    }
  }

  if (sweep_mode) {
    sweep.scenario = scenarios.front();
    try {
      const auto results = bench::run_sweep_bench(sweep);
      std::cout << (json ? bench::sweep_bench_json(sweep, results) : bench::sweep_bench_table(sweep, results));
      for (const auto& r : results)
        if (!r.same_table) return exit_check_failed;
      return exit_ok;
    } catch (const std::exception& e) {
      std::cerr << "swashtune-bench --sweep: " << e.what() << "\n";
      return exit_bad_input;
    }
  }

  std::vector<ScenarioBench> benches;
  try {
    for (const std::string& path : scenarios) {
      benches.push_back(bench_scenario(path, rtols, repeat_time));
      if (!json) print_table(benches.back(), std::cout);
    }
  } catch (const ScenarioError& e) {
    std::cerr << e.what() << "\n";
    return exit_bad_input;
  } catch (const SolverError& e) {
    std::cerr << e.what() << "\n";
    return exit_solver_failed;
  } catch (const std::bad_alloc&) {  // the traces are kept whole: a long, finely sampled run can exhaust memory
    std::fputs("swashtune-bench: out of memory; bench a shorter run or a longer sample_interval\n", stderr);
    return exit_out_of_memory;
  } catch (const std::length_error&) {
    std::fputs("swashtune-bench: out of memory; bench a shorter run or a longer sample_interval\n", stderr);
    return exit_out_of_memory;
  } catch (const std::exception& e) {
    std::cerr << "swashtune-bench: " << e.what() << "\n";
    return exit_solver_failed;
  }

  bool passed = true;
  if (check_mode) passed = check(benches, json ? std::cerr : std::cout);
  if (json) std::cout << bench_json(benches, check_mode, passed);
  return passed ? exit_ok : exit_check_failed;
}
