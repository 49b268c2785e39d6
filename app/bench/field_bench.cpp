// swashtune-field-bench: how fast recordings are read, and in how much
// memory. Prints figures; asserts nothing (speed is measured, not tested).
//
//   swashtune-field-bench FILE.csv [--repeat N]        stream the file through the reader
//   swashtune-field-bench --make FILE.csv --rows N     write a logger-like test file first
#include <sys/resource.h>

#include <CLI/CLI.hpp>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <random>
#include <string>

#include "swashtune/atomic_file.hpp"
#include "swashtune/field_trace.hpp"

namespace {

using namespace swashtune;

double peak_resident_mb() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return static_cast<double>(usage.ru_maxrss) / 1024.0;  // Linux: kilobytes
}

// A logger export at 10 kHz: time, outlet and control pressure with ripple
// and noise, the way the demo recordings look (invented data).
void make_file(const std::string& path, long long rows) {
  StreamingFile file(path);
  std::mt19937 random(5);
  std::normal_distribution<double> noise(0.0, 0.3);
  std::string text = "time_s,p_outlet [bar],p_control [bar]\n";
  char line[96];
  for (long long k = 0; k < rows; ++k) {
    const double t = 1e-4 * static_cast<double>(k);
    const double p = 210.0 + 1.7 * std::sin(2.0 * 3.14159265358979 * 270.0 * t) + noise(random);
    const int n = std::snprintf(line, sizeof line, "%.4f,%.3f,%.3f\n", t, p, 50.0 + noise(random));
    text.append(line, static_cast<std::size_t>(n));
    if (text.size() > (1u << 22)) {
      file.write(text);
      text.clear();
    }
  }
  file.write(text);
  file.commit();
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"Swashtune: speed and memory of reading a recorded trace"};
  std::string path, make;
  long long rows = 5000000;
  int repeat = 3;
  app.add_option("FILE", path, "Recording (CSV) to read");
  app.add_option("--make", make, "Write a 10 kHz logger-like file of --rows rows here first, then read it");
  app.add_option("--rows", rows, "Rows of the file --make writes")->capture_default_str();
  app.add_option("--repeat", repeat, "Readings; the best is reported (the first warms the page cache)")
      ->capture_default_str();
  CLI11_PARSE(app, argc, argv);
  try {
    if (!make.empty()) {
      make_file(make, rows);
      path = make;
    }
    if (path.empty()) {
      std::fprintf(stderr, "give a FILE or --make FILE\n");
      return 2;
    }
    double best = 1e300;
    FieldReadReport report;
    for (int r = 0; r < std::max(1, repeat); ++r) {
      double sum = 0.0;
      const auto start = std::chrono::steady_clock::now();
      report = scan_field_trace(path, {}, [&](const FieldRow& row) {
        sum += row[FieldChannel::pressure];
        return true;
      });
      const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
      best = std::min(best, seconds);
      if (!(sum == sum)) std::printf("(sum is NaN)\n");
    }
    const double mb = static_cast<double>(report.bytes) / 1e6;
    std::printf("%s: %zu rows, %.1f MB, best of %d: %.3f s = %.0f MB/s, %.2f million rows/s; peak resident %.1f MB\n",
                path.c_str(), report.rows, mb, std::max(1, repeat), best, mb / best, report.rows / best / 1e6,
                peak_resident_mb());
    return 0;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "%s\n", e.what());
    return 2;
  }
}
