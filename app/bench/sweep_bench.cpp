#include "sweep_bench.hpp"

#include <fcntl.h>
#include <spawn.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <sstream>
#include <stdexcept>

#include "swashtune/atomic_file.hpp"
#include "swashtune/results_io.hpp"
#include "swashtune/sweep.hpp"

extern char** environ;

namespace swashtune::bench {

namespace {

namespace fs = std::filesystem;

// A temporary folder removed with everything in it, also on failure.
class TemporaryFolder {
 public:
  TemporaryFolder() {
    std::string pattern = (fs::temp_directory_path() / "swashtune-bench.XXXXXX").string();
    if (!::mkdtemp(pattern.data())) throw std::runtime_error("cannot make a temporary folder: " + pattern);
    path_ = pattern;
  }
  ~TemporaryFolder() {
    std::error_code ignored;
    fs::remove_all(path_, ignored);
  }
  TemporaryFolder(const TemporaryFolder&) = delete;
  TemporaryFolder& operator=(const TemporaryFolder&) = delete;
  const fs::path& path() const { return path_; }

 private:
  fs::path path_;
};

struct Started {
  pid_t pid;
  std::string command;
  fs::path log;
};

Started start(const std::vector<std::string>& args, const fs::path& log) {
  posix_spawn_file_actions_t actions;
  posix_spawn_file_actions_init(&actions);
  posix_spawn_file_actions_addopen(&actions, STDOUT_FILENO, log.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  posix_spawn_file_actions_adddup2(&actions, STDOUT_FILENO, STDERR_FILENO);
  std::vector<char*> argv;
  std::string command;
  for (const std::string& a : args) {
    argv.push_back(const_cast<char*>(a.c_str()));
    command += (command.empty() ? "" : " ") + a;
  }
  argv.push_back(nullptr);
  pid_t pid = 0;
  const int error = ::posix_spawn(&pid, argv[0], &actions, nullptr, argv.data(), environ);
  posix_spawn_file_actions_destroy(&actions);
  if (error != 0) throw std::runtime_error("cannot start " + args[0] + ": " + std::strerror(error));
  return {pid, command, log};
}

double seconds(const timeval& t) { return static_cast<double>(t.tv_sec) + 1e-6 * static_cast<double>(t.tv_usec); }

SweepLayoutResult run_layout(const SweepBenchOptions& o, const SweepLayout& layout, const fs::path& folder) {
  fs::create_directories(folder);
  std::vector<Started> processes;
  const auto began = std::chrono::steady_clock::now();
  for (int part = 1; part <= layout.processes; ++part) {
    std::vector<std::string> args{o.cli, "sweep", o.scenario};
    for (const std::string& v : o.vary) {
      args.push_back("--vary");
      args.push_back(v);
    }
    args.insert(args.end(), {"--jobs", std::to_string(layout.threads)});
    if (layout.processes > 1)
      args.insert(args.end(), {"--shard", std::to_string(part) + "/" + std::to_string(layout.processes)});
    args.insert(args.end(), {"--out", (folder / ("part-" + std::to_string(part) + ".csv")).string()});
    processes.push_back(start(args, folder / ("part-" + std::to_string(part) + ".log")));
  }
  SweepLayoutResult result;
  result.layout = layout;
  std::string failure;
  for (const Started& p : processes) {
    int status = 0;
    rusage usage{};
    if (::wait4(p.pid, &status, 0, &usage) != p.pid) throw std::runtime_error("lost " + p.command);
    result.cpu_s += seconds(usage.ru_utime) + seconds(usage.ru_stime);
    result.peak_rss_kib = std::max(result.peak_rss_kib, usage.ru_maxrss);  // KiB on Linux
    if ((!WIFEXITED(status) || WEXITSTATUS(status) != 0) && failure.empty())
      failure = p.command + " failed:\n" + read_file(p.log.string());
  }
  result.wall_s = std::chrono::duration<double>(std::chrono::steady_clock::now() - began).count();
  if (!failure.empty()) throw std::runtime_error(failure);
  return result;
}

// The parts joined as `swashtune-cli merge` joins them.
std::string merged_table(const fs::path& folder, int parts, std::size_t& points) {
  std::string header;
  std::vector<SweepTable::Line> rows;
  for (int part = 1; part <= parts; ++part) {
    const std::string path = (folder / ("part-" + std::to_string(part) + ".csv")).string();
    SweepTable table = parse_sweep_table(read_file(path), path);
    header = table.header;
    rows.insert(rows.end(), table.rows.begin(), table.rows.end());
  }
  points = rows.size();
  return sorted_sweep_table(header, rows, folder.string());
}

std::string general(double v) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.2g", v);
  return buffer;
}

double runs_per_second(const SweepLayoutResult& r) { return static_cast<double>(r.points) / r.wall_s; }
double mib(long kib) { return static_cast<double>(kib) / 1024.0; }

}  // namespace

std::vector<SweepLayout> sweep_layouts(int cores) {
  const std::string n = std::to_string(cores);
  std::vector<SweepLayout> layouts{{1, 1, "1 thread"}, {1, 2, "2 threads"}, {1, cores, "N = " + n + " threads"}};
  if (cores > 1) layouts.push_back({cores, 1, n + " shards x 1 thread"});
  if (cores >= 4) layouts.push_back({cores / 2, 2, std::to_string(cores / 2) + " shards x 2 threads"});
  return layouts;
}

std::vector<SweepLayoutResult> run_sweep_bench(SweepBenchOptions& options) {
  double load[1];
  if (::getloadavg(load, 1) == 1) options.load_average = load[0];  // other work on the machine skews the figures
  const TemporaryFolder folder;
  std::vector<SweepLayoutResult> results;
  std::string first_table;
  int number = 0;
  for (const SweepLayout& layout : sweep_layouts(options.cores)) {
    const fs::path here = folder.path() / std::to_string(++number);
    SweepLayoutResult r = run_layout(options, layout, here);
    const std::string table = merged_table(here, layout.processes, r.points);
    if (first_table.empty()) first_table = table;
    r.same_table = table == first_table;
    results.push_back(r);
  }
  return results;
}

std::string sweep_bench_table(const SweepBenchOptions& o, const std::vector<SweepLayoutResult>& results) {
  std::ostringstream out;
  out << "sweep of " << o.scenario << "\n  swashtune-cli sweep";
  for (const std::string& v : o.vary) out << " --vary " << v;
  out << ": " << (results.empty() ? 0 : results.front().points) << " points; N = " << o.cores << " cores, load average "
      << (o.load_average < 0 ? std::string("unknown") : general(o.load_average))
      << " before the runs\n  each layout run once, from the processes' start to the last exit (file writes "
         "included)\n\n";
  char line[256];
  std::snprintf(line, sizeof line, "  %-24s %9s %8s %9s %9s %10s %11s %13s %6s\n", "layout", "processes", "threads",
                "wall s", "runs/s", "runs/s/cpu", "CPU ms/run", "MiB/process", "same");
  out << line;
  for (const SweepLayoutResult& r : results) {
    std::snprintf(line, sizeof line, "  %-24s %9d %8d %9.3f %9.0f %10.0f %11.3f %13.1f %6s\n", r.layout.label.c_str(),
                  r.layout.processes, r.layout.threads, r.wall_s, runs_per_second(r),
                  runs_per_second(r) / (r.layout.processes * r.layout.threads),
                  1e3 * r.cpu_s / static_cast<double>(r.points), mib(r.peak_rss_kib), r.same_table ? "yes" : "NO");
    out << line;
  }
  out << "\n  runs/s/cpu: runs per second per thread started; MiB/process: the largest peak resident memory of one\n"
         "  process (what a job's memory request must cover); same: the merged table equals the first layout's\n"
         "  byte for byte.\n";
  return out.str();
}

std::string sweep_bench_json(const SweepBenchOptions& o, const std::vector<SweepLayoutResult>& results) {
  std::ostringstream out;
  out << "{\n  \"sweep\": { \"scenario\": " << json_string(o.scenario) << ", \"vary\": [";
  for (std::size_t i = 0; i < o.vary.size(); ++i) out << (i ? ", " : "") << json_string(o.vary[i]);
  out << "], \"points\": " << (results.empty() ? 0 : results.front().points) << ", \"cores\": " << o.cores
      << ", \"load_average\": " << (o.load_average < 0 ? "null" : json_number(o.load_average))
      << " },\n  \"layouts\": [";
  for (std::size_t i = 0; i < results.size(); ++i) {
    const SweepLayoutResult& r = results[i];
    out << (i ? ",\n" : "\n") << "    { \"label\": " << json_string(r.layout.label)
        << ", \"processes\": " << r.layout.processes << ", \"threads\": " << r.layout.threads
        << ", \"wall_s\": " << json_number(r.wall_s) << ", \"runs_per_s\": " << json_number(runs_per_second(r))
        << ", \"cpu_s_per_run\": " << json_number(r.cpu_s / static_cast<double>(r.points))
        << ", \"peak_rss_MiB_per_process\": " << json_number(mib(r.peak_rss_kib))
        << ", \"same_table\": " << (r.same_table ? "true" : "false") << " }";
  }
  out << "\n  ]\n}\n";
  return out.str();
}

}  // namespace swashtune::bench
