// What the programs say at their limits: an allocation that fails (exit 4 and
// a message, not "internal error"), a disk that fills during a sweep's final
// sorted rewrite (every point is computed; only the rewrite needs room), and
// an empty scenario file (a warning, not a silent default study).
#include <gtest/gtest.h>

#include "cli_process.hpp"

namespace fs = std::filesystem;
using swashtune::testing::Process;
using swashtune::testing::ProcessOptions;
using swashtune::testing::run_process;
using swashtune::testing::slurp;

namespace {

const std::string kDemo = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/valve-slam.toml";

class Limits : public ::testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::temp_directory_path() / ("swashtune-limits-" + std::to_string(::getpid()) + "-" +
                                        ::testing::UnitTest::GetInstance()->current_test_info()->name());
    fs::remove_all(dir_);
    fs::create_directories(dir_);
  }
  void TearDown() override { fs::remove_all(dir_); }
  fs::path dir_;
};

// RLIMIT_AS makes allocations fail as they do on a machine out of memory. The
// sanitizers reserve terabytes of address space for their shadow memory, so
// there an address-space limit stops the program before main.
bool address_space_limits_work() {
#ifdef SWASHTUNE_SANITIZED
  return false;
#else
  return true;
#endif
}

}  // namespace

TEST_F(Limits, AnAllocationFailureInTheCliExitsFourWithAMessage) {
  if (!address_space_limits_work()) GTEST_SKIP() << "address-space limits do not apply under the sanitizers";
  ProcessOptions limited;
  limited.address_space_limit = rlim_t{96} << 20;
  // The plain command works within the limit, so what fails below is the job's size.
  ASSERT_EQ(run_process({SWASHTUNE_CLI, "check", kDemo}, dir_, limited).exit_code, 0);
  // Ten million Latin hypercube points need about 160 MB before the first run.
  const fs::path table = dir_ / "big.csv";
  const Process p = run_process({SWASHTUNE_CLI, "sweep", kDemo, "--vary", "line.volume=1e-3:2e-3", "--samples",
                                 "10000000", "--out", table.string()},
                                dir_, limited);
  EXPECT_EQ(p.exit_code, 4) << p.err;
  EXPECT_NE(p.err.find("swashtune-cli sweep: out of memory"), std::string::npos) << p.err;
  EXPECT_EQ(p.err.find("internal error"), std::string::npos) << p.err;
  EXPECT_FALSE(fs::exists(table));
}

TEST_F(Limits, AnAllocationFailureInTheBenchExitsFourWithAMessage) {
  if (!address_space_limits_work()) GTEST_SKIP() << "address-space limits do not apply under the sanitizers";
  // The bench keeps whole traces in memory: a long run at a fine sampling
  // cannot fit in 160 MB of address space.
  const fs::path scenario = dir_ / "long.toml";
  std::ofstream(scenario) << "[scenario]\nduration = \"2000 s\"\nsample_interval = \"0.1 ms\"\n"
                             "[solver]\nmax_step = \"1 s\"\n";
  ProcessOptions limited;
  limited.address_space_limit = rlim_t{160} << 20;
  ASSERT_EQ(run_process({SWASHTUNE_BENCH, "--repeat-time", "0", "--rtol", "1e-4", kDemo}, dir_, limited).exit_code, 0)
      << "the demo does not bench within the limit";
  const Process p =
      run_process({SWASHTUNE_BENCH, "--repeat-time", "0", "--rtol", "1e-4", scenario.string()}, dir_, limited);
  EXPECT_EQ(p.exit_code, 4) << p.err;
  EXPECT_NE(p.err.find("swashtune-bench: out of memory"), std::string::npos) << p.err;
}

// The disk fills just when the finished sweep is rewritten sorted (the shim
// refuses the temporary of that rewrite, as a full disk would): the message
// says every point is in the file and how to finish; --resume then sorts the
// file without computing, to the bytes of an uninterrupted sweep.
TEST_F(Limits, ADiskFullAtTheSweepsFinalRewriteSaysEveryPointWasComputed) {
  const std::vector<std::string> sweep = {SWASHTUNE_CLI, "sweep", kDemo, "--vary", "line.volume=0.5 L:2 L:4",
                                          "--jobs",      "2"};
  const auto with_out = [&](const fs::path& out, bool resume) {
    std::vector<std::string> args = sweep;
    args.insert(args.end(), {"--out", out.string()});
    if (resume) args.push_back("--resume");
    return args;
  };
  const fs::path reference = dir_ / "reference.csv", table = dir_ / "table.csv";
  ASSERT_EQ(run_process(with_out(reference, false), dir_).exit_code, 0);

  ProcessOptions full;
  full.environment = {{"LD_PRELOAD", SWASHTUNE_FAULT_SHIM},
                      {"SWASHTUNE_FAULT", "open:ENOSPC:1:table.csv.partial-"},
                      {"ASAN_OPTIONS", "verify_asan_link_order=0:detect_leaks=0"}};
  const Process failed = run_process(with_out(table, false), dir_, full);
  EXPECT_EQ(failed.exit_code, 2);
  EXPECT_NE(failed.err.find("No space left on device"), std::string::npos) << failed.err;
  EXPECT_NE(failed.err.find("Every point of the sweep was computed and is in " + table.string()), std::string::npos)
      << failed.err;
  EXPECT_NE(failed.err.find("only the final rewrite sorted by index needs room"), std::string::npos) << failed.err;
  EXPECT_NE(failed.err.find("--resume"), std::string::npos) << failed.err;
  const std::string unsorted = slurp(table);
  EXPECT_EQ(std::count(unsorted.begin(), unsorted.end(), '\n'), 1 + 4);  // header and every point

  const Process resumed = run_process(with_out(table, true), dir_);
  ASSERT_EQ(resumed.exit_code, 0) << resumed.err;
  EXPECT_NE(resumed.out.find("4 already done, 0 computed"), std::string::npos) << resumed.out;
  EXPECT_EQ(slurp(table), slurp(reference));
}

TEST_F(Limits, AnEmptyScenarioFileGetsAWarning) {
  const fs::path empty = dir_ / "empty.toml";
  std::ofstream(empty) << "# to be filled in\n";
  const Process p = run_process({SWASHTUNE_CLI, "check", empty.string()}, dir_);
  EXPECT_EQ(p.exit_code, 0);
  EXPECT_NE(p.err.find("warning: " + empty.string() + ": the file sets nothing"), std::string::npos) << p.err;
  const Process demo = run_process({SWASHTUNE_CLI, "check", kDemo}, dir_);
  EXPECT_EQ(demo.err.find("warning"), std::string::npos) << demo.err;
}
