// swashtune-cli field and fit: recordings from a machine (wiring only; the
// reading, analysis and fitting are in core).
#pragma once

#include <CLI/CLI.hpp>
#include <memory>

namespace swashtune::cli {

class FieldCommands {
 public:
  explicit FieldCommands(CLI::App& app);  // adds the subcommands
  ~FieldCommands();
  bool chosen() const;  // one of them is on the command line
  int run();            // its exit status; throws core's errors for main to report

 private:
  struct Options;
  std::unique_ptr<Options> o_;
};

}  // namespace swashtune::cli
