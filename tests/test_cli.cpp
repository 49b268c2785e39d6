// swashtune-cli as a user meets it: exit codes, messages naming file and
// line, the files `run` writes, and that a failed run leaves earlier results alone.
#include <fcntl.h>
#include <gtest/gtest.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

namespace fs = std::filesystem;

namespace {

struct Outcome {
  int exit_code;
  std::string out;
  std::string err;
};

std::string slurp(const fs::path& p) {
  std::ifstream in(p);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

class Cli : public ::testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::temp_directory_path() / ("swashtune-cli-test-" + std::to_string(::getpid()) + "-" +
                                        ::testing::UnitTest::GetInstance()->current_test_info()->name());
    fs::remove_all(dir_);
    fs::create_directories(dir_);
  }
  void TearDown() override { fs::remove_all(dir_); }

  fs::path write(const std::string& name, const std::string& text) {
    const fs::path p = dir_ / name;
    std::ofstream(p) << text;
    return p;
  }

  Outcome cli(const std::string& args) {
    const fs::path out = dir_ / "stdout.txt", err = dir_ / "stderr.txt";
    const std::string command = std::string(SWASHTUNE_CLI) + " " + args + " >" + out.string() + " 2>" + err.string();
    const int status = std::system(command.c_str());
    return Outcome{WIFEXITED(status) ? WEXITSTATUS(status) : -1, slurp(out), slurp(err)};
  }

  fs::path dir_;
};

const std::string demo = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/valve-slam.toml";

}  // namespace

TEST_F(Cli, RunWritesTraceAndSummaryWithTheInterfaceColumns) {
  const Outcome o = cli("run " + demo + " --out " + (dir_ / "out").string() + " --units si");
  ASSERT_EQ(o.exit_code, 0) << o.err;
  const std::string csv = slurp(dir_ / "out" / "trace.csv");
  // interfaces.md: these columns, exactly, first.
  const std::string header =
      "time_s,discharge_pressure_Pa,control_pressure_Pa,swash_angle_rad,swash_velocity_rad_s,spool_position_m,"
      "spool_velocity_m_s,pump_flow_m3_s,load_flow_m3_s,leakage_flow_m3_s,control_flow_m3_s,load_opening";
  EXPECT_EQ(csv.substr(0, header.size()), header);
  EXPECT_EQ(std::count(csv.begin(), csv.end(), '\n'), 1 + 2001);  // header + 1 s at 0.5 ms
  const std::string json = slurp(dir_ / "out" / "summary.json");
  for (const char* key : {"\"scenario\"", "\"peak_discharge_pressure_Pa\"", "\"final\"", "\"discharge_pressure_Pa\"",
                          "\"swash_angle_rad\"", "\"pump_flow_m3_s\"", "\"load_flow_m3_s\"", "\"events\"", "\"time_s\"",
                          "\"target\"", "\"overshoot_percent\"", "\"settling_time_s\"", "\"swash_response_time_s\"",
                          // Event metrics v2
                          "\"undershoot_percent\"", "\"swash_travel_time_s\"", "\"note\"", "\"solver\"", "\"steps\"",
                          "\"rejected_steps\"", "\"rhs_evaluations\"", "\"wall_time_s\""})
    EXPECT_NE(json.find(key), std::string::npos) << key;
  // The reopening is a fall: undershoot, and a null overshoot.
  EXPECT_NE(json.find("\"overshoot_percent\": null, \"undershoot_percent\": "), std::string::npos) << json;
  EXPECT_NE(o.out.find("undershoot"), std::string::npos) << o.out;
  EXPECT_NE(o.out.find("Caution"), std::string::npos);  // results a person could act on
}

// A hunting pump: no settling time, and the summary says why.
TEST_F(Cli, RunOfAHuntingPumpSaysItDoesNotSettle) {
  const std::string hunting = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/hunting-oversized-damping-orifice.toml";
  const Outcome o = cli("run " + hunting + " --out " + (dir_ / "h").string());
  ASSERT_EQ(o.exit_code, 0) << o.err;
  EXPECT_NE(o.out.find("does not settle: hunting"), std::string::npos) << o.out;
  EXPECT_EQ(o.out.find("settling 0.0 ms"), std::string::npos) << o.out;
  const std::string json = slurp(dir_ / "h" / "summary.json");
  EXPECT_NE(json.find("\"settling_time_s\": null"), std::string::npos);
  EXPECT_NE(json.find("\"note\": \"does not settle: hunting\""), std::string::npos);
}

TEST_F(Cli, MetricAndUsUnitsRenameAndConvertColumns) {
  ASSERT_EQ(cli("run " + demo + " --out " + (dir_ / "m").string()).exit_code, 0);
  ASSERT_EQ(cli("run " + demo + " --out " + (dir_ / "u").string() + " --units us").exit_code, 0);
  const std::string metric = slurp(dir_ / "m" / "trace.csv");
  const std::string us = slurp(dir_ / "u" / "trace.csv");
  EXPECT_EQ(metric.rfind("time_s,discharge_pressure_bar,control_pressure_bar,swash_angle_deg,swash_velocity_deg_s,"
                         "spool_position_mm,spool_velocity_mm_s,pump_flow_L_min",
                         0),
            0u);
  EXPECT_EQ(us.rfind("time_s,discharge_pressure_psi,control_pressure_psi,swash_angle_deg,swash_velocity_deg_s,"
                     "spool_position_in,spool_velocity_in_s,pump_flow_gpm",
                     0),
            0u);
  // First data row: 17 deg full stroke in both; pressure bar -> psi by NIST SP 811.
  auto row = [](const std::string& csv, int column) {
    std::istringstream in(csv.substr(csv.find('\n') + 1));
    std::string cell;
    for (int i = 0; i <= column; ++i) std::getline(in, cell, ',');
    return std::stod(cell);
  };
  EXPECT_NEAR(row(metric, 3), 17.0, 1e-6);
  EXPECT_NEAR(row(us, 1), row(metric, 1) * 1e5 / 6894.757293168, 1e-4);
}

TEST_F(Cli, BadScenarioFilesExitTwoNamingFileAndLine) {
  struct Case {
    const char* name;
    const char* text;
    const char* line;  // expected "file:line" suffix
    const char* what;  // a word the message must contain
  };
  const Case cases[] = {
      {"unknown-key.toml", "[scenario]\nduration = \"1 s\"\n\n[line]\nvolum = \"1 L\"\n", ":5", "volum"},
      {"wrong-unit.toml", "[compensator]\nsetting = \"210 kg\"\n", ":2", "pressure"},
      {"negative-volume.toml", "[line]\n\nvolume = -1e-3\n", ":3", "line.volume"},
      {"malformed.toml", "[pump]\ndisplacement = = 3\n", ":2", "TOML"},
      {"bad-opening.toml", "[load]\nopening = 1.5\n", ":2", "load.opening"},
  };
  for (const Case& c : cases) {
    const fs::path file = write(c.name, c.text);
    const Outcome o = cli("run " + file.string() + " --out " + (dir_ / "never").string());
    EXPECT_EQ(o.exit_code, 2) << c.name;
    EXPECT_NE(o.err.find(std::string(c.name) + c.line), std::string::npos) << c.name << ": " << o.err;
    EXPECT_NE(o.err.find(c.what), std::string::npos) << c.name << ": " << o.err;
    EXPECT_FALSE(fs::exists(dir_ / "never" / "trace.csv"));
  }
  const Outcome missing = cli("check " + (dir_ / "nowhere.toml").string());
  EXPECT_EQ(missing.exit_code, 2);
  EXPECT_NE(missing.err.find("nowhere.toml"), std::string::npos);
}

TEST_F(Cli, BadCommandLinesExitTwo) {
  EXPECT_EQ(cli("").exit_code, 2);
  EXPECT_EQ(cli("fly " + demo).exit_code, 2);
  EXPECT_EQ(cli("run " + demo).exit_code, 2);  // --out missing
  const Outcome units = cli("run " + demo + " --out " + (dir_ / "x").string() + " --units furlongs");
  EXPECT_EQ(units.exit_code, 2);
  EXPECT_NE(units.err.find("--units"), std::string::npos);
  EXPECT_EQ(cli("run --help").exit_code, 0);
  EXPECT_EQ(cli("check --help").exit_code, 0);
}

TEST_F(Cli, FailedRunLeavesEarlierResultsIntact) {
  const fs::path out = dir_ / "out";
  ASSERT_EQ(cli("run " + demo + " --out " + out.string()).exit_code, 0);
  const std::string before = slurp(out / "trace.csv");
  const fs::path bad = write("bad.toml", "[line]\nvolume = \"-2 L\"\n");
  EXPECT_EQ(cli("run " + bad.string() + " --out " + out.string()).exit_code, 2);
  EXPECT_EQ(slurp(out / "trace.csv"), before);
  for (const auto& entry : fs::directory_iterator(out))  // no temporary files left behind
    EXPECT_TRUE(entry.path().filename() == "trace.csv" || entry.path().filename() == "summary.json") << entry.path();
}

TEST_F(Cli, CheckAcceptsDemosAndPrintsResolvedJson) {
  const Outcome o = cli("check " + demo + " --json");
  ASSERT_EQ(o.exit_code, 0) << o.err;
  EXPECT_NE(o.out.find("\"compensator.setting\": 21000000"), std::string::npos) << o.out;
  EXPECT_EQ(cli("check " + std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/setting-under-flow.toml").exit_code, 0);
}

// The parameter table in resources/ is generated from the registry; it must
// not drift from it.
TEST_F(Cli, ParameterTableInResourcesIsCurrent) {
  const Outcome o = cli("parameters --markdown");
  ASSERT_EQ(o.exit_code, 0);
  EXPECT_EQ(o.out, slurp(fs::path(SWASHTUNE_SOURCE_DIR) / "resources" / "parameters.md"))
      << "regenerate with: swashtune-cli parameters --markdown > resources/parameters.md";
  EXPECT_NE(o.out.find("`compensator.setting`"), std::string::npos);
}

TEST_F(Cli, StabilityAndSteadyPrintTheInterfaceKeys) {
  const Outcome st = cli("stability " + demo + " --opening 0 --json");
  ASSERT_EQ(st.exit_code, 0) << st.err;
  for (const char* key :
       {"\"operating_point\"", "\"load_opening\"", "\"discharge_pressure_Pa\"", "\"swash_angle_rad\"",
        "\"spool_position_m\"", "\"eigenvalues\"", "\"re\"", "\"im\"", "\"dominant\"", "\"frequency_Hz\"",
        "\"damping_ratio\"", "\"loop\"", "\"gain_margin_dB\"", "\"phase_margin_deg\"", "\"crossover_frequency_Hz\"",
        "\"stable\"",
        // Stability v2
        "\"break\": \"swash angle in the pump flow\"", "\"phase_crossover_frequency_Hz\"", "\"modulus_margin\"",
        "\"modulus_margin_frequency_Hz\"", "\"gain_crossovers\"", "\"phase_crossovers\"",
        "\"open_loop_unstable_poles\"", "\"closed_loop_unstable_poles\"", "\"applies\": true", "\"note\""})
    EXPECT_NE(st.out.find(key), std::string::npos) << key;
  const Outcome sd = cli("steady " + demo + " --points 5 --json");
  ASSERT_EQ(sd.exit_code, 0) << sd.err;
  for (const char* key : {"\"deadhead_pressure_Pa\"", "\"cut_in_pressure_Pa\"", "\"points\"", "\"pump_flow_m3_s\"",
                          "\"load_flow_m3_s\"", "\"swash_angle_rad\""})
    EXPECT_NE(sd.out.find(key), std::string::npos) << key;
  const Outcome table = cli("stability " + demo + " --opening 0");
  EXPECT_NE(table.out.find("gain margin"), std::string::npos);
  EXPECT_NE(table.out.find("times more gain"), std::string::npos) << table.out;
  EXPECT_NE(table.out.find("Caution"), std::string::npos);
}

// A sticky spool: the operating-point analysis says a linear model cannot
// describe stick-slip and points at the run's oscillation analysis.
TEST_F(Cli, StabilityOfAStickySpoolWarns) {
  const std::string sticky = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/sticky-spool.toml";
  const Outcome table = cli("stability " + sticky + " --opening 0");
  ASSERT_EQ(table.exit_code, 0) << table.err;
  EXPECT_NE(table.out.find("cannot describe stick-slip"), std::string::npos) << table.out;
  EXPECT_NE(table.out.find("do NOT apply"), std::string::npos) << table.out;
  // ... and shows what a run of the scenario does instead.
  EXPECT_NE(table.out.find("better guide"), std::string::npos) << table.out;
  EXPECT_NE(table.out.find("sustained oscillation"), std::string::npos) << table.out;
  const Outcome json = cli("stability " + sticky + " --opening 0 --json");
  EXPECT_NE(json.out.find("\"applies\": false"), std::string::npos);
  EXPECT_NE(json.out.find("stick-slip"), std::string::npos);
}

TEST_F(Cli, StabilityRefusesBadArgumentsWithExitTwo) {
  EXPECT_EQ(cli("stability " + demo + " --opening 1.5").exit_code, 2);
  EXPECT_EQ(cli("stability " + demo + " --opening half").exit_code, 2);
  const Outcome map = cli("stability " + demo + " --map line.volume=1:2:3 nothing=0:1:2");
  EXPECT_EQ(map.exit_code, 2);
  EXPECT_NE(map.err.find("nothing"), std::string::npos) << map.err;
  EXPECT_EQ(cli("steady " + demo + " --points 1").exit_code, 2);
}

TEST_F(Cli, StabilityMapAndBodeFile) {
  const fs::path bode = dir_ / "bode.csv";
  ASSERT_EQ(cli("stability " + demo + " --opening 0 --bode " + bode.string()).exit_code, 0);
  const std::string csv = slurp(bode);
  EXPECT_EQ(csv.rfind("frequency_Hz,magnitude_dB,phase_deg\n", 0), 0u);
  EXPECT_EQ(std::count(csv.begin(), csv.end(), '\n'), 602);
  const Outcome map = cli("stability " + demo + " --map \"load.opening=0:0.1:3\" \"line.volume=0.5 L:1 L:2\" --json");
  ASSERT_EQ(map.exit_code, 0) << map.err;
  EXPECT_EQ(std::count(map.out.begin(), map.out.end(), '{') - 3, 6);  // 3 x 2 points, besides the outer and axes
}

TEST_F(Cli, FieldAndFitCommands) {
  const std::string field = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/field/";
  const Outcome hunting = cli("field " + field + "line2-pusher-hunting.csv --json");
  ASSERT_EQ(hunting.exit_code, 0) << hunting.err;
  EXPECT_NE(hunting.out.find("\"kind\": \"sustained oscillation\""), std::string::npos) << hunting.out;
  const Outcome bad = cli("field " + std::string(SWASHTUNE_SOURCE_DIR) + "/tests/data/field/bad_text_in_number.csv");
  EXPECT_EQ(bad.exit_code, 2);
  EXPECT_NE(bad.err.find("bad_text_in_number.csv:"), std::string::npos) << bad.err;
  const fs::path fitted = dir_ / "fitted.toml";
  const Outcome fit = cli("fit " + std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/valve-slam.toml --trace " + field +
                          "log-turner-slam.csv --free faults.entrained_air --json --out " + fitted.string());
  ASSERT_EQ(fit.exit_code, 0) << fit.err;
  EXPECT_NE(fit.out.find("\"key\": \"faults.entrained_air\""), std::string::npos);
  EXPECT_NE(slurp(fitted).find("entrained_air"), std::string::npos);
  EXPECT_NE(fit.out.find("\"verdict\": "), std::string::npos) << fit.out;
  EXPECT_NE(fit.out.find("\"stop\": "), std::string::npos) << fit.out;
  // The fitted pressure over the recording, and a plain verdict on another machine.
  const fs::path over = dir_ / "fitted.csv";
  const std::string fit_data = std::string(SWASHTUNE_SOURCE_DIR) + "/tests/data/fit/";
  const Outcome other = cli("fit " + fit_data + "slam.toml --trace " + fit_data +
                            "slam-other-machine.csv --free line.volume --starts 1 --fitted-trace " + over.string());
  ASSERT_EQ(other.exit_code, 0) << other.err;
  EXPECT_NE(other.out.find("verdict: the model does not fit this machine"), std::string::npos) << other.out;
  EXPECT_NE(other.out.find("noise of the recording"), std::string::npos) << other.out;
  const std::string over_csv = slurp(over);
  EXPECT_EQ(over_csv.rfind("time_s,recorded_Pa,fitted_Pa,residual_Pa\n", 0), 0u);
  EXPECT_EQ(std::count(over_csv.begin(), over_csv.end(), '\n'), 482);  // 481 samples inside the run
  EXPECT_EQ(cli("fit " + demo + " --trace " + field + "log-turner-slam.csv --free line.volume --starts 0").exit_code, 2);
  EXPECT_EQ(cli("fit " + demo + " --trace " + field + "log-turner-slam.csv --free no.such").exit_code, 2);
}

// Every report follows --units: stability's operating point, the map's axes
// and fit's values are in the chosen system's units (NIST SP 811 factors:
// 1 psi = 6894.757 Pa, 1 in = 25.4 mm, 1 in^3 = 16.387064 cm^3).
TEST_F(Cli, ReportsUseTheChosenUnits) {
  const Outcome us = cli("stability " + demo + " --opening 0 --units us");
  ASSERT_EQ(us.exit_code, 0) << us.err;
  EXPECT_NE(us.out.find(" psi"), std::string::npos) << us.out;
  EXPECT_NE(us.out.find(" in ("), std::string::npos) << us.out;  // spool position in inches
  EXPECT_EQ(us.out.find(" mm"), std::string::npos) << us.out;
  EXPECT_EQ(us.out.find(" bar"), std::string::npos) << us.out;

  const Outcome map =
      cli("stability " + demo + " --map \"line.volume=0.5 L:2 L:2\" \"compensator.setting=150 bar:200 bar:2\"");
  ASSERT_EQ(map.exit_code, 0) << map.err;
  EXPECT_NE(map.out.find("line.volume [L]"), std::string::npos) << map.out;
  EXPECT_NE(map.out.find("compensator.setting [bar]"), std::string::npos) << map.out;
  EXPECT_NE(map.out.find("\n0.5 "), std::string::npos) << map.out;  // 0.5 L, not 0.0005 m^3
  const Outcome map_us = cli("stability " + demo +
                             " --units us --map \"line.volume=0.5 L:2 L:2\" \"compensator.setting=150 bar:200 bar:2\"");
  ASSERT_EQ(map_us.exit_code, 0) << map_us.err;
  EXPECT_NE(map_us.out.find("compensator.setting [psi]"), std::string::npos) << map_us.out;
  EXPECT_NE(map_us.out.find("\n30.5119 "), std::string::npos) << map_us.out;  // 0.5 L = 30.5119 in^3

  const std::string field = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/field/";
  const Outcome fit =
      cli("fit " + demo + " --trace " + field + "log-turner-slam.csv --free faults.entrained_air,line.volume");
  ASSERT_EQ(fit.exit_code, 0) << fit.err;
  EXPECT_NE(fit.out.find("faults.entrained_air             0 % -> "), std::string::npos) << fit.out;  // a share in %
  EXPECT_NE(fit.out.find("line.volume                      1 L -> "), std::string::npos) << fit.out;
  EXPECT_EQ(fit.out.find("m^3"), std::string::npos) << fit.out;
  const Outcome recorded = cli("field " + field + "line2-pusher-hunting.csv --units us");
  ASSERT_EQ(recorded.exit_code, 0) << recorded.err;
  EXPECT_NE(recorded.out.find("psi peak to peak"), std::string::npos) << recorded.out;
  EXPECT_EQ(cli("field " + field + "line2-pusher-hunting.csv --units furlongs").exit_code, 2);
}

// One version, the project's, printed the same way by every program.
TEST_F(Cli, EveryProgramPrintsTheOneVersion) {
  const Outcome cli_version = cli("--version");
  EXPECT_EQ(cli_version.exit_code, 0) << cli_version.err;
  EXPECT_EQ(cli_version.out, std::string("swashtune-cli (Swashtune) ") + SWASHTUNE_VERSION + "\n");
  const fs::path out = dir_ / "bench.txt";
  const int status = std::system((std::string(SWASHTUNE_BENCH) + " --version >" + out.string()).c_str());
  EXPECT_EQ(WEXITSTATUS(status), 0);
  EXPECT_EQ(slurp(out), std::string("swashtune-bench (Swashtune) ") + SWASHTUNE_VERSION + "\n");
}

// Saved numbers are the shortest text that reads back exactly: no float
// noise in the trace or the summary.
TEST_F(Cli, ResultFilesCarryNoFloatNoise) {
  const fs::path scenario =
      write("noise.toml",
            "[scenario]\nduration = \"0.1 s\"\nsample_interval = \"0.35 ms\"\n"
            "[line]\nvolume = \"1.125 L\"\n[[events]]\nat = 0.03\nset = \"load.opening\"\nto = 0.0\n");
  ASSERT_EQ(cli("run " + scenario.string() + " --out " + (dir_ / "o").string() + " --units si").exit_code, 0);
  const std::string csv = slurp(dir_ / "o" / "trace.csv");
  const std::string summary = slurp(dir_ / "o" / "summary.json");
  EXPECT_NE(csv.find("\n0.00035,"), std::string::npos);  // the second sample's time as written
  for (const std::string& text : {csv, summary}) {
    EXPECT_EQ(text.find("00000000"), std::string::npos);
    EXPECT_EQ(text.find("99999999"), std::string::npos);
  }
  // Sweep values are the decimals of the grid (1.125 L, not 0.0011250000000000001 m^3).
  ASSERT_EQ(cli("sweep " + scenario.string() + " --vary \"line.volume=1 L:1.25 L:3\" --out " +
                (dir_ / "sweep.csv").string())
                .exit_code,
            0);
  const std::string sweep = slurp(dir_ / "sweep.csv");
  EXPECT_NE(sweep.find("\n1,0.001125,"), std::string::npos) << sweep;
  EXPECT_NE(sweep.find("\n2,0.00125,"), std::string::npos) << sweep;
  const Outcome check = cli("check " + scenario.string() + " --json");
  ASSERT_EQ(check.exit_code, 0) << check.err;
  EXPECT_NE(check.out.find("\"line.volume\": 0.001125"), std::string::npos) << check.out;
}

namespace {

// Runs `cli run SCENARIO --out OUT --units si` and returns its peak resident
// size in MB (ru_maxrss), or a negative number when it did not exit 0.
double peak_resident_mb(const std::string& scenario, const std::string& out) {
  const pid_t child = ::fork();
  if (child < 0) return -1.0;
  if (child == 0) {
    const int devnull = ::open("/dev/null", O_WRONLY);
    ::dup2(devnull, 1);
#ifdef SWASHTUNE_SANITIZED
    // ASan holds freed blocks in a quarantine (256 MB by default) to catch
    // use after free; a small one keeps that check without counting as growth.
    ::setenv("ASAN_OPTIONS", "quarantine_size_mb=16:detect_leaks=0", 1);
#endif
    ::execl(SWASHTUNE_CLI, SWASHTUNE_CLI, "run", scenario.c_str(), "--out", out.c_str(), "--units", "si",
            static_cast<char*>(nullptr));
    ::_exit(127);
  }
  int status = 0;
  rusage usage{};
  if (::wait4(child, &status, 0, &usage) != child || !WIFEXITED(status) || WEXITSTATUS(status) != 0) return -1.0;
  return usage.ru_maxrss / 1024.0;  // ru_maxrss is in kB on Linux
}

}  // namespace

// Long runs keep memory bounded: ten hours of simulated time sampled every
// 0.1 s (360 001 rows, 44 MB of CSV) stream to disk while the in-memory trace
// is thinned. Measured: 42 MB peak resident size; the ceiling is 64 MB
// (before streaming the same run needed 132 MB). Under the sanitizers the
// runtime and its shadow memory add a fixed part, measured here on a 1 s run,
// and redzones and allocator metadata about double each heap block: the
// ceiling is then that fixed part plus twice 64 MB (measured there: 23.5 MB
// for a 1 s run, 93 MB for the ten hours).
TEST_F(Cli, TenHourRunStaysUnderAMemoryCeiling) {
  const fs::path scenario = write("ten-hours.toml",
                                  "[scenario]\nduration = \"10 h\"\nsample_interval = \"0.1 s\"\n"
                                  "[solver]\nmax_step = \"1 s\"\n"
                                  "[[events]]\nat = \"1 s\"\nset = \"load.opening\"\nto = 0.0\nramp = \"5 ms\"\n"
                                  "[[events]]\nat = \"3600 s\"\nset = \"load.opening\"\nto = 1.0\nramp = \"5 ms\"\n");
  const std::string out = (dir_ / "long").string();
  double ceiling_mb = 64.0;
#ifdef SWASHTUNE_SANITIZED
  // First, while this process is small: a child's ru_maxrss counts the
  // parent's pages it started with (Linux keeps the high-water mark across exec).
  const double fixed_mb = peak_resident_mb(demo, (dir_ / "short").string());
  ASSERT_GT(fixed_mb, 0.0);
  ceiling_mb = fixed_mb + 2 * 64.0;
  std::printf("sanitizer build: a 1 s run peaks at %.1f MB\n", fixed_mb);
#endif
  const double peak_mb = peak_resident_mb(scenario.string(), out);
  ASSERT_GT(peak_mb, 0.0) << "the run failed";
  const std::string csv = slurp(fs::path(out) / "trace.csv");
  EXPECT_EQ(std::count(csv.begin(), csv.end(), '\n'), 1 + 360001);
  std::printf("10-hour run: peak resident size %.1f MB (ceiling %.1f MB)\n", peak_mb, ceiling_mb);
  EXPECT_LT(peak_mb, ceiling_mb);
}

// A legal but implausible value: a warning on stderr naming file:line, key,
// the value as read and what was probably meant; exit 0, or 2 with --strict.
TEST_F(Cli, ImplausibleValuesWarnAndStrictRefuses) {
  const fs::path file = write("psi.toml", "[compensator]\nsetting = 3000\n");
  const Outcome plain = cli("check " + file.string());
  EXPECT_EQ(plain.exit_code, 0);
  EXPECT_NE(plain.err.find("warning: " + file.string() + ":2: compensator.setting = 3000: 3000 Pa = 0.03 bar"),
            std::string::npos)
      << plain.err;
  EXPECT_NE(plain.err.find("did you mean 3000 psi = 206.8 bar?"), std::string::npos) << plain.err;
  EXPECT_EQ(plain.out.find("did you mean"), std::string::npos);  // warnings go to stderr only
  for (const char* command : {"check", "stability", "steady"}) {
    const Outcome strict = cli(std::string(command) + " --strict " + file.string());
    EXPECT_EQ(strict.exit_code, 2) << command;
    EXPECT_NE(strict.err.find("--strict"), std::string::npos) << strict.err;
  }
  const Outcome run = cli("run --strict " + file.string() + " --out " + (dir_ / "r").string());
  EXPECT_EQ(run.exit_code, 2);
  EXPECT_FALSE(fs::exists(dir_ / "r" / "summary.json"));
  EXPECT_EQ(cli("check --strict " + demo).exit_code, 0);
}

// A run that peaks above the line's rated pressure prints a caution with the
// safety words and records it in summary.json.
TEST_F(Cli, PeakAboveTheRatedPressureIsCautioned) {
  const fs::path file = write("rated.toml",
                              "[line]\nrated_pressure = \"220 bar\"\n\n[[events]]\nat = 0.1\n"
                              "set = \"load.opening\"\nto = 0\nramp = \"5 ms\"\n");
  const Outcome o = cli("run " + file.string() + " --out " + (dir_ / "r").string());
  ASSERT_EQ(o.exit_code, 0) << o.err;
  EXPECT_NE(o.out.find("above the line's rated pressure of 220.0 bar"), std::string::npos) << o.out;
  EXPECT_NE(o.out.find("lock out"), std::string::npos);
  const std::string json = slurp(dir_ / "r" / "summary.json");
  EXPECT_NE(json.find("\"cautions\": [\n    \"Caution: the simulated discharge pressure peaks at"), std::string::npos)
      << json;
}
