// swashtune-cli sensitivity: how the figures users act on change with each
// tunable design parameter (wiring and the table only; the numbers are in
// core's sensitivity.hpp).
#pragma once

#include <CLI/CLI.hpp>
#include <memory>

namespace swashtune::cli {

class TuningCommands {
 public:
  explicit TuningCommands(CLI::App& app);  // adds the subcommands
  ~TuningCommands();
  bool chosen() const;
  int run();  // its exit status; throws core's errors for main to report

 private:
  struct Options;
  std::unique_ptr<Options> o_;
};

}  // namespace swashtune::cli
