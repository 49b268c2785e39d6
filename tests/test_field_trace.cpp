// Reading recorded pressure and flow traces from CSV (core/src/field_trace.cpp).

#include <gtest/gtest.h>

#include <cmath>
#include <cstddef>
#include <random>
#include <string>
#include <vector>

#include "swashtune/atomic_file.hpp"
#include "swashtune/field_trace.hpp"

namespace {

using namespace swashtune;

// NIST SP 811 (2008), appendix B: conversion factors to SI, written out here
// rather than taken from core so that a wrong factor in core is caught.
constexpr double kPsi = 6894.757293168;        // Pa per lbf/in^2
constexpr double kBar = 1e5;                   // Pa
constexpr double kMPa = 1e6;                   // Pa
constexpr double kLitrePerMinute = 1e-3 / 60;  // m^3/s
constexpr double kGpm = 3.785411784e-3 / 60;   // m^3/s, US gallon (231 in^3) per minute

const std::string kDataDir = std::string(SWASHTUNE_SOURCE_DIR) + "/tests/data/field/";

void expect_relative(double actual, double expected, const std::string& what) {
  EXPECT_NEAR(actual, expected, 1e-14 * std::abs(expected)) << what;
}

// The message of the FieldTraceError that parsing `text` (as "field.csv")
// throws, or a failure when it throws none.
std::string error_of(const std::string& text, const FieldTraceOptions& options = {}) {
  try {
    parse_field_trace(text, "field.csv", options);
  } catch (const FieldTraceError& e) {
    return e.what();
  }
  ADD_FAILURE() << "no FieldTraceError for:\n" << text;
  return {};
}

// The error names the file and the line, and says what was wrong.
void expect_error(const std::string& text, int line, const std::string& says, const FieldTraceOptions& options = {}) {
  const std::string message = error_of(text, options);
  const std::string where = "field.csv:" + std::to_string(line) + ": ";
  EXPECT_EQ(message.rfind(where, 0), 0u) << "expected it to start with \"" << where << "\": " << message;
  EXPECT_NE(message.find(says), std::string::npos) << "expected \"" << says << "\" in: " << message;
}

// ---------------------------------------------------------------- sample files

TEST(FieldTrace, CommaFileWithUnderscoreUnits) {
  const std::string path = kDataDir + "bench_step_comma.csv";
  const FieldTrace t = read_field_trace(path);
  EXPECT_EQ(t.source, path);
  EXPECT_EQ(t.time_header, "time_s");
  EXPECT_EQ(t.pressure_header, "pressure_bar");
  EXPECT_EQ(t.flow_header, "flow_L_min");
  // Comment and blank lines are skipped; time is kept as recorded (starts at 1 s).
  const std::vector<double> time = {1.000, 1.005, 1.010, 1.015, 1.020, 1.025};
  const std::vector<double> bar = {180.0, 180.4, 181.1, 195.3, 231.7, 212.5};
  const std::vector<double> litres_per_minute = {42.0, 41.8, 41.5, 20.2, 4.1, 3.9};
  ASSERT_EQ(t.time.size(), time.size());
  ASSERT_EQ(t.pressure.size(), time.size());
  ASSERT_EQ(t.flow.size(), time.size());
  for (std::size_t i = 0; i < time.size(); ++i) {
    EXPECT_DOUBLE_EQ(t.time[i], time[i]);
    expect_relative(t.pressure[i], bar[i] * kBar, "pressure row " + std::to_string(i));
    expect_relative(t.flow[i], litres_per_minute[i] * kLitrePerMinute, "flow row " + std::to_string(i));
  }
}

TEST(FieldTrace, SemicolonFileWithDecimalCommasBracketUnitsAndCrLf) {
  const FieldTrace t = read_field_trace(kDataDir + "logger_decimal_comma.csv");
  EXPECT_EQ(t.time_header, "t [ms]");
  EXPECT_EQ(t.pressure_header, "p (psi)");
  EXPECT_TRUE(t.flow.empty());
  EXPECT_TRUE(t.flow_header.empty());
  const std::vector<double> ms = {0, 2.5, 5, 7.5, 10};
  const std::vector<double> psi = {2610.5, 2614, 2702.25, 2950, 3012.75};
  ASSERT_EQ(t.time.size(), ms.size());
  ASSERT_EQ(t.pressure.size(), ms.size());
  for (std::size_t i = 0; i < ms.size(); ++i) {
    expect_relative(t.time[i], ms[i] * 1e-3, "time row " + std::to_string(i));
    expect_relative(t.pressure[i], psi[i] * kPsi, "pressure row " + std::to_string(i));
  }
  // One value worked out separately: 3012.75 psi = 20 772 180.035 Pa.
  EXPECT_NEAR(t.pressure[4], 20772180.035, 0.001);
}

TEST(FieldTrace, TabFileWithColumnsByNumberAndUnitOptions) {
  const std::string path = kDataDir + "channels_tab.tsv";
  // The generic channel names say nothing; the header alone is not enough.
  EXPECT_THROW(read_field_trace(path), FieldTraceError);

  FieldTraceOptions options;
  options.time_column = "3";
  options.pressure_column = "2";
  options.flow_column = "4";
  options.time_unit = "ms";
  options.pressure_unit = "MPa";
  options.flow_unit = "gpm";
  const FieldTrace t = read_field_trace(path, options);
  EXPECT_EQ(t.time_header, "ch_b");
  EXPECT_EQ(t.pressure_header, "ch_a");
  EXPECT_EQ(t.flow_header, "ch_c");
  const std::vector<double> ms = {0, 4, 8, 12};
  const std::vector<double> mpa = {17.25, 17.31, 18.02, 19.40};
  const std::vector<double> gpm = {9.5, 9.4, 6.1, 2.0};
  ASSERT_EQ(t.time.size(), 4u);
  ASSERT_EQ(t.flow.size(), 4u);
  for (std::size_t i = 0; i < 4; ++i) {
    expect_relative(t.time[i], ms[i] * 1e-3, "time");
    expect_relative(t.pressure[i], mpa[i] * kMPa, "pressure");
    expect_relative(t.flow[i], gpm[i] * kGpm, "flow");
  }
}

TEST(FieldTrace, OptionsOverrideTheHeader) {
  FieldTraceOptions options;
  options.time_column = "  TIME_S ";       // by name: case and spaces ignored
  options.pressure_column = "flow_L_min";  // another column than the header suggests
  options.pressure_unit = "psi";           // replaces the header's "L/min"
  options.flow_column = "none";
  const FieldTrace t = read_field_trace(kDataDir + "bench_step_comma.csv", options);
  EXPECT_EQ(t.time_header, "time_s");
  EXPECT_EQ(t.pressure_header, "flow_L_min");
  EXPECT_TRUE(t.flow.empty());
  ASSERT_EQ(t.pressure.size(), 6u);
  expect_relative(t.pressure[0], 42.0 * kPsi, "42 psi");

  // A unit option alone rescales the detected column.
  FieldTraceOptions kpa;
  kpa.pressure_unit = "kPa";
  const FieldTrace k = read_field_trace(kDataDir + "bench_step_comma.csv", kpa);
  EXPECT_EQ(k.pressure_header, "pressure_bar");
  expect_relative(k.pressure[0], 180.0e3, "180 kPa");

  // A column option matches the name without its unit, too.
  FieldTraceOptions base;
  base.pressure_column = "P";
  const FieldTrace b = parse_field_trace("t [s],p_pilot [bar],p [psi]\n0,1,2\n1,3,4\n", "field.csv", base);
  EXPECT_EQ(b.pressure_header, "p [psi]");
  expect_relative(b.pressure[1], 4 * kPsi, "p [psi]");
}

// ---------------------------------------------------------------- header rules

struct HeaderCase {
  const char* header;                                // a time, a pressure and a flow column, comma separated
  double time_factor, pressure_factor, flow_factor;  // to SI
};

TEST(FieldTrace, HeaderNamesAndUnits) {
  const HeaderCase cases[] = {
      {"t [ms],p [bar],Q [L/min]", 1e-3, kBar, kLitrePerMinute},
      {"Time (s),Pressure (psi),Flow (gpm)", 1, kPsi, kGpm},
      {"time_s,discharge_pressure_bar,load_flow_L_min", 1, kBar, kLitrePerMinute},
      {"t_ms,p_psi,flow_gpm", 1e-3, kPsi, kGpm},
      {"time_s,pressure_Pa,Q_gpm", 1, 1, kGpm},
      {"time_s,p_bar,pump_flow_L_min", 1, kBar, kLitrePerMinute},
      {"time_s,p_MPa,flow_m3_s", 1, kMPa, 1},
      {"time_us,p_kPa,flow_cm3_s", 1e-6, 1e3, 1e-6},
      {"elapsed_time_s,pump_pressure_psig,flow_L_per_min", 1, kPsi, kLitrePerMinute},
      {"\"Time (s)\",\"Pressure, outlet [bar]\",\"q [m^3/s]\"", 1, kBar, 1},
      {"TIME [ms],P [bar],FLOW [lpm]", 1e-3, kBar, kLitrePerMinute},
      {"t/ms,p/bar,Q/(L/min)", 1e-3, kBar, kLitrePerMinute},
  };
  for (const HeaderCase& c : cases) {
    SCOPED_TRACE(c.header);
    const std::string text = std::string(c.header) + "\n0,2,3\n0.5,4,6\n";
    FieldTrace t;
    ASSERT_NO_THROW(t = parse_field_trace(text, "field.csv"));
    ASSERT_EQ(t.flow.size(), 2u);
    expect_relative(t.time[1], 0.5 * c.time_factor, "time");
    expect_relative(t.pressure[1], 4 * c.pressure_factor, "pressure");
    expect_relative(t.flow[1], 6 * c.flow_factor, "flow");
  }
  expect_error("time,p [bar],flow [L/min]\n0,2,3\n0.5,4,6\n", 1,
               "time column \"time\" has no unit; give one in the header, e.g. \"time [s]\", or with --time-unit");
}

TEST(FieldTrace, PressureWithoutUnitIsAnErrorNotPascal) {
  expect_error("time_s,p\n0,1\n1,2\n", 1,
               "pressure column \"p\" has no unit; give one in the header, e.g. \"p [bar]\", or with "
               "--pressure-unit");
  // The unit option is enough.
  FieldTraceOptions options;
  options.pressure_unit = "bar";
  EXPECT_DOUBLE_EQ(parse_field_trace("time_s,p\n0,1\n1,2\n", "field.csv", options).pressure[1], 2 * kBar);
}

TEST(FieldTrace, UnitThatFitsDecidesBetweenSimilarNames) {
  // "T [degC]" is also "t" when case is ignored; its unit is not a time.
  const FieldTrace t = parse_field_trace("T [degC],t [s],p [bar]\n40,0,1\n41,1,2\n", "field.csv");
  EXPECT_EQ(t.time_header, "t [s]");
  // Names that are the quantity beat names that merely contain it.
  const FieldTrace u = parse_field_trace("time_s,p_pilot_bar,p_bar\n0,1,2\n1,3,4\n", "field.csv");
  EXPECT_EQ(u.pressure_header, "p_bar");
  // A name that says which pressure it is decides; the other is left unused.
  const FieldTrace v = parse_field_trace("time_s,p_in_bar,p_out_bar\n0,1,2\n1,3,4\n", "field.csv");
  EXPECT_EQ(v.pressure_header, "p_out_bar");
  EXPECT_EQ(v.report.layout.unused_columns, std::vector<std::string>{"p_in_bar"});
  // Two equally good candidates: the user must choose, and is told how.
  expect_error("time_s,p1_bar,p2_bar\n0,1,2\n1,3,4\n", 1,
               "several columns could be the pump outlet pressure: \"p1_bar\", \"p2_bar\"; choose one with "
               "--pressure-column");
}

TEST(FieldTrace, FlowIsOptionalAndItsColumnCanBeIgnored) {
  const FieldTrace t = parse_field_trace("time_s,p_bar,valve_mm\n0,1,2\n1,3,4\n", "field.csv");
  EXPECT_TRUE(t.flow.empty());
  // A detected flow column without a unit is an error, unless ignored.
  expect_error("time_s,p_bar,flow\n0,1,2\n1,3,4\n", 1, "flow column \"flow\" has no unit");
  FieldTraceOptions none;
  none.flow_column = "None";
  EXPECT_TRUE(parse_field_trace("time_s,p_bar,flow\n0,1,2\n1,3,4\n", "field.csv", none).flow.empty());
}

TEST(FieldTrace, TimeMayStartAnywhereAndQuotedFieldsAreRead) {
  const FieldTrace t = parse_field_trace("\xEF\xBB\xBF\"t [s]\";\"p [bar]\"\n\"-0,5\";\"1,25\"\n0;2\n", "field.csv");
  ASSERT_EQ(t.time.size(), 2u);
  EXPECT_DOUBLE_EQ(t.time[0], -0.5);
  EXPECT_DOUBLE_EQ(t.pressure[0], 1.25 * kBar);
}

// ---------------------------------------------------------------- errors

// Rows 2..`rows` hold increasing times in ms at 0.5 ms spacing, ending at
// `last_ms` on line `rows`.
std::string rising_rows(int rows, double last_ms) {
  std::string text = "time [ms],pressure [bar]\n";
  for (int line = 2; line <= rows; ++line) text += std::to_string(last_ms - 0.5 * (rows - line)) + ",150.0\n";
  return text;
}

TEST(FieldTrace, MessagesAsSpecified) {
  std::string text = rising_rows(16, 7.0) + "7.5,12.3x\n8.0,150.0\n";
  EXPECT_EQ(error_of(text), "field.csv:17: pressure: expected a number, got \"12.3x\"");
  text = rising_rows(39, 20.0) + "19.5,150.0\n";
  EXPECT_EQ(error_of(text), "field.csv:40: time 0.0195 s is not after the previous row's 0.0200 s");
}

TEST(FieldTrace, ErrorsFromFilesNameThePathAndLine) {
  const std::string text_path = kDataDir + "bad_text_in_number.csv";
  try {
    read_field_trace(text_path);
    ADD_FAILURE() << "no error";
  } catch (const FieldTraceError& e) {
    EXPECT_EQ(std::string(e.what()), text_path + ":3: pressure: expected a number, got \"18O.4\"");
  }
  const std::string order_path = kDataDir + "bad_time_order.csv";
  try {
    read_field_trace(order_path);
    ADD_FAILURE() << "no error";
  } catch (const FieldTraceError& e) {
    // Line 7 of the file, counting its comment and blank lines.
    EXPECT_EQ(std::string(e.what()), order_path + ":7: time 0.0150 s is not after the previous row's 0.0200 s");
  }
  const std::string missing = kDataDir + "no_such_recording.csv";
  try {
    read_field_trace(missing);
    ADD_FAILURE() << "no error";
  } catch (const FieldTraceError& e) {
    EXPECT_NE(std::string(e.what()).find(missing), std::string::npos) << e.what();
  }
}

TEST(FieldTrace, TextInNumbers) {
  expect_error("time_s,p_bar\n0,1\n0.1,1.5 bar\n", 3, "pressure: expected a number, got \"1.5 bar\"");
  expect_error("time_s,p_bar\n0,1\nx,2\n", 3, "time: expected a number, got \"x\"");
  expect_error("time_s,p_bar\n0,1\n0.1,\n", 3, "pressure: expected a number, got an empty field");
  expect_error("time_s,p_bar,q_gpm\n0,1,2\n0.1,2,0x10\n", 3, "flow: expected a number, got \"0x10\"");
  expect_error("time_s,p_bar\n0,1\n0.1,+-2\n", 3, "pressure: expected a number, got \"+-2\"");
  expect_error("time_s,p_bar\n0,1\n0.1,nan\n", 3, "pressure: expected a finite number, got \"nan\"");
  expect_error("time_s,p_bar\n0,inf\n0.1,1\n", 2, "pressure: expected a finite number, got \"inf\"");
  expect_error("time_s,p_bar\n0,1e999\n0.1,1\n", 2, "out of range");
  expect_error("time_s,p_bar\n0,1e306\n0.1,1\n", 2, "pressure: \"1e306\" is out of range");  // in Pa
}

TEST(FieldTrace, ThousandsSeparatorsAreRefusedByName) {
  expect_error("time_s;p_psi\n0;1.234,5\n1;2\n", 2, "thousands separators are not supported");
  expect_error("time_s;p_psi\n0;1 234\n1;2\n", 2, "thousands separators are not supported");
  expect_error("time_s,p_psi\n0,\"1,234\"\n1,2\n", 2, "thousands separators are not supported");
  expect_error("time_s,p_psi\n0,1.234.567\n1,2\n", 2, "thousands separators are not supported");
  // A decimal comma with comma separators cannot be told from a column.
  expect_error("time_s,p_psi\n0,\"1,5\"\n1,2\n", 2, "a decimal comma needs ';' or tab separators");
  expect_error("time_s,p_psi\n0,1,5\n1,2\n", 2, "found 3 columns, but the header (line 1) has 2");
  // Once decimal commas are in use, a decimal point is not a number.
  expect_error("t_s;p_psi\n0;1,5\n1;2.5\n", 3, "this file writes decimals with a comma");
}

TEST(FieldTrace, TimeMustIncrease) {
  expect_error("time_s,p_bar\n0,1\n0.1,1\n0.05,1\n", 4, "time 0.0500 s is not after the previous row's 0.100 s");
  expect_error("time_s,p_bar\n0,1\n-1e-9,1\n", 3, "time -1.00e-09 s is not after the previous row's 0.00 s");
  // Just enough digits to show the difference.
  expect_error("time_s,p_bar\n0.0123457,1\n0.0123456,1\n", 3,
               "time 0.0123456 s is not after the previous row's 0.0123457 s");
}

TEST(FieldTrace, EmptyFilesAndTooFewRows) {
  expect_error("", 1, "no header row");
  expect_error("\n  \n# just a comment\n\n", 1, "no header row");
  expect_error("# comment\ntime_s,p_bar\n\n", 2, "no data rows after the header");
  expect_error("time_s,p_bar\n# comment\n0,1\n", 3, "only one data row; a trace needs at least two");
  expect_error("0,1\n1,2\n", 1, "holds numbers, not column names");
  expect_error("time pressure\n0 1\n1 2\n", 1, "has only one column");
}

TEST(FieldTrace, UnknownAndMismatchedUnits) {
  expect_error("time_s,p [bars]\n0,1\n1,2\n", 1, "pressure column \"p [bars]\": unknown unit \"bars\"");
  expect_error("time [ms],p [L/min]\n0,1\n1,2\n", 1,
               "pressure column \"p [L/min]\": \"L/min\" is a flow rate unit, not a pressure unit");
  expect_error("time_s,pressure_L_min\n0,1\n1,2\n", 1, "\"L/min\" is a flow rate unit, not a pressure unit");
  expect_error("time [bar],p [bar]\n0,1\n1,2\n", 1, "time column \"time [bar]\": \"bar\" is a pressure unit");
  expect_error("time_s,p_bar,flow [bar]\n0,1,2\n1,2,3\n", 1, "flow column \"flow [bar]\"");

  FieldTraceOptions option;
  option.pressure_unit = "L/min";
  expect_error("time_s,p_bar\n0,1\n1,2\n", 1, "--pressure-unit \"L/min\": \"L/min\" is a flow rate unit", option);
  option.pressure_unit = "furlong";
  expect_error("time_s,p_bar\n0,1\n1,2\n", 1, "--pressure-unit \"furlong\": unknown unit", option);
}

TEST(FieldTrace, MissingColumnsAndBadColumnOptions) {
  expect_error("# header on line 2\nseconds,p_bar\n0,1\n1,2\n", 2,
               "no time column in the header (\"seconds\", \"p_bar\")");
  expect_error("time_s,valve_mm\n0,1\n1,2\n", 1, "no pressure column");

  FieldTraceOptions number;
  number.pressure_column = "3";
  expect_error("time_s,p_bar\n0,1\n1,2\n", 1, "--pressure-column \"3\": the header has 2 columns", number);
  FieldTraceOptions name;
  name.time_column = "clock";
  expect_error("time_s,p_bar\n0,1\n1,2\n", 1, "--time-column \"clock\": no such column", name);
  FieldTraceOptions twice;
  twice.time_column = "1";
  twice.pressure_column = "time_s";
  expect_error("time_s,p_bar\n0,1\n1,2\n", 1, "--pressure-column \"time_s\": \"time_s\" is already the time column",
               twice);
}

TEST(FieldTrace, WrongColumnCount) {
  expect_error("time_s,p_bar,q_gpm\n0,1,2\n0.1,1,2\n\n0.2,1\n", 5, "found 2 columns, but the header (line 1) has 3");
  expect_error("time_s\tp_bar\n0\t1\n0.1\t1\t7\n", 3, "found 3 columns");
  expect_error("time_s,p_bar\n0,1\n0.1,\"1\n", 3, "a quote is not closed");
}

// ---------------------------------------------------------------- logger layouts

// Time-of-day stamps (hh:mm:ss.ffff); the clock passing midnight is the next
// day, not a time that goes back.
TEST(FieldTrace, TimeOfDayStampsRollOverMidnight) {
  const std::string text =
      "Time;p_out [bar]\n23:59:59,9980;210,0\n23:59:59,9990;210,5\n00:00:00,0000;211,0\n00:00:00,0010;211,5\n";
  const FieldTrace t = parse_field_trace(text, "field.csv");
  ASSERT_EQ(t.time.size(), 4u);
  for (std::size_t i = 0; i < 4; ++i) EXPECT_NEAR(t.time[i], 1e-3 * static_cast<double>(i), 1e-9) << i;
  EXPECT_EQ(t.report.midnight_rollovers, 1u);
  EXPECT_EQ(t.report.layout.time_format, "time of day");
  EXPECT_EQ(t.report.layout.clock_start, "23:59:59,9980");
  EXPECT_EQ(clock_time(t.report.layout, 0.003), "00:00:00.0010");
  EXPECT_NEAR(t.pressure[3], 211.5 * kBar, 1e-6);
  // A clock going back by less than half a day is an error, not a roll-over.
  expect_error("Time,p [bar]\n14:02:07.1000,1\n14:02:07.0990,1\n", 3, "time");
  expect_error("Time,p [bar]\n14:02:07.1000,1\n14:62:07.1010,1\n", 3,
               "time: expected a time of day such as 14:02:07.100, got \"14:62:07.1010\"");
}

// Date and time in one column (ISO 8601) or in two (day first with dots):
// days follow the civil calendar, here across a month's end and a leap day.
TEST(FieldTrace, DateTimeStampsInOneOrTwoColumns) {
  const FieldTrace a = parse_field_trace(
      "timestamp,pressure [psi]\n2024-02-29 23:59:59.5,1\n2024-03-01T00:00:00.5,2\n2024-03-01 00:00:01.5,3\n",
      "field.csv");
  ASSERT_EQ(a.time.size(), 3u);
  EXPECT_NEAR(a.time[1], 1.0, 1e-9);
  EXPECT_NEAR(a.time[2], 2.0, 1e-9);
  EXPECT_EQ(a.report.layout.time_format, "date and time");
  const FieldTrace b =
      parse_field_trace("Date;Time;p [bar]\n31.12.2023;23:59:59,0;1\n01.01.2024;00:00:00,0;2\n", "field.csv");
  ASSERT_EQ(b.time.size(), 2u);
  EXPECT_NEAR(b.time[1], 1.0, 1e-9);
  EXPECT_EQ(b.report.layout.clock_start, "31.12.2023 23:59:59,0");
}

// A sample index and a rate: from the command line, or from a line of the
// logger's preamble above the header.
TEST(FieldTrace, SampleIndexWithARate) {
  const std::string text = "index,p [bar]\n0,1\n1,2\n2,3\n";
  expect_error(text, 1, "counts samples; give the sample rate with --rate (e.g. --rate 1kHz)");
  FieldTraceOptions rate;
  rate.sample_rate = 1000.0;
  const FieldTrace a = parse_field_trace(text, "field.csv", rate);
  ASSERT_EQ(a.time.size(), 3u);
  EXPECT_DOUBLE_EQ(a.time[2], 0.002);
  EXPECT_EQ(a.report.layout.sample_rate_source, "--rate");

  const FieldTrace b = parse_field_trace(
      "Logger;bench unit 4\nSample rate;2;kHz\nStart;14:02:07\nsample;p_out [bar]\n0;1\n1;2\n2;3\n", "field.csv");
  EXPECT_DOUBLE_EQ(b.time[2], 0.001);
  EXPECT_EQ(b.report.layout.sample_rate_source, "line 2");
  EXPECT_EQ(b.report.layout.header_line, 4u);
  const FieldTrace c = parse_field_trace("# sampling interval: 0,5 ms\nn;p [bar]\n0;1\n1;2\n", "field.csv");
  EXPECT_DOUBLE_EQ(c.time[1], 0.5e-3);
  // No time column at all: the rows are counted.
  FieldTraceOptions rows;
  rows.sample_rate = 100.0;
  const FieldTrace d = parse_field_trace("p [bar],T [degC]\n1,40\n2,40\n3,40\n", "field.csv", rows);
  EXPECT_DOUBLE_EQ(d.time[2], 0.02);
  EXPECT_EQ(d.report.layout.time_format, "row count");
  expect_error("p [bar],T [degC]\n1,40\n2,40\n", 1, "or give the sample rate with --rate (e.g. --rate 1kHz)");
  // Stamps and a rate at once: the option is refused, not silently preferred.
  expect_error("t [s],p [bar]\n0,1\n1,2\n", 1, "already gives the time; --rate is for files that count samples", rows);
}

// Absolute columns become gauge: p_gauge = p_abs - p_atm, with the standard
// atmosphere 101.325 kPa (ISO 2533) unless the site's is stated.
TEST(FieldTrace, AbsolutePressuresAreConvertedToGauge) {
  const char* headers[] = {"p [bar(a)]", "p [bara]", "p (bar abs)", "p [BAR A]", "p_abs [bar]", "p_bar_abs"};
  for (const char* h : headers) {
    SCOPED_TRACE(h);
    const FieldTrace t = parse_field_trace(std::string("t [s];") + h + "\n0;1,01325\n1;211,01325\n", "field.csv");
    EXPECT_NEAR(t.pressure[0], 0.0, 1e-6);
    EXPECT_NEAR(t.pressure[1], 210e5, 1e-6);
    EXPECT_TRUE(t.report.layout.absolute[0]);
    ASSERT_FALSE(t.report.notes.empty());
    EXPECT_NE(t.report.notes[0].find("converted to gauge with an atmospheric pressure of 1.01325 bar (standard "
                                     "atmosphere; set --atmosphere for the site's)"),
              std::string::npos)
        << t.report.notes[0];
  }
  const FieldTrace psia = parse_field_trace("t [s],p [psia]\n0,14.7\n1,3014.7\n", "field.csv");
  EXPECT_NEAR(psia.pressure[1], 3014.7 * kPsi - 101325.0, 1e-6);
  const FieldTrace kpa = parse_field_trace("t [s],p [kPa abs]\n0,100\n1,200\n", "field.csv");
  EXPECT_NEAR(kpa.pressure[1], 200e3 - 101325.0, 1e-6);
  // Gauge spellings stay as they are.
  const FieldTrace g = parse_field_trace("t [s],p [bar(g)],q [L/min]\n0,1,2\n1,2,3\n", "field.csv");
  EXPECT_NEAR(g.pressure[1], 2 * kBar, 1e-9);
  EXPECT_FALSE(g.report.layout.absolute[0]);
  // The site's atmosphere: from an option, or from the preamble.
  FieldTraceOptions site;
  site.atmospheric_pressure = 0.95e5;
  EXPECT_NEAR(parse_field_trace("t [s],p [bar(a)]\n0,1\n1,2\n", "field.csv", site).pressure[1], 2e5 - 0.95e5, 1e-9);
  const FieldTrace pre = parse_field_trace("Barometric pressure;965;mbar\nt [s];p [bar(a)]\n0;1\n1;2\n", "field.csv");
  EXPECT_NEAR(pre.pressure[1], 2e5 - 0.965e5, 1e-9);
  EXPECT_EQ(pre.report.layout.atmosphere_source, "line 1");
  site.atmospheric_pressure = 2e6;
  expect_error("t [s],p [bar(a)]\n0,1\n1,2\n", 1, "--atmosphere must be an absolute pressure", site);
}

// Trade spellings in any case (NIST SP 811 factors as above; 1 rev/min =
// 2 pi / 60 rad/s, and the speed is kept in rev/min).
TEST(FieldTrace, TradeUnitSpellingsInAnyCase) {
  const FieldTrace t = parse_field_trace(
      "TIME [MS],Pressure [PSI],Flow [LPM],Speed [RPM],Q2 [cm3/s]\n0,100,10,1800,1\n1,200,20,1750,2\n", "field.csv");
  EXPECT_DOUBLE_EQ(t.time[1], 1e-3);
  expect_relative(t.pressure[1], 200 * kPsi, "PSI");
  expect_relative(t.flow[1], 20 * kLitrePerMinute, "LPM");
  ASSERT_EQ(t.speed.size(), 2u);
  EXPECT_NEAR(t.speed[1], 1750.0, 1e-9);
  EXPECT_EQ(t.report.layout.unused_columns, std::vector<std::string>{"Q2 [cm3/s]"});
}

// Several pressure channels: names say which is which, options decide.
TEST(FieldTrace, SeveralPressureChannels) {
  const std::string text = "t [ms];p_outlet [bar];p_control [bar];p_load [bar]\n0;200;50;150\n1;201;51;151\n";
  const FieldTrace t = parse_field_trace(text, "field.csv");
  EXPECT_EQ(t.pressure_header, "p_outlet [bar]");
  ASSERT_EQ(t.control_pressure.size(), 2u);
  ASSERT_EQ(t.load_pressure.size(), 2u);
  EXPECT_NEAR(t.control_pressure[1], 51 * kBar, 1e-6);
  EXPECT_NEAR(t.load_pressure[1], 151 * kBar, 1e-6);
  // Channels named only by number: the user says which is which.
  const std::string plain = "t [ms];ch1 [bar];ch2 [bar];ch3 [bar]\n0;200;50;150\n1;201;51;151\n";
  expect_error(plain, 1,
               "several columns could be the pump outlet pressure: \"ch1 [bar]\", \"ch2 [bar]\", \"ch3 [bar]\"; choose "
               "one with --pressure-column (and --control-column, --load-column for the others)");
  FieldTraceOptions o;
  o.pressure_column = "ch3";
  o.control_column = "3";  // by number, counting from 1: "ch2 [bar]"
  const FieldTrace u = parse_field_trace(plain, "field.csv", o);
  EXPECT_NEAR(u.pressure[0], 150 * kBar, 1e-6);
  EXPECT_NEAR(u.control_pressure[0], 50 * kBar, 1e-6);
  EXPECT_TRUE(u.load_pressure.empty());
  EXPECT_EQ(u.report.layout.unused_columns, std::vector<std::string>{"ch1 [bar]"});
  o.load_column = "ch3";
  expect_error(plain, 1, "--load-column \"ch3\": \"ch3 [bar]\" is already the pump outlet pressure column", o);
}

// Gaps (an interval over 1.5 nominal intervals) and repeated stamps are
// reported with their lines; the repeated rows are dropped.
TEST(FieldTrace, GapsAndRepeatedStampsAreReportedWithTheirLines) {
  std::string text = "t [ms],p [bar]\n";
  int line = 1;
  std::vector<int> repeated_lines, gap_lines;
  for (int k = 0; k < 3000; ++k) {
    if (k == 1200 || k == 2500) {  // rows missing before these
      gap_lines.push_back(line + 1);
      continue;
    }
    text += std::to_string(k) + ",100\n";
    ++line;
    if (k == 400 || k == 401 || k == 2999) {
      text += std::to_string(k) + ",100\n";
      ++line;
      repeated_lines.push_back(line);
    }
  }
  const FieldTrace t = parse_field_trace(text, "field.csv");
  const FieldReadReport& r = t.report;
  EXPECT_EQ(r.rows, 3001u);
  EXPECT_EQ(r.kept, 2998u);
  EXPECT_EQ(r.repeated, 3u);
  EXPECT_EQ(std::vector<int>(r.repeated_lines.begin(), r.repeated_lines.end()), repeated_lines);
  EXPECT_DOUBLE_EQ(r.nominal_interval, 1e-3);
  ASSERT_EQ(r.gaps, 2u);
  EXPECT_EQ(static_cast<int>(r.gap_list[0].line), gap_lines[0]);
  EXPECT_DOUBLE_EQ(r.gap_list[0].from, 1.199);
  EXPECT_DOUBLE_EQ(r.gap_list[0].to, 1.201);
  EXPECT_EQ(static_cast<int>(r.gap_list[1].line), gap_lines[1]);
  EXPECT_EQ(t.time.size(), 2998u);
  bool noted = false;
  for (const std::string& n : r.notes) noted = noted || n.find("3 row(s) repeat the time stamp") != std::string::npos;
  EXPECT_TRUE(noted);
}

// Names in one row and units in the next, a trailing separator on the rows.
TEST(FieldTrace, UnitRowUnderTheNamesAndTrailingSeparators) {
  const FieldTrace t = parse_field_trace("Time;Pressure;Flow\ns;bar;L/min\n0;1;2;\n0,5;3;4;\n", "field.csv");
  EXPECT_EQ(t.time_header, "Time [s]");
  EXPECT_EQ(t.pressure_header, "Pressure [bar]");
  EXPECT_DOUBLE_EQ(t.time[1], 0.5);
  expect_relative(t.flow[1], 4 * kLitrePerMinute, "flow");
}

// Streaming: the sink sees every kept row in order and may stop the reading.
TEST(FieldTrace, ScanStreamsRowsAndStopsWhenAsked) {
  std::string text = "t [s],p [bar],q [L/min]\n";
  for (int k = 0; k < 10000; ++k) text += std::to_string(k) + "," + std::to_string(k % 7) + ",1\n";
  std::size_t seen = 0;
  double last = -1.0;
  const FieldReadReport all = scan_field_text(text, "field.csv", {}, [&](const FieldRow& r) {
    EXPECT_GT(r.time, last);
    EXPECT_DOUBLE_EQ(r[FieldChannel::pressure], (static_cast<int>(r.time) % 7) * kBar);
    EXPECT_TRUE(std::isnan(r[FieldChannel::control_pressure]));
    last = r.time;
    ++seen;
    return true;
  });
  EXPECT_EQ(seen, 10000u);
  EXPECT_EQ(all.kept, 10000u);
  EXPECT_EQ(all.rows, 10000u);
  seen = 0;
  const FieldReadReport part = scan_field_text(text, "field.csv", {}, [&](const FieldRow&) { return ++seen < 10; });
  EXPECT_EQ(seen, 10u);
  EXPECT_EQ(part.kept, 10u);
  // The same through a file, which streams through a fixed buffer.
  const std::string path = ::testing::TempDir() + "/scan_stream.csv";
  write_file_atomically(path, text);
  seen = 0;
  EXPECT_EQ(scan_field_trace(path, {}, [&](const FieldRow&) { return ++seen > 0; }).kept, 10000u);
}

// The held part and its limit.
TEST(FieldTrace, HeldPartAndItsLimit) {
  std::string text = "t [ms],p [bar]\n";
  for (int k = 0; k < 1000; ++k) text += std::to_string(k) + ",1\n";
  FieldTraceOptions o;
  o.from = 0.1;
  o.to = 0.2;
  const FieldTrace t = parse_field_trace(text, "field.csv", o);
  EXPECT_EQ(t.time.size(), 101u);
  EXPECT_DOUBLE_EQ(t.time.front(), 0.1);
  o = {};
  o.max_samples = 500;
  try {
    parse_field_trace(text, "field.csv", o);
    ADD_FAILURE() << "no error";
  } catch (const FieldTraceError& e) {
    EXPECT_NE(std::string(e.what()).find("more than 500 samples to hold in memory; choose a shorter part with --from "
                                         "and --to"),
              std::string::npos)
        << e.what();
  }
}

// Time options carry their unit; a time of day needs a stamped recording.
TEST(FieldTrace, TimeOptionsTakeUnits) {
  EXPECT_DOUBLE_EQ(parse_time_option("100ms", "--from"), 0.1);
  EXPECT_DOUBLE_EQ(parse_time_option("0.1ms", "--from"), 1e-4);
  EXPECT_DOUBLE_EQ(parse_time_option("2.5 s", "--to"), 2.5);
  EXPECT_DOUBLE_EQ(parse_time_option("100MS", "--to"), 0.1);
  const auto message = [](const std::string& text, const FieldLayout* layout = nullptr) {
    try {
      parse_time_option(text, "--from", layout);
    } catch (const FieldTraceError& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  EXPECT_EQ(message("100"), "--from \"100\": give the unit, e.g. --from 100ms or --from 100s");
  EXPECT_NE(message("100 bar").find("expected a time, got a pressure"), std::string::npos);
  EXPECT_NE(message("14:02:07.3").find("needs a recording with clock stamps"), std::string::npos);
  const FieldTrace t = parse_field_trace("Time,p [bar]\n14:02:07.1000,1\n14:02:08.1000,1\n", "field.csv");
  EXPECT_NEAR(parse_time_option("14:02:07.3", "--from", &t.report.layout), 0.2, 1e-9);
}

// ---------------------------------------------------------------- robustness

// Random edits of good files must give either a valid trace or a
// FieldTraceError; anything else (another exception, a crash) fails.
TEST(FieldTrace, RandomMutationsNeverCrash) {
  const std::vector<std::string> seeds = {
      read_file(kDataDir + "bench_step_comma.csv"), read_file(kDataDir + "logger_decimal_comma.csv"),
      read_file(kDataDir + "channels_tab.tsv") + "\n", "t [ms]\tp (psi)\tQ [gpm]\n0\t1,5\t2\n1\t2,5\t3\n"};
  const std::string alphabet = "0123456789.,;\t\n\r\"#-+eE[]()_ xnaif/^%";
  std::mt19937 random(20240611);
  int parsed = 0, refused = 0;
  for (int round = 0; round < 4000; ++round) {
    std::string text = seeds[round % seeds.size()];
    const int edits = 1 + static_cast<int>(random() % 4);
    for (int e = 0; e < edits && !text.empty(); ++e) {
      const std::size_t at = random() % text.size();
      const char c = random() % 8 == 0 ? static_cast<char>(random() % 256) : alphabet[random() % alphabet.size()];
      switch (random() % 4) {
        case 0:
          text[at] = c;
          break;
        case 1:
          text.insert(text.begin() + static_cast<std::ptrdiff_t>(at), c);
          break;
        case 2:
          text.erase(at, 1 + random() % 3);
          break;
        default:
          text.resize(at);
          break;
      }
    }
    try {
      const FieldTrace t = parse_field_trace(text, "fuzz.csv");
      ++parsed;
      ASSERT_GE(t.time.size(), 2u);
      ASSERT_EQ(t.pressure.size(), t.time.size());
      ASSERT_TRUE(t.flow.empty() || t.flow.size() == t.time.size());
      for (std::size_t i = 0; i < t.time.size(); ++i) {
        ASSERT_TRUE(std::isfinite(t.time[i]) && std::isfinite(t.pressure[i]));
        if (i > 0) {
          ASSERT_GT(t.time[i], t.time[i - 1]);
        }
      }
    } catch (const FieldTraceError& e) {
      ++refused;
      ASSERT_EQ(std::string(e.what()).rfind("fuzz.csv:", 0), 0u) << e.what();
    }
  }
  // Both outcomes occur, so the mutations neither always break nor never touch the data.
  EXPECT_GT(parsed, 100);
  EXPECT_GT(refused, 100);
}

}  // namespace
