// Runs swashtune-cli as a child process with extra environment variables (the
// fault shim's), an optional address-space limit and an optional kill after a
// delay; shared by the failure-mode tests.
#pragma once

#include <fcntl.h>
#include <signal.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <optional>
#include <sstream>
#include <string>
#include <thread>
#include <utility>
#include <vector>

namespace swashtune::testing {

struct Process {
  int exit_code = -1;  // -1 when killed by a signal
  int signal = 0;
  std::string out, err;
};

inline std::string slurp(const std::filesystem::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

struct ProcessOptions {
  std::vector<std::pair<std::string, std::string>> environment;
  std::optional<rlim_t> address_space_limit;            // bytes (RLIMIT_AS)
  std::optional<std::chrono::microseconds> kill_after;  // SIGKILL after this long
};

// `scratch` receives the child's stdout.txt and stderr.txt.
inline Process run_process(const std::vector<std::string>& argv, const std::filesystem::path& scratch,
                           const ProcessOptions& options = {}) {
  const std::string out_path = (scratch / "stdout.txt").string(), err_path = (scratch / "stderr.txt").string();
  std::vector<char*> args;
  for (const std::string& a : argv) args.push_back(const_cast<char*>(a.c_str()));
  args.push_back(nullptr);
  const pid_t child = ::fork();
  if (child < 0) return {};
  if (child == 0) {
    const int out = ::open(out_path.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
    const int err = ::open(err_path.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
    ::dup2(out, 1);
    ::dup2(err, 2);
    for (const auto& [key, value] : options.environment) ::setenv(key.c_str(), value.c_str(), 1);
    if (options.address_space_limit) {
      const rlimit limit{*options.address_space_limit, *options.address_space_limit};
      ::setrlimit(RLIMIT_AS, &limit);
    }
    ::execv(args[0], args.data());
    ::_exit(127);
  }
  if (options.kill_after) {
    std::this_thread::sleep_for(*options.kill_after);
    ::kill(child, SIGKILL);
  }
  int status = 0;
  ::waitpid(child, &status, 0);
  Process p;
  if (WIFEXITED(status)) p.exit_code = WEXITSTATUS(status);
  if (WIFSIGNALED(status)) p.signal = WTERMSIG(status);
  p.out = slurp(out_path);
  p.err = slurp(err_path);
  return p;
}

}  // namespace swashtune::testing
