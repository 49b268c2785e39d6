// swashtune-cli sweep and merge as a user meets them: a sweep's table is the
// same bytes however it is run (threads, shards, interruptions), a Latin
// hypercube is reproducible and stratified, rows hold what run and stability
// report, and bad input exits 2 without touching files.
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <numeric>
#include <sstream>
#include <string>
#include <vector>

#include "swashtune/sweep.hpp"

namespace fs = std::filesystem;

namespace {

struct Outcome {
  int exit_code;
  std::string out;
  std::string err;
};

std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

std::vector<std::string> split(const std::string& text, char separator) {
  std::vector<std::string> parts;
  std::string part;
  std::istringstream in(text);
  while (std::getline(in, part, separator)) parts.push_back(part);
  if (!text.empty() && text.back() == separator && separator == ',') parts.emplace_back();
  return parts;
}

// A table as lines (without line ends); lines[0] is the header.
std::vector<std::string> lines_of(const std::string& text) { return split(text, '\n'); }

std::size_t column(const std::string& header, const std::string& name) {
  const auto names = split(header, ',');
  const auto it = std::find(names.begin(), names.end(), name);
  EXPECT_NE(it, names.end()) << name;
  return static_cast<std::size_t>(it - names.begin());
}

double field(const std::string& line, std::size_t index) { return std::stod(split(line, ',').at(index)); }

// The number after "key": in a JSON text.
double json_value(const std::string& json, const std::string& key) {
  const auto at = json.find("\"" + key + "\":");
  EXPECT_NE(at, std::string::npos) << key;
  return std::strtod(json.c_str() + at + key.size() + 3, nullptr);
}

// The valve slam cut short, on the v1 pump (tests/data/v1/pump.toml), whose
// short stiff-hose, low-damping design is unstable at deadhead: full flow,
// the valve slammed shut at 0.1 s, 0.2 s in all, so that a sweep of a few
// points takes a fraction of a second.
const char* const short_slam = R"(
[scenario]
name = "sweep test: supply valve slammed shut"
duration = "0.2 s"
sample_interval = "0.5 ms"

[solver]
rtol = 1e-6

[fluid]
cavitation = false
temperature = "40 degC"

[pump]
displacement = "45 cm^3/rev"
speed = "1800 rpm"
max_swash_angle = "17 deg"
swash_inertia = "0.003 kg*m^2"
swash_damping = "1 N*m*s/rad"
pressure_moment = "0 N*m/Pa"
swash_friction = "0 N*m"

[bias_spring]
rate = "20 N/mm"
force_at_full_stroke = "400 N"

[control_piston]
diameter = "18 mm"
dead_volume = "20 cm^3"

[relief]
setting = "none"

[compensator]
setting = "210 bar"
spool_diameter = "6 mm"
spring_rate = "50 N/mm"
spool_mass = "10 g"
spool_damping = "20 N*s/m"
port_width = "6 mm"
underlap = "0.01 mm"
bleed_orifice = "0.4 mm"
control_orifice = "none"
port_volume = "5 cm^3"

[line]
volume = "1 L"

[load]
opening = 1.0

[[events]]
at = "0.1 s"
set = "load.opening"
to = 0.0
ramp = "5 ms"
)";

// 2 x 3 points; the base scenario's values (210 bar, 1 L) are point 3.
const std::string grid = "--vary \"compensator.setting=180 bar:210 bar:2\" --vary \"line.volume=0.5 L:1.5 L:3\"";

class Sweep : public ::testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::temp_directory_path() / ("swashtune-sweep-test-" + std::to_string(::getpid()) + "-" +
                                        ::testing::UnitTest::GetInstance()->current_test_info()->name());
    fs::remove_all(dir_);
    fs::create_directories(dir_);
    std::ofstream(dir_ / "slam.toml") << short_slam;
    scenario_ = (dir_ / "slam.toml").string();
  }
  void TearDown() override { fs::remove_all(dir_); }

  Outcome cli(const std::string& args) {
    const fs::path out = dir_ / "stdout.txt", err = dir_ / "stderr.txt";
    const std::string command = std::string(SWASHTUNE_CLI) + " " + args + " >" + out.string() + " 2>" + err.string();
    const int status = std::system(command.c_str());
    return Outcome{WIFEXITED(status) ? WEXITSTATUS(status) : -1, slurp(out), slurp(err)};
  }

  // Runs a sweep of the short slam into dir_/name; returns the file's text.
  std::string sweep(const std::string& args, const std::string& name) {
    const Outcome o = cli("sweep " + scenario_ + " " + args + " --out " + path(name));
    EXPECT_EQ(o.exit_code, 0) << o.err;
    return slurp(dir_ / name);
  }

  std::string path(const std::string& name) const { return (dir_ / name).string(); }

  fs::path dir_;
  std::string scenario_;
};

TEST_F(Sweep, GridTableHasOneSortedRowPerPointFirstAxisFastest) {
  const auto lines = lines_of(sweep(grid, "grid.csv"));
  ASSERT_EQ(lines.size(), 1u + 6u);
  EXPECT_EQ(lines[0],
            "index,compensator.setting,line.volume,peak_discharge_pressure_Pa,final_discharge_pressure_Pa,"
            "overshoot_percent,undershoot_percent,settling_time_s,swash_response_time_s,swash_travel_time_s,"
            "event_note,oscillation,oscillation_frequency_Hz,margin_opening,margins_apply,gain_margin_dB,"
            "phase_margin_deg,modulus_margin,dominant_frequency_Hz,dominant_damping_ratio,stable,status");
  const double settings[] = {180e5, 210e5}, volumes[] = {0.5e-3, 1e-3, 1.5e-3};
  for (std::size_t i = 0; i < 6; ++i) {
    const auto f = split(lines[i + 1], ',');
    EXPECT_EQ(f.at(0), std::to_string(i));
    EXPECT_DOUBLE_EQ(std::stod(f.at(1)), settings[i % 2]);
    EXPECT_DOUBLE_EQ(std::stod(f.at(2)), volumes[i / 2]);
    EXPECT_EQ(f.back(), "ok");
    // The slam drives the line above the setting, and it ends near it.
    EXPECT_GT(std::stod(f.at(3)), settings[i % 2] * 1.05);
    EXPECT_NEAR(std::stod(f.at(4)), settings[i % 2], 0.02 * settings[i % 2]);
  }
}

TEST_F(Sweep, RowsHoldWhatRunAndStabilityReport) {
  const auto lines = lines_of(sweep(grid, "grid.csv"));
  ASSERT_EQ(lines.size(), 7u);
  const std::string& header = lines[0];
  const std::string& base = lines[1 + 3];  // 210 bar, 1 L: the scenario as written
  const Outcome run = cli("run " + scenario_ + " --out " + path("run") + " --units si");
  ASSERT_EQ(run.exit_code, 0) << run.err;
  const std::string summary = slurp(dir_ / "run" / "summary.json");
  // summary.json prints 12 significant digits.
  const auto near = [](double a, double b) { return std::abs(a - b) <= 1e-10 * std::max(std::abs(a), std::abs(b)); };
  EXPECT_TRUE(near(field(base, column(header, "peak_discharge_pressure_Pa")),
                   json_value(summary, "peak_discharge_pressure_Pa")));
  EXPECT_TRUE(near(field(base, column(header, "overshoot_percent")), json_value(summary, "overshoot_percent")));
  EXPECT_TRUE(near(field(base, column(header, "settling_time_s")), json_value(summary, "settling_time_s")));

  // At full opening the spool rests on its stop: no loop, no margins (empty
  // fields); part-open, the loop works and the margins are those of stability.
  const auto openings = lines_of(sweep("--vary load.opening=0.15:1:2", "openings.csv"));
  ASSERT_EQ(openings.size(), 3u);
  const std::size_t gm = column(openings[0], "gain_margin_dB"), pm = column(openings[0], "phase_margin_deg");
  EXPECT_EQ(split(openings[2], ',').at(gm), "");
  const Outcome st = cli("stability " + scenario_ + " --opening 0.15 --json");
  ASSERT_EQ(st.exit_code, 0) << st.err;
  EXPECT_TRUE(near(field(openings[1], gm), json_value(st.out, "gain_margin_dB")));
  EXPECT_TRUE(near(field(openings[1], pm), json_value(st.out, "phase_margin_deg")));
  EXPECT_TRUE(near(field(openings[1], column(openings[0], "modulus_margin")), json_value(st.out, "modulus_margin")));
  EXPECT_EQ(split(openings[1], ',').at(column(openings[0], "stable")), "true");
  EXPECT_EQ(split(openings[1], ',').at(column(openings[0], "margins_apply")), "true");
  EXPECT_EQ(split(openings[2], ',').at(column(openings[0], "margins_apply")), "false");
}

// A slam study starts at full stroke, where the loop is inactive: --opening
// takes the margins at a load opening instead, and those are stability's;
// where they do not apply (an inner loop unstable by itself) the columns stay
// empty, so sorting by margin cannot pick such a design.
TEST_F(Sweep, OpeningTakesTheMarginsThereAndOnlyWhereTheyApply) {
  const auto start = lines_of(sweep("--vary \"line.volume=0.25 L:1 L:2\"", "start.csv"));
  ASSERT_EQ(start.size(), 3u);
  const std::size_t gm = column(start[0], "gain_margin_dB"), applies = column(start[0], "margins_apply"),
                    opening = column(start[0], "margin_opening");
  for (int i = 1; i <= 2; ++i) {
    EXPECT_EQ(split(start[i], ',').at(gm), "");
    EXPECT_EQ(split(start[i], ',').at(opening), "1");
    EXPECT_EQ(split(start[i], ',').at(applies), "false");  // full stroke: the loop is inactive
  }
  const Outcome plain = cli("sweep " + scenario_ + " --vary \"line.volume=0.25 L:1 L:2\" --out " + path("again.csv"));
  EXPECT_NE(plain.out.find("--opening"), std::string::npos) << plain.out;  // the note says how to get margins

  const std::string table =
      sweep("--vary \"line.volume=0.25 L:1 L:2\" --vary compensator.spool_damping=8:20:2 --opening 0", "deadhead.csv");
  const auto rows = lines_of(table);
  ASSERT_EQ(rows.size(), 5u);
  const std::size_t gm2 = column(rows[0], "gain_margin_dB"), applies2 = column(rows[0], "margins_apply"),
                    opening2 = column(rows[0], "margin_opening");
  for (std::size_t i = 1; i < rows.size(); ++i) {
    const auto f = split(rows[i], ',');
    EXPECT_EQ(f.at(opening2), "0");
    if (f.at(applies2) == "true") {
      EXPECT_NE(f.at(gm2), "") << rows[i];
    } else {
      EXPECT_EQ(f.at(gm2), "") << rows[i];
    }
  }
  // The hunting demo's design (0.25 L, 8 N s/m) has an inner loop unstable by itself: no margins in its row.
  EXPECT_EQ(split(rows[1], ',').at(applies2), "false") << rows[1];
  EXPECT_EQ(split(rows[1], ',').at(column(rows[0], "stable")), "false");

  // --resume refuses a table whose margins were taken at another opening.
  const Outcome other = cli("sweep " + scenario_ +
                            " --vary \"line.volume=0.25 L:1 L:2\" --vary compensator.spool_damping=8:20:2 --opening 0.1"
                            " --resume --out " +
                            path("deadhead.csv"));
  EXPECT_EQ(other.exit_code, 2);
  EXPECT_NE(other.err.find("another --opening"), std::string::npos) << other.err;
  EXPECT_EQ(cli("sweep " + scenario_ + " --vary line.volume=1:2:2 --opening 2 --out " + path("bad.csv")).exit_code, 2);
}

TEST_F(Sweep, MergedShardsEqualTheUnshardedSweepByteForByte) {
  const std::string whole = sweep(grid, "whole.csv");
  for (int k = 1; k <= 3; ++k) {
    const auto part =
        lines_of(sweep(grid + " --shard " + std::to_string(k) + "/3", "part" + std::to_string(k) + ".csv"));
    ASSERT_EQ(part.size(), 1u + 2u);  // points k-1 and k+2
    EXPECT_EQ(split(part[1], ',').at(0), std::to_string(k - 1));
    EXPECT_EQ(split(part[2], ',').at(0), std::to_string(k + 2));
  }
  // Parts in any order; merge sorts by index.
  const Outcome o =
      cli("merge " + path("merged.csv") + " " + path("part3.csv") + " " + path("part1.csv") + " " + path("part2.csv"));
  ASSERT_EQ(o.exit_code, 0) << o.err;
  EXPECT_EQ(slurp(dir_ / "merged.csv"), whole);
  EXPECT_EQ(o.err.find("missing"), std::string::npos) << o.err;

  // A part left out is reported, and the same rows twice are only kept once.
  const Outcome gap =
      cli("merge " + path("gap.csv") + " " + path("part1.csv") + " " + path("part1.csv") + " " + path("part3.csv"));
  ASSERT_EQ(gap.exit_code, 0) << gap.err;
  EXPECT_NE(gap.err.find("2 points below index 5 are missing"), std::string::npos) << gap.err;
  EXPECT_EQ(lines_of(slurp(dir_ / "gap.csv")).size(), 1u + 4u);
}

TEST_F(Sweep, TwoJobsGiveTheSameTableAsOne) {
  const std::string wider = grid + " --vary \"load.opening=0.3:1:2\"";  // 12 points
  const std::string one = sweep(wider + " --jobs 1", "one.csv");
  EXPECT_EQ(lines_of(one).size(), 1u + 12u);
  EXPECT_EQ(sweep(wider + " --jobs 2", "two.csv"), one);
  EXPECT_EQ(sweep(wider + " --jobs 5", "five.csv"), one);  // more threads than a core count: still the same
}

TEST_F(Sweep, ResumedAfterAnInterruptionGivesTheSameTable) {
  const std::string whole = sweep(grid, "whole.csv");
  const auto lines = lines_of(whole);
  // As a killed run with two threads leaves it: rows in finishing order, the
  // last one half written.
  std::ofstream(dir_ / "stopped.csv", std::ios::binary) << lines[0] << "\n"
                                                        << lines[1 + 4] << "\n"
                                                        << lines[1 + 1] << "\n"
                                                        << lines[1 + 2].substr(0, lines[1 + 2].size() / 2);
  const Outcome o = cli("sweep " + scenario_ + " " + grid + " --resume --out " + path("stopped.csv"));
  ASSERT_EQ(o.exit_code, 0) << o.err;
  EXPECT_NE(o.out.find("2 already done, 4 computed"), std::string::npos) << o.out;
  EXPECT_EQ(slurp(dir_ / "stopped.csv"), whole);

  // Stopped while the header was being written: starts over.
  std::ofstream(dir_ / "early.csv", std::ios::binary) << lines[0].substr(0, 10);
  ASSERT_EQ(cli("sweep " + scenario_ + " " + grid + " --resume --out " + path("early.csv")).exit_code, 0);
  EXPECT_EQ(slurp(dir_ / "early.csv"), whole);

  // Resuming a finished sweep computes nothing and changes nothing.
  const Outcome again = cli("sweep " + scenario_ + " " + grid + " --resume --out " + path("whole.csv"));
  ASSERT_EQ(again.exit_code, 0) << again.err;
  EXPECT_NE(again.out.find("6 already done, 0 computed"), std::string::npos) << again.out;
  EXPECT_EQ(slurp(dir_ / "whole.csv"), whole);
}

TEST_F(Sweep, LatinHypercubeIsReproducibleWithOneSamplePerStratum) {
  const std::string ranges = "--vary \"compensator.setting=180 bar:210 bar\" --vary \"line.volume=0.5 L:1.5 L\"";
  const std::string a = sweep(ranges + " --samples 8 --seed 42", "a.csv");
  EXPECT_EQ(sweep(ranges + " --samples 8 --seed 42 --jobs 2", "b.csv"), a);
  EXPECT_NE(sweep(ranges + " --samples 8 --seed 43", "c.csv"), a);
  const auto lines = lines_of(a);
  ASSERT_EQ(lines.size(), 1u + 8u);
  const double from[] = {180e5, 0.5e-3}, to[] = {210e5, 1.5e-3};
  for (std::size_t k = 0; k < 2; ++k) {
    std::vector<int> strata;
    for (std::size_t i = 1; i < lines.size(); ++i) {
      const double v = field(lines[i], 1 + k);
      ASSERT_GE(v, from[k]);
      ASSERT_LE(v, to[k]);
      strata.push_back(std::min(7, static_cast<int>(std::floor((v - from[k]) / (to[k] - from[k]) * 8))));
    }
    std::sort(strata.begin(), strata.end());
    std::vector<int> each(8);
    std::iota(each.begin(), each.end(), 0);
    EXPECT_EQ(strata, each) << "axis " << k;
  }
}

TEST_F(Sweep, BadInputExitsTwoWithAClearMessageAndLeavesFilesAlone) {
  struct Case {
    const char* name;
    std::string args;
    const char* message;
  };
  const Case cases[] = {
      {"unknown key", "--vary \"compensator.stiffness=1:2:3\"", "\"compensator.stiffness\" is not a numeric parameter"},
      {"shard past the count", grid + " --shard 4/3", "--shard 4/3: expected K/N with 1 <= K <= N"},
      {"shard zero", grid + " --shard 0/3", "--shard 0/3"},
      {"wrong unit", "--vary \"line.volume=1 bar:2 bar:3\"", "line.volume"},
      {"count with samples", "--vary \"line.volume=1 L:2 L:3\" --samples 4", "with --samples give KEY=FROM:TO"},
      {"nothing to vary", "", "give what to vary"},
      {"same key twice", "--vary line.volume=1e-3:2e-3:2 --vary line.volume=1e-3:2e-3:2", "given twice"},
      {"no threads", grid + " --jobs 0", "--jobs"},
      {"contradicting point", "--vary \"compensator.underlap=0 mm:2 mm:3\"", "sweep point 1"},
  };
  for (const Case& c : cases) {
    const Outcome o = cli("sweep " + scenario_ + " " + c.args + " --out " + path("never.csv"));
    EXPECT_EQ(o.exit_code, 2) << c.name;
    EXPECT_NE(o.err.find(c.message), std::string::npos) << c.name << ": " << o.err;
    EXPECT_FALSE(fs::exists(dir_ / "never.csv")) << c.name;
  }

  const std::string before = sweep(grid, "done.csv");
  const auto refused = [&](const std::string& args, const char* message) {
    const Outcome o = cli("sweep " + scenario_ + " " + args + " --out " + path("done.csv"));
    EXPECT_EQ(o.exit_code, 2) << args;
    EXPECT_NE(o.err.find(message), std::string::npos) << args << ": " << o.err;
    EXPECT_EQ(slurp(dir_ / "done.csv"), before) << args;
  };
  refused(grid, "already exists; add --resume");
  refused("--vary \"line.volume=0.5 L:1.5 L:3\" --resume", "its header does not match this sweep");
  refused("--vary \"compensator.setting=170 bar:210 bar:2\" --vary \"line.volume=0.5 L:1.5 L:3\" --resume",
          "other parameter values");
  refused(grid + " --shard 2/3 --resume", "point 0 is not in shard 2/3");

  std::ofstream(dir_ / "notes.csv") << "time,pressure\n0,1\n";
  const Outcome foreign = cli("sweep " + scenario_ + " " + grid + " --resume --out " + path("notes.csv"));
  EXPECT_EQ(foreign.exit_code, 2);
  EXPECT_NE(foreign.err.find("not a sweep table"), std::string::npos) << foreign.err;
}

TEST_F(Sweep, MergeRefusesPartsThatDoNotBelongTogether) {
  const std::string whole = sweep(grid, "whole.csv");
  const auto lines = lines_of(whole);
  // The same point with another result: parts of different sweeps.
  std::string altered = lines[0] + "\n" + lines[1] + "\n";
  altered.replace(altered.rfind(",ok"), 3, ",solver failed: made up");
  std::ofstream(dir_ / "altered.csv", std::ios::binary) << altered;
  const Outcome twice = cli("merge " + path("out.csv") + " " + path("whole.csv") + " " + path("altered.csv"));
  EXPECT_EQ(twice.exit_code, 2);
  EXPECT_NE(twice.err.find("point 0 appears twice with different results"), std::string::npos) << twice.err;

  sweep("--vary \"line.volume=0.5 L:1.5 L:3\"", "other.csv");
  const Outcome header = cli("merge " + path("out.csv") + " " + path("whole.csv") + " " + path("other.csv"));
  EXPECT_EQ(header.exit_code, 2);
  EXPECT_NE(header.err.find("header differs"), std::string::npos) << header.err;

  std::ofstream(dir_ / "stopped.csv", std::ios::binary) << lines[0] << "\n" << lines[1].substr(0, 5);
  const Outcome partial = cli("merge " + path("out.csv") + " " + path("stopped.csv"));
  EXPECT_EQ(partial.exit_code, 2);
  EXPECT_NE(partial.err.find("partial row"), std::string::npos) << partial.err;

  EXPECT_EQ(cli("merge " + path("out.csv")).exit_code, 2);  // no inputs
  EXPECT_FALSE(fs::exists(dir_ / "out.csv"));
}

// A failed point's row: figures empty, the solver's message quoted (it may
// hold commas and quotes) and still read back by index and values.
TEST(SweepRow, FailedRowQuotesItsStatusAndReadsBack) {
  swashtune::SweepRow row;
  row.index = 17;
  row.values = {0.1, 1.0 / 3.0};
  row.status = "solver failed at t = 0.1 s: the step size collapsed (1e-20 s, \"spool\")";
  const std::string line = swashtune::sweep_csv_line(row);
  EXPECT_EQ(
      line,
      "17,0.1,0.3333333333333333,,,,,,,,,,,,,,,,,,,\"solver failed at t = 0.1 s: the step size collapsed (1e-20 s, "
      "\"\"spool\"\")\"\n");
  const swashtune::SweepTable table = swashtune::parse_sweep_table("index,a,b\n" + line, "t.csv");
  ASSERT_EQ(table.rows.size(), 1u);
  EXPECT_EQ(table.rows[0].index, 17u);
  EXPECT_EQ(swashtune::sweep_row_values(table.rows[0], 2, "t.csv"), row.values);
}

TEST(SweepRow, NumbersReadBackExactly) {
  for (const double v : {0.1, 1.0 / 3.0, 2.1e7, 1e-300, -4.5e-4, 6.02214076e23})
    EXPECT_EQ(std::stod(swashtune::exact_number(v)), v) << swashtune::exact_number(v);
  EXPECT_EQ(swashtune::exact_number(std::nan("")), "");  // a null is an empty field
  EXPECT_EQ(swashtune::exact_number(0.1), "0.1");        // shortest, not 0.10000000000000001
}

}  // namespace
