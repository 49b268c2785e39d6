// A run's results as one unit, whatever goes wrong: write, sync, close,
// rename and mkdir failures injected by an LD_PRELOAD shim (tests/fault_shim.cpp:
// EIO, ENOSPC, EXDEV, EROFS, ...), kill -9 at every file-system call and at
// random moments, a real full disk and a real read-only folder (small tmpfs
// mounts, when run as root), and the removal of stale temporaries of killed
// runs (only ours, only when their process is gone).
#include <gtest/gtest.h>
#include <sys/mount.h>
#include <sys/statvfs.h>
#include <sys/time.h>

#include <algorithm>
#include <cstdio>
#include <map>
#include <random>
#include <set>

#include "cli_process.hpp"

namespace fs = std::filesystem;
using swashtune::testing::Process;
using swashtune::testing::ProcessOptions;
using swashtune::testing::run_process;
using swashtune::testing::slurp;

namespace {

// Two runs that tell their pairs apart: the summary names the scenario, and
// each scenario gives its own number of trace rows.
const std::string kEarlier =
    "[scenario]\nname = \"earlier\"\nduration = \"0.2 s\"\nsample_interval = \"1 ms\"\n"
    "[[events]]\nat = \"0.05 s\"\nset = \"load.opening\"\nto = 0.0\nramp = \"5 ms\"\n";
const std::string kLater =
    "[scenario]\nname = \"later\"\nduration = \"1 s\"\nsample_interval = \"0.5 ms\"\n"
    "[[events]]\nat = \"0.1 s\"\nset = \"load.opening\"\nto = 0.0\nramp = \"5 ms\"\n";
// Long enough (9 MB of trace, a fifth of a second) to be killed in the middle.
const std::string kLong =
    "[scenario]\nname = \"long\"\nduration = \"40 s\"\nsample_interval = \"0.5 ms\"\n"
    "[[events]]\nat = \"1 s\"\nset = \"load.opening\"\nto = 0.0\nramp = \"5 ms\"\n"
    "[[events]]\nat = \"20 s\"\nset = \"load.opening\"\nto = 1.0\nramp = \"5 ms\"\n";
const std::map<std::string, long> kRows = {{"earlier", 201}, {"later", 2001}, {"long", 80001}};

struct Injection {
  const char* call;
  const char* error;
};
// What a full, failing or read-only disk and a cross-device move make these
// calls return (open(2), write(2), fsync(2), close(2), rename(2), mkdir(2)).
const Injection kInjections[] = {
    {"open", "ENOSPC"},  {"open", "EROFS"},   {"open", "EACCES"}, {"write", "ENOSPC"}, {"write", "EIO"},
    {"write", "EDQUOT"}, {"fsync", "EIO"},    {"close", "EIO"},   {"rename", "EXDEV"}, {"rename", "EIO"},
    {"rename", "EBUSY"}, {"mkdir", "ENOSPC"}, {"mkdir", "EROFS"},
};

std::string scenario_name_in(const std::string& summary) {
  const std::string key = "\"scenario\": \"";
  const auto at = summary.find(key);
  if (at == std::string::npos) return "";
  return summary.substr(at + key.size(), summary.find('"', at + key.size()) - at - key.size());
}

class FileSafety : public ::testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::temp_directory_path() / ("swashtune-files-" + std::to_string(::getpid()) + "-" +
                                        ::testing::UnitTest::GetInstance()->current_test_info()->name());
    fs::remove_all(dir_);
    fs::create_directories(dir_ / "results");
    for (const auto& [name, text] : {std::pair{"earlier", kEarlier}, {"later", kLater}, {"long", kLong}})
      std::ofstream(dir_ / (std::string(name) + ".toml")) << text;
    out_ = dir_ / "results" / "out";
  }
  void TearDown() override {
    for (const fs::path& m : mounts_) ::umount2(m.c_str(), MNT_DETACH);
    fs::remove_all(dir_);
  }

  Process run(const std::string& scenario, const ProcessOptions& options = {}, const fs::path& out = {}) {
    return run_process({SWASHTUNE_CLI, "run", (dir_ / (scenario + ".toml")).string(), "--out",
                        (out.empty() ? out_ : out).string(), "--units", "si"},
                       dir_, options);
  }

  static ProcessOptions fault(const std::string& call, const std::string& error, long nth, const fs::path& where) {
    ProcessOptions o;
    o.environment = {{"LD_PRELOAD", SWASHTUNE_FAULT_SHIM},
                     {"SWASHTUNE_FAULT", call + ":" + error + ":" + std::to_string(nth) + ":" + where.string()},
                     {"ASAN_OPTIONS", "verify_asan_link_order=0:detect_leaks=0"}};
    return o;
  }

  // How many times each kind of call touches `where` during a clean run.
  std::map<std::string, long> count_calls(const std::string& scenario, const fs::path& where) {
    const fs::path log = dir_ / "calls.log";
    fs::remove(log);
    ProcessOptions o = fault("none", "EIO", 1, where);
    o.environment.push_back({"SWASHTUNE_FAULT_LOG", log.string()});
    const Process p = run(scenario, o);
    EXPECT_EQ(p.exit_code, 0) << p.err;
    std::map<std::string, long> counts;
    std::istringstream lines(slurp(log));
    std::string call, path;
    while (lines >> call && std::getline(lines, path)) ++counts[call];
    return counts;
  }

  // The name of the run whose complete pair `folder` holds; "" when it holds
  // none. A mix (trace of one run, summary of another, or one file missing)
  // fails the test.
  static std::string pair_in(const fs::path& folder) {
    if (!fs::exists(folder)) return "";
    std::set<std::string> names;
    for (const auto& e : fs::directory_iterator(folder)) names.insert(e.path().filename().string());
    EXPECT_EQ(names, (std::set<std::string>{"summary.json", "trace.csv"})) << folder;
    const std::string run = scenario_name_in(slurp(folder / "summary.json"));
    const std::string trace = slurp(folder / "trace.csv");
    EXPECT_TRUE(kRows.count(run)) << "summary of an unknown run: " << run;
    if (kRows.count(run)) {
      EXPECT_EQ(std::count(trace.begin(), trace.end(), '\n'), 1 + kRows.at(run)) << run;
    }
    return run;
  }

  // Every entry under results/ other than the output folder and its two files.
  std::vector<std::string> leftovers() const {
    std::vector<std::string> extra;
    for (const auto& e : fs::recursive_directory_iterator(dir_ / "results")) {
      const fs::path rel = fs::relative(e.path(), dir_ / "results");
      if (rel != "out" && rel != fs::path("out") / "trace.csv" && rel != fs::path("out") / "summary.json")
        extra.push_back(rel.string());
    }
    return extra;
  }

  bool mount_tmpfs(const fs::path& at, const std::string& options) {
    fs::create_directories(at);
    if (::geteuid() != 0 || ::mount("tmpfs", at.c_str(), "tmpfs", 0, options.c_str()) != 0) return false;
    mounts_.push_back(at);
    return true;
  }

  fs::path dir_, out_;
  std::vector<fs::path> mounts_;
};

}  // namespace

TEST_F(FileSafety, ARunReplacesBothFilesAtOnceAndLeavesNothingElse) {
  ASSERT_EQ(run("earlier").exit_code, 0);
  EXPECT_EQ(pair_in(out_), "earlier");
  ASSERT_EQ(run("later").exit_code, 0);
  EXPECT_EQ(pair_in(out_), "later");
  EXPECT_TRUE(leftovers().empty()) << leftovers().front();
}

TEST_F(FileSafety, AFolderHoldingOtherFilesIsRefusedNotReplaced) {
  fs::create_directories(out_);
  std::ofstream(out_ / "notes.txt") << "mine";
  const Process p = run("later");
  EXPECT_EQ(p.exit_code, 2);
  EXPECT_NE(p.err.find("notes.txt"), std::string::npos) << p.err;
  EXPECT_EQ(slurp(out_ / "notes.txt"), "mine");
  EXPECT_FALSE(fs::exists(out_ / "trace.csv"));
}

// Every call of each kind that touches the results fails in turn (from the
// n-th on, as a disk that fills stays full): the run either fails with exit 2
// and a message naming the file and the reason, leaving the earlier pair
// exactly as it was and no temporary, or (when the failure comes after the
// new pair is in place, as a sync of the parent folder) succeeds with the new pair.
TEST_F(FileSafety, InjectedFailuresLeaveTheEarlierPairAndNoTemporaries) {
  const std::map<std::string, long> calls = count_calls("later", dir_ / "results");
  ASSERT_EQ(run("earlier").exit_code, 0);
  std::string earlier_trace = slurp(out_ / "trace.csv"), earlier_summary = slurp(out_ / "summary.json");
  for (const Injection& injection : kInjections) {
    const long count = calls.count(injection.call) ? calls.at(injection.call) : 0;
    ASSERT_GT(count, 0) << injection.call << " is never called: the injection would test nothing";
    int failures = 0;
    for (long n = 1; n <= count + 1; ++n) {
      const std::string what = std::string(injection.call) + " " + injection.error + " from call " + std::to_string(n);
      const Process p = run("later", fault(injection.call, injection.error, n, dir_ / "results"));
      ASSERT_TRUE(p.exit_code == 0 || p.exit_code == 2) << what << ": exit " << p.exit_code << ", " << p.err;
      if (p.exit_code == 2) {
        ++failures;
        EXPECT_NE(p.err.find(out_.string()), std::string::npos) << what << ": " << p.err;
        EXPECT_NE(p.err.find("earlier run's results"), std::string::npos) << what << ": " << p.err;
        EXPECT_EQ(slurp(out_ / "trace.csv"), earlier_trace) << what;
        EXPECT_EQ(slurp(out_ / "summary.json"), earlier_summary) << what;
      } else {
        EXPECT_EQ(pair_in(out_), "later") << what;
        ASSERT_EQ(run("earlier").exit_code, 0);  // back to the earlier pair for the next case
        earlier_trace = slurp(out_ / "trace.csv");
        earlier_summary = slurp(out_ / "summary.json");
      }
      EXPECT_EQ(pair_in(out_), "earlier") << what;
      const auto extra = leftovers();
      EXPECT_TRUE(extra.empty()) << what << ": left " << extra.front();
    }
    EXPECT_GT(failures, 0) << injection.call << " " << injection.error << " never made the run fail";
    // Past the last call nothing is injected: the run must then succeed.
  }
}

TEST_F(FileSafety, InjectedErrorsAreNamedInTheMessage) {
  ASSERT_EQ(run("earlier").exit_code, 0);
  const struct {
    const char* call;
    const char* error;
    const char* text;
  } cases[] = {{"write", "ENOSPC", "No space left on device"},
               {"rename", "EXDEV", "Invalid cross-device link"},
               {"fsync", "EIO", "Input/output error"},
               {"open", "EROFS", "Read-only file system"}};
  for (const auto& c : cases) {
    const Process p = run("later", fault(c.call, c.error, 1, dir_ / "results"));
    EXPECT_EQ(p.exit_code, 2) << c.call;
    EXPECT_NE(p.err.find(c.text), std::string::npos) << c.call << ": " << p.err;
  }
  EXPECT_EQ(pair_in(out_), "earlier");
}

// kill -9 exactly at each file-system call of a run: the folder holds the
// earlier pair or the new one, complete; the next run removes what the killed
// one left (its staging folder, the earlier results it had swapped out).
TEST_F(FileSafety, KilledAtEveryFileCallTheFolderHoldsOnePairAndTheNextRunCleansUp) {
  ASSERT_EQ(run("earlier").exit_code, 0);
  const std::map<std::string, long> calls = count_calls("later", dir_ / "results");
  ASSERT_EQ(run("earlier").exit_code, 0);
  int left_something = 0, saw_later = 0;
  for (const auto& [call, count] : calls) {
    for (long n = 1; n <= count; ++n) {
      const std::string what = "kill at " + call + " " + std::to_string(n);
      const Process p = run("later", fault(call, "KILL", n, dir_ / "results"));
      ASSERT_EQ(p.signal, SIGKILL) << what << ": exit " << p.exit_code << " " << p.err;
      const std::string pair = pair_in(out_);
      EXPECT_TRUE(pair == "earlier" || pair == "later") << what << ": " << pair;
      saw_later += pair == "later";
      left_something += !leftovers().empty();
      ASSERT_EQ(run("earlier").exit_code, 0) << what;
      EXPECT_EQ(pair_in(out_), "earlier");
      const auto extra = leftovers();
      EXPECT_TRUE(extra.empty()) << what << ": the next run left " << extra.front();
    }
  }
  EXPECT_GT(left_something, 0) << "no kill left a temporary: the clean-up was not tested";
  EXPECT_GT(saw_later, 0) << "no kill came after the new pair was in place";
}

TEST_F(FileSafety, KilledAtRandomMomentsTheFolderHoldsOnePairAndTheNextRunCleansUp) {
  ASSERT_EQ(run("earlier").exit_code, 0);
  const auto started = std::chrono::steady_clock::now();
  ASSERT_EQ(run("long").exit_code, 0);
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  const unsigned seed = std::random_device{}();
  std::printf("kill -9 at random moments of a %.3f s run, seed %u\n", seconds, seed);
  std::mt19937 random(seed);
  std::uniform_real_distribution<double> moment(0.0, 1.2 * seconds);
  std::map<std::string, int> seen;
  for (int trial = 0; trial < 16; ++trial) {
    ProcessOptions o;
    o.kill_after = std::chrono::microseconds(static_cast<long>(moment(random) * 1e6));
    run("long", o);
    const std::string pair = pair_in(out_);
    EXPECT_TRUE(pair == "earlier" || pair == "long") << "seed " << seed << " trial " << trial << ": " << pair;
    ++seen[pair];
    ASSERT_EQ(run("earlier").exit_code, 0);
    const auto extra = leftovers();
    EXPECT_TRUE(extra.empty()) << "seed " << seed << ": left " << extra.front();
  }
  std::printf("pairs found after the kills: earlier %d, long %d\n", seen["earlier"], seen["long"]);
}

// Only temporaries of ours whose process is gone are removed: not those of a
// live process, not other names, not a folder holding a folder; a live process
// that started after the temporary was written has only reused the number.
TEST_F(FileSafety, StaleTemporariesOfDeadProcessesAreRemovedAndNothingElse) {
  const pid_t dead = ::fork();
  if (dead == 0) ::_exit(0);
  ::waitpid(dead, nullptr, 0);
  const pid_t live = ::fork();
  if (live == 0) {
    ::sleep(60);
    ::_exit(0);
  }
  const fs::path results = dir_ / "results";
  const auto touch = [](const fs::path& p) { std::ofstream(p) << "x"; };
  const std::string d = std::to_string(dead), l = std::to_string(live);
  fs::create_directories(results / ("out.partial-" + d));
  touch(results / ("out.partial-" + d) / "trace.csv");              // removed: staging of a dead run
  fs::create_directories(results / ("out.partial-" + l));           // kept: a live run's
  fs::create_directories(results / ("out.partial-1" + d) / "sub");  // kept: holds a folder
  touch(results / "out.partial-x1");                                // kept: not our name
  touch(results / ("out.partial-" + l + "-old"));                   // kept: not our name
  touch(results / ("other.partial-" + d));                          // kept: beside another target
  // Beside the sweep's table: a dead run's, and one written an hour before
  // the live process started (so not by it: its number was reused).
  touch(results / ("sweep.csv.partial-" + d));
  touch(results / ("sweep.csv.partial-" + l));
  const timeval hour_ago[2] = {{::time(nullptr) - 3600, 0}, {::time(nullptr) - 3600, 0}};
  ASSERT_EQ(::utimes((results / ("sweep.csv.partial-" + l)).c_str(), hour_ago), 0);

  ASSERT_EQ(run("earlier").exit_code, 0);
  EXPECT_FALSE(fs::exists(results / ("out.partial-" + d)));
  EXPECT_TRUE(fs::exists(results / ("out.partial-" + l)));
  EXPECT_TRUE(fs::exists(results / ("out.partial-1" + d) / "sub"));
  EXPECT_TRUE(fs::exists(results / "out.partial-x1"));
  EXPECT_TRUE(fs::exists(results / ("out.partial-" + l + "-old")));
  EXPECT_TRUE(fs::exists(results / ("other.partial-" + d)));

  const Process sweep = run_process({SWASHTUNE_CLI, "sweep", (dir_ / "earlier.toml").string(), "--vary",
                                     "line.volume=1e-3:2e-3:2", "--out", (results / "sweep.csv").string()},
                                    dir_);
  ASSERT_EQ(sweep.exit_code, 0) << sweep.err;
  EXPECT_FALSE(fs::exists(results / ("sweep.csv.partial-" + d)));
  EXPECT_FALSE(fs::exists(results / ("sweep.csv.partial-" + l)));
  ::kill(live, SIGKILL);
  ::waitpid(live, nullptr, 0);
}

// A real full disk: a 1 MB tmpfs with a filler file leaving room for the
// earlier pair but not for the later one beside it.
TEST_F(FileSafety, AFullDiskIsRefusedAndTheEarlierPairKept) {
  const fs::path disk = dir_ / "results" / "disk";
  if (!mount_tmpfs(disk, "size=1m")) GTEST_SKIP() << "mounting a tmpfs needs root; the shim's ENOSPC cases cover it";
  const fs::path out = disk / "out";
  ASSERT_EQ(run("earlier", {}, out).exit_code, 0);
  const std::string before = slurp(out / "trace.csv");
  struct statvfs space {};
  ASSERT_EQ(::statvfs(disk.c_str(), &space), 0);
  const std::size_t free_bytes = space.f_bavail * space.f_frsize;
  std::ofstream(disk / "filler", std::ios::binary) << std::string(free_bytes - 64 * 1024, 'x');
  const Process p = run("later", {}, out);
  EXPECT_EQ(p.exit_code, 2);
  EXPECT_NE(p.err.find("No space left on device"), std::string::npos) << p.err;
  EXPECT_NE(p.err.find("earlier run's results"), std::string::npos) << p.err;
  EXPECT_EQ(slurp(out / "trace.csv"), before);
  std::set<std::string> entries;
  for (const auto& e : fs::directory_iterator(disk)) entries.insert(e.path().filename().string());
  EXPECT_EQ(entries, (std::set<std::string>{"filler", "out"}));
}

// A real read-only folder (root ignores permission bits, so a read-only mount).
TEST_F(FileSafety, AReadOnlyFolderIsRefusedAndTheEarlierPairKept) {
  const fs::path disk = dir_ / "results" / "disk";
  if (!mount_tmpfs(disk, "size=4m")) GTEST_SKIP() << "mounting a tmpfs needs root; the shim's EROFS cases cover it";
  const fs::path out = disk / "out";
  ASSERT_EQ(run("earlier", {}, out).exit_code, 0);
  const std::string before = slurp(out / "summary.json");
  ASSERT_EQ(::mount("tmpfs", disk.c_str(), "tmpfs", MS_REMOUNT | MS_RDONLY, "size=4m"), 0);
  const Process p = run("later", {}, out);
  EXPECT_EQ(p.exit_code, 2);
  EXPECT_NE(p.err.find("Read-only file system"), std::string::npos) << p.err;
  EXPECT_EQ(slurp(out / "summary.json"), before);
}
