// swashtune-bench --sweep: throughput of `swashtune-cli sweep` as a user runs
// it, so that a cluster job can be sized: runs per second and peak memory of
// each process, on 1, 2 and N threads in one process and as shards in
// separate processes (as a job array or GNU parallel would run them).
#pragma once

#include <string>
#include <vector>

namespace swashtune::bench {

struct SweepLayout {
  int processes = 1;  // shards run at once, one process each
  int threads = 1;    // --jobs of each process
  std::string label;
};

struct SweepLayoutResult {
  SweepLayout layout;
  std::size_t points = 0;
  double wall_s = 0.0;      // from the first start to the last exit
  double cpu_s = 0.0;       // user + system of all processes
  long peak_rss_kib = 0;    // the largest peak resident memory of one process
  bool same_table = false;  // merged table identical to the first layout's
};

struct SweepBenchOptions {
  std::string cli;  // swashtune-cli
  std::string scenario;
  std::vector<std::string> vary;  // --vary arguments as for swashtune-cli sweep
  int cores = 1;                  // N
  double load_average = -1.0;     // of the machine before the runs (1 min; < 0 unknown)
};

// The layouts measured for N cores: 1, 2 and N threads, N shards of one
// thread, and N/2 shards of two threads when N >= 4.
std::vector<SweepLayout> sweep_layouts(int cores);

// Runs every layout in a temporary folder (and notes the load average). Throws std::runtime_error when a
// process cannot be started or fails (its message is passed on).
std::vector<SweepLayoutResult> run_sweep_bench(SweepBenchOptions& options);

std::string sweep_bench_table(const SweepBenchOptions& options, const std::vector<SweepLayoutResult>& results);
std::string sweep_bench_json(const SweepBenchOptions& options, const std::vector<SweepLayoutResult>& results);

}  // namespace swashtune::bench
