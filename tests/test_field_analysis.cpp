// Analysis of recordings (core/src/field_analysis.cpp) on synthetic signals
// whose ripple, steps and oscillations are known in closed form: piston
// ripple (a Fourier series at the pumping frequency z n / 60, common
// practice), Gaussian noise (Bendat & Piersol, Random Data), the step
// response of a damped second-order system (Ogata, Modern Control
// Engineering: overshoot exp(-pi zeta / sqrt(1 - zeta^2))).

#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "swashtune/atomic_file.hpp"
#include "swashtune/field_analysis.hpp"

namespace {

using namespace swashtune;

constexpr double pi = 3.14159265358979323846;
constexpr double bar = 1e5;

struct Ripple {
  double frequency = 270.0;                         // Hz: 9 pistons at 1800 rpm
  std::vector<double> amplitude = {1.5, 0.4, 0.2};  // bar, of the harmonics 1, 2, 3
  double value(double t) const {
    double v = 0.0;
    for (std::size_t k = 0; k < amplitude.size(); ++k)
      v += amplitude[k] * std::cos(2.0 * pi * (k + 1) * frequency * t + 0.7 * (k + 1));
    return v * bar;
  }
  // Peak-to-peak of the waveform, on a fine grid over one period.
  double peak_to_peak() const {
    double high = -1e300, low = 1e300;
    for (int i = 0; i < 10000; ++i) {
      const double v = value(i / (10000.0 * frequency));
      high = std::max(high, v);
      low = std::min(low, v);
    }
    return high - low;
  }
};

FieldTrace recording(double duration, double rate, const std::function<double(double)>& pressure, double noise_bar,
                     unsigned seed) {
  FieldTrace t;
  t.source = "synthetic";
  std::mt19937 random(seed);
  std::normal_distribution<double> noise(0.0, noise_bar * bar);
  const auto n = static_cast<std::size_t>(std::round(duration * rate)) + 1;
  for (std::size_t i = 0; i < n; ++i) {
    const double ti = static_cast<double>(i) / rate;
    t.time.push_back(ti);
    t.pressure.push_back(pressure(ti) + noise(random));
  }
  return t;
}

FieldAnalysisOptions with_pump(double pistons, double rpm) {
  FieldAnalysisOptions o;
  o.pistons = pistons;
  o.speed = rpm;
  o.ripple_source = "test";
  return o;
}

// A healthy pump: ripple and noise only. With the piston count and speed the
// ripple is measured (frequency, each harmonic, peak-to-peak) and removed,
// and nothing is left to call hunting.
TEST(FieldAnalysis, RippleAloneIsMeasuredAndRemoved) {
  Ripple ripple;
  ripple.frequency = 9 * 1776.0 / 60.0;  // the motor slips: 1776 rpm, not the nameplate 1800
  const FieldTrace t = recording(
      2.0, 10000.0, [&](double x) { return 210 * bar + ripple.value(x); }, 0.2, 1);
  const FieldAnalysis a = analyse_field_trace(t, with_pump(9, 1800));
  ASSERT_TRUE(a.ripple.known);
  EXPECT_TRUE(a.ripple.removed);
  EXPECT_DOUBLE_EQ(a.ripple.nominal_hz, 270.0);
  EXPECT_NEAR(a.ripple.measured_hz, ripple.frequency, 0.05);
  ASSERT_GE(a.ripple.harmonics.size(), 3u);
  for (std::size_t k = 0; k < 3; ++k)
    EXPECT_NEAR(a.ripple.harmonics[k].amplitude / bar, ripple.amplitude[k], 0.03) << "harmonic " << k + 1;
  EXPECT_NEAR(a.ripple.harmonics[3].amplitude / bar, 0.0, 0.03);
  EXPECT_NEAR(a.ripple.peak_to_peak / ripple.peak_to_peak(), 1.0, 0.03);
  EXPECT_TRUE(a.events.empty());
  ASSERT_EQ(a.stretches.size(), 1u);
  EXPECT_EQ(a.stretches[0].verdict, FieldVerdict::settled) << a.stretches[0].why;
  EXPECT_NEAR(a.noise / (0.2 * bar), 1.0, 0.1);
}

// The same recording without the pump's data: the oscillation is not called
// hunting but "possibly ripple", with the reason.
TEST(FieldAnalysis, RippleWithoutThePumpsDataIsPossiblyRipple) {
  const Ripple ripple;
  const FieldTrace t = recording(
      1.0, 10000.0, [&](double x) { return 210 * bar + ripple.value(x); }, 0.2, 2);
  const FieldAnalysis a = analyse_field_trace(t, {});
  ASSERT_EQ(a.stretches.size(), 1u);
  const FieldStretch& s = a.stretches[0];
  EXPECT_EQ(s.oscillation.kind, OscillationKind::sustained);
  EXPECT_NEAR(s.oscillation.frequency_hz, 270.0, 2.0);
  EXPECT_EQ(s.verdict, FieldVerdict::possibly_ripple);
  EXPECT_NE(s.why.find("above 200 Hz"), std::string::npos) << s.why;
  // The shaft speed alone shows it: 270 Hz is nine times 30 rev/s.
  FieldAnalysisOptions speed;
  speed.speed = 1800;
  const FieldAnalysis b = analyse_field_trace(t, speed);
  EXPECT_EQ(b.stretches[0].verdict, FieldVerdict::possibly_ripple);
  EXPECT_NE(b.stretches[0].why.find("9 x the shaft frequency"), std::string::npos) << b.stretches[0].why;
  EXPECT_NE(b.ripple.note.find("--speed without --pistons"), std::string::npos);
}

// Hunting under the ripple: with the pump's data the ripple is removed and
// the hunting measured as if it were alone.
TEST(FieldAnalysis, HuntingUnderRippleIsFoundWithItsAmplitude) {
  const Ripple ripple;
  const double hunting_hz = 41.0, hunting_amplitude = 2.0 * bar;  // 4 bar peak to peak
  for (unsigned seed = 1; seed <= 3; ++seed) {
    SCOPED_TRACE(seed);
    const FieldTrace t = recording(
        1.0, 10000.0,
        [&](double x) { return 205 * bar + hunting_amplitude * std::sin(2.0 * pi * hunting_hz * x) + ripple.value(x); },
        0.2, seed);
    const FieldAnalysis a = analyse_field_trace(t, with_pump(9, 1800));
    ASSERT_EQ(a.stretches.size(), 1u);
    const FieldStretch& s = a.stretches[0];
    EXPECT_EQ(s.verdict, FieldVerdict::hunting) << s.why;
    EXPECT_NEAR(s.oscillation.frequency_hz, hunting_hz, 0.5);
    EXPECT_NEAR(s.oscillation.peak_to_peak / (2.0 * hunting_amplitude), 1.0, 0.08);
    EXPECT_NEAR(a.ripple.peak_to_peak / ripple.peak_to_peak(), 1.0, 0.05);
  }
}

// A step at mid-record (the troubleshooter's 0 -> 100 bar): the part
// analysed is all of it, its mean is that of all of it, and the step is an
// event with its figures.
TEST(FieldAnalysis, StepAtMidRecordIsAnEventAndTheMeanIsOfEverything) {
  const FieldTrace t = recording(
      1.0, 2000.0, [](double x) { return x < 0.5 ? 0.0 : 100 * bar; }, 0.3, 4);
  const FieldAnalysis a = analyse_field_trace(t, {});
  EXPECT_DOUBLE_EQ(a.from, 0.0);
  EXPECT_DOUBLE_EQ(a.to, 1.0);
  EXPECT_EQ(a.samples, 2001u);
  EXPECT_NEAR(a.mean / bar, 100.0 * 1001.0 / 2001.0, 0.05);  // 1001 of the 2001 samples are at 100 bar
  ASSERT_EQ(a.events.size(), 1u);
  const FieldEvent& e = a.events[0];
  EXPECT_TRUE(e.rise);
  EXPECT_NEAR(e.time, 0.4995, 1e-3);
  EXPECT_NEAR(e.figures.initial_discharge_pressure / bar, 0.0, 0.1);
  EXPECT_NEAR(e.figures.final_discharge_pressure / bar, 100.0, 0.1);
  ASSERT_TRUE(e.figures.overshoot_percent);
  EXPECT_NEAR(*e.figures.overshoot_percent, 0.0, 1.0);  // the noise's largest swing, smoothed over 1.5 ms
  EXPECT_FALSE(e.figures.undershoot_percent);
  ASSERT_TRUE(e.figures.settling_time);
  EXPECT_LT(*e.figures.settling_time, 2e-3);
  // Stated: a part chosen by the user.
  FieldAnalysisOptions part;
  part.from = 0.6;
  part.to = 0.8;
  const FieldAnalysis b = analyse_field_trace(t, part);
  EXPECT_DOUBLE_EQ(b.from, 0.6);
  EXPECT_DOUBLE_EQ(b.to, 0.8);
  EXPECT_EQ(b.samples, 401u);
  EXPECT_NEAR(b.mean / bar, 100.0, 0.1);
  EXPECT_TRUE(b.events.empty());
}

// The step response of a damped second-order system from 40 to 210 bar
// (Ogata): with ripple and noise added, the event figures match those of the
// clean response worked out on a fine grid by the v2 definitions.
struct SecondOrder {
  double from = 40 * bar, to = 210 * bar, zeta = 0.25, natural_hz = 60.0, at = 0.3;
  double value(double t) const {
    if (t < at) return from;
    const double wn = 2.0 * pi * natural_hz, wd = wn * std::sqrt(1.0 - zeta * zeta), x = t - at;
    const double response =
        1.0 - std::exp(-zeta * wn * x) * (std::cos(wd * x) + zeta / std::sqrt(1.0 - zeta * zeta) * std::sin(wd * x));
    return from + (to - from) * response;
  }
};

TEST(FieldAnalysis, RecordedEventGetsTheFiguresOfTheCleanResponse) {
  const SecondOrder s;
  const Ripple ripple;
  // The clean figures: overshoot exp(-pi zeta / sqrt(1 - zeta^2)) (Ogata) and
  // the last time outside +-2 % of the change (the v2 band), on a 1 us grid.
  const double overshoot = 100.0 * std::exp(-pi * s.zeta / std::sqrt(1.0 - s.zeta * s.zeta));
  const double band = 0.02 * (s.to - s.from);
  double last_outside = s.at;
  for (double x = s.at; x < 1.0; x += 1e-6)
    if (std::abs(s.value(x) - s.to) > band) last_outside = x;
  const double settling = last_outside - s.at;
  for (unsigned seed = 1; seed <= 3; ++seed) {
    SCOPED_TRACE(seed);
    const FieldTrace t = recording(
        1.0, 10000.0, [&](double x) { return s.value(x) + ripple.value(x); }, 0.3, 10 + seed);
    const FieldAnalysis a = analyse_field_trace(t, with_pump(9, 1800));
    ASSERT_EQ(a.events.size(), 1u);
    const FieldEvent& e = a.events[0];
    EXPECT_TRUE(e.rise);
    // It starts where the pressure leaves the band of its old level (ripple
    // and noise included): the response rises from zero slope, so ~0.6 ms late.
    EXPECT_NEAR(e.time, s.at + 0.5e-3, 0.5e-3);
    EXPECT_NEAR(e.figures.initial_discharge_pressure / bar, 40.0, 0.2);
    EXPECT_NEAR(e.figures.final_discharge_pressure / bar, 210.0, 0.2);
    ASSERT_TRUE(e.figures.overshoot_percent);
    EXPECT_NEAR(*e.figures.overshoot_percent, overshoot, 1.0);
    EXPECT_NEAR(e.figures.peak_discharge_pressure / bar, (s.to + overshoot / 100 * (s.to - s.from)) / bar, 1.5);
    ASSERT_TRUE(e.figures.settling_time) << e.figures.note << ", band " << e.figures.band << ", pp "
                                         << e.after.oscillation.peak_to_peak << " "
                                         << to_string(e.after.oscillation.kind);
    EXPECT_NEAR(*e.figures.settling_time, settling, 2e-3);
    // The ringing after the peak decays like the system: zeta back within 20 %.
    EXPECT_EQ(e.after.verdict, FieldVerdict::settling) << e.after.why;
    EXPECT_NEAR(e.after.oscillation.damping_ratio / s.zeta, 1.0, 0.2);
  }
}

// A fall gets an undershoot, not an overshoot (v2).
TEST(FieldAnalysis, FallGetsAnUndershoot) {
  SecondOrder s;
  s.from = 210 * bar;
  s.to = 40 * bar;
  const FieldTrace t = recording(
      1.0, 5000.0, [&](double x) { return s.value(x); }, 0.2, 5);
  const FieldAnalysis a = analyse_field_trace(t, {});
  ASSERT_EQ(a.events.size(), 1u);
  EXPECT_FALSE(a.events[0].rise);
  EXPECT_FALSE(a.events[0].figures.overshoot_percent);
  ASSERT_TRUE(a.events[0].figures.undershoot_percent);
  EXPECT_NEAR(*a.events[0].figures.undershoot_percent,
              100.0 * std::exp(-pi * s.zeta / std::sqrt(1.0 - s.zeta * s.zeta)), 1.0);
}

// A slam followed by hunting: the event's settling is null, "does not
// settle: hunting" (v2).
TEST(FieldAnalysis, HuntingAfterAnEventDoesNotSettle) {
  const FieldTrace t = recording(
      1.0, 10000.0,
      [](double x) { return x < 0.2 ? 40 * bar : 210 * bar + 5 * bar * std::sin(2.0 * pi * 47.0 * (x - 0.2)); }, 0.2,
      6);
  const FieldAnalysis a = analyse_field_trace(t, {});
  ASSERT_EQ(a.events.size(), 1u);
  EXPECT_EQ(a.events[0].after.verdict, FieldVerdict::hunting);
  EXPECT_FALSE(a.events[0].figures.settling_time);
  EXPECT_EQ(a.events[0].figures.note, "does not settle: hunting");
}

// An oscillation at a whole multiple of the recorded shaft speed may be the
// pump's ripple.
TEST(FieldAnalysis, OscillationAtAMultipleOfTheRecordedSpeedIsPossiblyRipple) {
  FieldTrace t = recording(
      1.0, 10000.0, [](double x) { return 150 * bar + 1.5 * bar * std::sin(2.0 * pi * 7 * 1000.0 / 60.0 * x); }, 0.1,
      8);
  t.speed.assign(t.time.size(), 1000.0);
  const FieldAnalysis a = analyse_field_trace(t, {});
  ASSERT_EQ(a.stretches.size(), 1u);
  EXPECT_EQ(a.stretches[0].verdict, FieldVerdict::possibly_ripple);
  EXPECT_NE(a.stretches[0].why.find("7 x the shaft frequency (1000 rpm)"), std::string::npos) << a.stretches[0].why;
  EXPECT_DOUBLE_EQ(a.mean_speed, 1000.0);
}

// The frequency of an oscillation that follows the shaft speed from one
// stretch to the next (7.5 times it here, so the multiple alone does not
// tell) is the pump's, not hunting.
TEST(FieldAnalysis, OscillationThatMovesWithSpeedIsPossiblyRipple) {
  FieldTrace t;
  t.source = "synthetic";
  std::mt19937 random(8);
  std::normal_distribution<double> noise(0.0, 0.1 * bar);
  for (int i = 0; i <= 20000; ++i) {
    const double x = i / 10000.0;
    const double rpm = x < 1.0 ? 1000.0 : 1200.0;  // 125 Hz and 150 Hz: below 200 Hz either way
    const double phase = 2.0 * pi * 7.5 * rpm / 60.0 * (x < 1.0 ? x : x - 1.0);
    t.time.push_back(x);
    t.pressure.push_back((x < 1.0 ? 150 : 100) * bar + 1.5 * bar * std::sin(phase) + noise(random));
    t.speed.push_back(rpm);
  }
  const FieldAnalysis a = analyse_field_trace(t, {});
  ASSERT_EQ(a.events.size(), 1u);
  ASSERT_EQ(a.stretches.size(), 2u);
  for (const FieldStretch& s : a.stretches) {
    EXPECT_EQ(s.verdict, FieldVerdict::possibly_ripple) << s.what << ": " << s.why;
    EXPECT_NE(s.why.find("moves with the shaft speed (1000 to 1200 rpm"), std::string::npos) << s.why;
  }
  // Without the speed column the same recording is hunting.
  t.speed.clear();
  for (const FieldStretch& s : analyse_field_trace(t, {}).stretches) EXPECT_EQ(s.verdict, FieldVerdict::hunting);
}

// A logger too slow for the ripple says so, and what looks like a slow
// oscillation at the aliased frequency is named for what it is.
TEST(FieldAnalysis, RippleAboveHalfTheSampleRateIsNotRemoved) {
  const Ripple ripple;
  // 270 Hz sampled at 400 Hz appears at 130 Hz.
  const FieldTrace t = recording(
      2.0, 400.0, [&](double x) { return 200 * bar + ripple.value(x); }, 0.05, 9);
  const FieldAnalysis a = analyse_field_trace(t, with_pump(9, 1800));
  EXPECT_FALSE(a.ripple.removed);
  EXPECT_NE(a.ripple.note.find("above half the sample rate"), std::string::npos) << a.ripple.note;
}

// A file streams through the same analysis in pieces of bounded length; the
// pieces of a long stretch are analysed and reported one by one.
TEST(FieldAnalysis, FileAnalysedInPiecesAgreesWithMemory) {
  const SecondOrder s;
  const FieldTrace t = recording(
      1.0, 10000.0, [&](double x) { return s.value(x); }, 0.3, 21);
  std::string text = "t [s],p [bar]\n";
  char line[64];
  for (std::size_t i = 0; i < t.time.size(); ++i) {
    std::snprintf(line, sizeof line, "%.4f,%.17g\n", t.time[i], t.pressure[i] / bar);
    text += line;
  }
  const std::string path = ::testing::TempDir() + "/analysis_pieces.csv";
  write_file_atomically(path, text);
  const FieldAnalysis file = analyse_field_file(path, {}, {});
  const FieldAnalysis memory = analyse_field_trace(t, {});
  ASSERT_EQ(file.events.size(), 1u);
  ASSERT_EQ(memory.events.size(), 1u);
  EXPECT_EQ(file.samples, memory.samples);
  EXPECT_NEAR(file.mean, memory.mean, 1e-6 * memory.mean);
  EXPECT_NEAR(*file.events[0].figures.overshoot_percent, *memory.events[0].figures.overshoot_percent, 1e-6);
  EXPECT_EQ(file.reading.source, path);
  FieldAnalysisOptions small;
  small.block_samples = 2048;
  const FieldAnalysis pieces = analyse_field_file(path, {}, small);
  ASSERT_EQ(pieces.events.size(), 1u);
  EXPECT_TRUE(pieces.events[0].window_capped);
  // 3000 samples before the event, 7001 after: pieces of at most 2048.
  EXPECT_EQ(pieces.stretches.size(), 2u + 4u);
  std::size_t total = 0;
  for (const FieldStretch& st : pieces.stretches)
    if (st.what.rfind("after event 1, from its peak", 0) != 0) total += st.samples;
  EXPECT_GT(total, 0u);
}

TEST(FieldAnalysis, BadOptionsNameTheOption) {
  const FieldTrace t = recording(
      0.1, 1000.0, [](double) { return 0.0; }, 0.1, 1);
  const auto message = [&](const FieldAnalysisOptions& o) {
    try {
      analyse_field_trace(t, o);
    } catch (const FieldTraceError& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  FieldAnalysisOptions o;
  o.pistons = 8.5;
  EXPECT_NE(message(o).find("--pistons must be a whole number"), std::string::npos);
  o = {};
  o.from = 0.5;
  EXPECT_NE(message(o).find("between --from and --to; the recording runs from 0 s to 0.1 s"), std::string::npos)
      << message(o);
  o = {};
  o.event_threshold = -1.0;
  EXPECT_NE(message(o).find("--event-threshold must be a positive pressure"), std::string::npos);
}

}  // namespace
