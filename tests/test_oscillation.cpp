// Oscillation analysis (core/src/oscillation.cpp) against signals whose
// frequency, amplitude and decay are known in closed form.

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <random>
#include <stdexcept>
#include <string>
#include <vector>

#include "swashtune/oscillation.hpp"

namespace {

using namespace swashtune;

constexpr double pi = 3.14159265358979323846;

struct Signal {
  std::vector<double> t;
  std::vector<double> y;
};

std::vector<double> uniform_times(double duration, double rate) {
  const auto n = static_cast<std::size_t>(std::round(duration * rate)) + 1;
  std::vector<double> t(n);
  for (std::size_t i = 0; i < n; ++i) t[i] = static_cast<double>(i) / rate;
  return t;
}

// Free vibration of a viscously damped single-degree-of-freedom system,
// x = A exp(-zeta w_n t) sin(w_d t), w_d = w_n sqrt(1 - zeta^2) (Thomson &
// Dahleh, Theory of Vibration with Applications). zeta < 0 grows.
Signal damped_sine(const std::vector<double>& t, double natural_hz, double zeta, double amplitude, double offset) {
  const double wn = 2.0 * pi * natural_hz;
  const double wd = wn * std::sqrt(1.0 - zeta * zeta);
  Signal s{t, {}};
  for (double ti : t) s.y.push_back(offset + amplitude * std::exp(-zeta * wn * ti) * std::sin(wd * ti));
  return s;
}

void add_noise(Signal& s, double sigma, unsigned seed) {
  std::mt19937 rng(seed);
  std::normal_distribution<double> normal(0.0, sigma);
  for (double& v : s.y) v += normal(rng);
}

// The logarithmic decrement of the free vibration is d = 2 pi zeta /
// sqrt(1 - zeta^2), and zeta = d / sqrt(4 pi^2 + d^2) (Thomson & Dahleh).
double log_decrement_of(double zeta) { return 2.0 * pi * zeta / std::sqrt(1.0 - zeta * zeta); }

struct DampedCase {
  double natural_hz;
  double zeta;
};

class DampedSine : public ::testing::TestWithParam<DampedCase> {};

// Thomson & Dahleh, Theory of Vibration with Applications: damped frequency
// w_d = w_n sqrt(1 - zeta^2), envelope exp(-zeta w_n t), logarithmic
// decrement 2 pi zeta / sqrt(1 - zeta^2).
TEST_P(DampedSine, FrequencyAndDampingRatioFromTheLogarithmicDecrement) {
  const DampedCase c = GetParam();
  const double fd = c.natural_hz * std::sqrt(1.0 - c.zeta * c.zeta);
  const std::vector<double> t = uniform_times(20.0 / c.natural_hz, 100.0 * c.natural_hz);
  const Signal s = damped_sine(t, c.natural_hz, c.zeta, 1.5, 3.0);

  const OscillationReport r = analyse_oscillation(s.t, s.y);
  EXPECT_NEAR(r.frequency_hz / fd, 1.0, 0.01);
  EXPECT_NEAR(r.damping_ratio / c.zeta, 1.0, 0.05);
  EXPECT_NEAR(r.log_decrement / log_decrement_of(c.zeta), 1.0, 0.05);
  EXPECT_NEAR(r.growth_rate / (-c.zeta * 2.0 * pi * c.natural_hz), 1.0, 0.05);
  EXPECT_GE(r.cycles, 5);
  EXPECT_NEAR(r.noise, 0.0, 1e-6);
  // zeta = 0.05 sits on the default slow_decay_damping: either kind is right.
  if (c.zeta < 0.05) {
    EXPECT_EQ(r.kind, OscillationKind::decaying_slowly) << to_string(r.kind);
  } else if (c.zeta > 0.05) {
    EXPECT_EQ(r.kind, OscillationKind::settling) << to_string(r.kind);
  }
}

INSTANTIATE_TEST_SUITE_P(FiftyAndThreeHundredHertz, DampedSine,
                         ::testing::Values(DampedCase{50.0, 0.02}, DampedCase{50.0, 0.05}, DampedCase{50.0, 0.1},
                                           DampedCase{300.0, 0.02}, DampedCase{300.0, 0.05}, DampedCase{300.0, 0.1}),
                         [](const ::testing::TestParamInfo<DampedCase>& info) {
                           return std::to_string(static_cast<int>(info.param.natural_hz)) + "Hz_zeta" +
                                  std::to_string(static_cast<int>(std::round(1000 * info.param.zeta)));
                         });

// The same free vibration (Thomson & Dahleh) measured through Gaussian white
// noise (Bendat & Piersol, Random Data) of 2 % of the initial amplitude: 3 %
// (zeta 0.02) and 7 % (zeta 0.05) of the amplitude where the analysis
// starts, and more as the oscillation decays into the noise.
TEST(Oscillation, DampedSineWithNoiseKeepsItsDampingRatio) {
  for (const double zeta : {0.02, 0.05}) {
    for (unsigned seed = 1; seed <= 3; ++seed) {
      SCOPED_TRACE("zeta " + std::to_string(zeta) + ", seed " + std::to_string(seed));
      Signal s = damped_sine(uniform_times(0.4, 5000.0), 50.0, zeta, 1.5, 3.0);
      add_noise(s, 0.03, seed);
      const OscillationReport r = analyse_oscillation(s.t, s.y);
      EXPECT_NEAR(r.frequency_hz / (50.0 * std::sqrt(1.0 - zeta * zeta)), 1.0, 0.02);
      EXPECT_NEAR(r.damping_ratio / zeta, 1.0, 0.10);
      EXPECT_NEAR(r.noise / 0.03, 1.0, 0.15);
    }
  }
}

// Thomson & Dahleh: with zeta < 0 the envelope exp(-zeta w_n t) grows; the
// analysis must report the growth, not a decay.
TEST(Oscillation, GrowingOscillationIsSustainedWithPositiveGrowthRate) {
  const double zeta = -0.02;
  const Signal s = damped_sine(uniform_times(0.4, 5000.0), 50.0, zeta, 0.1, 0.0);
  const OscillationReport r = analyse_oscillation(s.t, s.y);
  EXPECT_EQ(r.kind, OscillationKind::sustained) << to_string(r.kind);
  EXPECT_GT(r.growth_rate, 0.0);
  EXPECT_NEAR(r.growth_rate / (-zeta * 2.0 * pi * 50.0), 1.0, 0.05);
  EXPECT_NEAR(r.damping_ratio / zeta, 1.0, 0.05);
  // The peak-to-peak is that of the last cycles: within the last five
  // periods of the envelope 2 A exp(-zeta w_n t).
  const double growth = -zeta * 2.0 * pi * 50.0;
  EXPECT_GT(r.peak_to_peak, 2.0 * 0.1 * std::exp(growth * (0.4 - 5.0 / 50.0)));
  EXPECT_LT(r.peak_to_peak, 2.0 * 0.1 * std::exp(growth * 0.4));
}

// A sinusoid of amplitude A swings 2 A peak to peak and has zero damping
// (Thomson & Dahleh, undamped free vibration); Gaussian white noise of
// deviation sigma (Bendat & Piersol, Random Data) and a drifting mean must
// not change that.
struct DriftCase {
  const char* name;
  double (*mean)(double);
};

class SustainedWithNoise : public ::testing::TestWithParam<DriftCase> {};

TEST_P(SustainedWithNoise, IsSustainedWithTheRightFrequencyAndAmplitude) {
  const double amplitude = 2.0;
  const double sigma = 0.05 * amplitude;
  const double hz = 40.0;
  Signal s{uniform_times(1.0, 4000.0), {}};
  for (double ti : s.t) s.y.push_back(GetParam().mean(ti) + amplitude * std::sin(2.0 * pi * hz * ti + 0.3));
  add_noise(s, sigma, 12345);

  const OscillationReport r = analyse_oscillation(s.t, s.y);
  EXPECT_EQ(r.kind, OscillationKind::sustained) << to_string(r.kind);
  EXPECT_NEAR(r.frequency_hz / hz, 1.0, 0.02);
  EXPECT_NEAR(r.peak_to_peak / (2.0 * amplitude), 1.0, 0.10);
  EXPECT_LT(std::abs(r.damping_ratio), OscillationOptions{}.sustained_damping);
  EXPECT_NEAR(r.noise / sigma, 1.0, 0.15);
  EXPECT_GE(r.cycles, 25);
  // The mean of the analysed part: all of it, t in [0, 1] (nothing is skipped by default).
  double expected_mean = 0.0;
  const int n = 1000;
  for (int i = 0; i < n; ++i) expected_mean += GetParam().mean((i + 0.5) / n) / n;
  EXPECT_NEAR(r.mean, expected_mean, 0.05 * amplitude);
  EXPECT_EQ(r.analysed_from, 0.0);
  EXPECT_EQ(r.analysed_to, 1.0);
  EXPECT_EQ(r.analysed_samples, s.t.size());
}

INSTANTIATE_TEST_SUITE_P(
    Drifts, SustainedWithNoise,
    ::testing::Values(DriftCase{"LinearDrift", [](double t) { return 10.0 + 30.0 * t; }},
                      DriftCase{"QuadraticDrift", [](double t) { return 10.0 + 20.0 * t * t; }},
                      DriftCase{"SlowWander", [](double t) { return 10.0 + 4.0 * std::sin(2.0 * pi * 1.3 * t); }}),
    [](const ::testing::TestParamInfo<DriftCase>& info) { return std::string(info.param.name); });

// First-order step response 1 - exp(-t / tau) (Ogata, Modern Control
// Engineering): no oscillation at all, whatever the noise does.
TEST(Oscillation, FirstOrderStepWithNoiseIsSettled) {
  const double tau = 0.02;
  for (unsigned seed = 1; seed <= 10; ++seed) {
    Signal s{uniform_times(0.5, 5000.0), {}};
    for (double ti : s.t) s.y.push_back(5.0 * (1.0 - std::exp(-ti / tau)));
    add_noise(s, 0.05, seed);
    const OscillationReport r = analyse_oscillation(s.t, s.y);
    EXPECT_EQ(r.kind, OscillationKind::settled) << "seed " << seed << ": " << to_string(r.kind);
    EXPECT_EQ(r.frequency_hz, 0.0);
    EXPECT_EQ(r.peak_to_peak, 0.0);
    EXPECT_EQ(r.cycles, 0);
    EXPECT_NEAR(r.noise / 0.05, 1.0, 0.15);
    // The mean of 5 (1 - exp(-t / tau)) over the whole 0.5 s analysed:
    // 5 (1 - (tau / 0.5) (1 - exp(-0.5 / tau))).
    EXPECT_NEAR(r.mean, 5.0 * (1.0 - tau / 0.5 * (1.0 - std::exp(-0.5 / tau))), 0.01);
  }
}

// White noise alone (Bendat & Piersol) is no oscillation either.
TEST(Oscillation, WhiteNoiseAloneIsSettled) {
  for (unsigned seed = 100; seed < 120; ++seed) {
    Signal s{uniform_times(1.0, 2000.0), std::vector<double>(2001, 7.0)};
    add_noise(s, 0.3, seed);
    const OscillationReport r = analyse_oscillation(s.t, s.y);
    EXPECT_EQ(r.kind, OscillationKind::settled) << "seed " << seed << ": " << to_string(r.kind);
  }
}

// A step at the start of the stretch (first-order rise with a time constant
// of half a period, Ogata) under a steady sinusoid: a skipped start keeps it
// out of the measurement, and the report says what was analysed.
TEST(Oscillation, StepAtTheStartOfTheStretchIsSkippedWhenAsked) {
  const double amplitude = 1.0;
  Signal s{uniform_times(1.0, 4000.0), {}};
  for (double ti : s.t) s.y.push_back(50.0 * (1.0 - std::exp(-ti / 0.02)) + amplitude * std::sin(2.0 * pi * 25.0 * ti));
  add_noise(s, 0.05 * amplitude, 7);
  OscillationOptions skip;
  skip.skip_fraction = 0.2;
  const OscillationReport r = analyse_oscillation(s.t, s.y, std::nullopt, std::nullopt, skip);
  EXPECT_EQ(r.analysed_from, 0.2);
  EXPECT_EQ(r.analysed_to, 1.0);
  EXPECT_EQ(r.analysed_samples, 3201u);
  EXPECT_EQ(r.kind, OscillationKind::sustained) << to_string(r.kind);
  EXPECT_NEAR(r.frequency_hz / 25.0, 1.0, 0.02);
  EXPECT_NEAR(r.peak_to_peak / (2.0 * amplitude), 1.0, 0.10);
  EXPECT_LT(std::abs(r.damping_ratio), OscillationOptions{}.sustained_damping);
  EXPECT_NEAR(r.mean, 50.0, 0.1);
}

// Band-limited random data (white noise through a low-pass filter; Bendat &
// Piersol, Random Data) swings through zero like an oscillation but does not
// repeat itself: its cycles scatter in length. No more than a rare seed may
// pass for an oscillation.
TEST(Oscillation, BandLimitedRandomSignalIsNoOscillation) {
  int oscillating = 0;
  for (unsigned seed = 1; seed <= 20; ++seed) {
    Signal white{uniform_times(4.0, 1000.0), std::vector<double>(4001, 0.0)};
    add_noise(white, 1.0, seed);
    // Two passes of a 40-sample moving average: a smooth random signal.
    std::vector<double> y = white.y;
    for (int pass = 0; pass < 2; ++pass) {
      std::vector<double> smoothed;
      for (std::size_t i = 0; i + 40 <= y.size(); ++i) {
        double sum = 0.0;
        for (std::size_t k = i; k < i + 40; ++k) sum += y[k];
        smoothed.push_back(sum / 40.0);
      }
      y = smoothed;
    }
    const std::vector<double> t(white.t.begin(), white.t.begin() + static_cast<std::ptrdiff_t>(y.size()));
    if (analyse_oscillation(t, y).kind != OscillationKind::settled) ++oscillating;
  }
  EXPECT_LE(oscillating, 2);
}

// Sampling must not change the answer: the same damped sine (Thomson &
// Dahleh) and the same noisy sustained sine with a drift, sampled at
// jittered and at randomly spaced instants, give what uniform sampling gives.
TEST(Oscillation, NonUniformSamplingGivesTheSameAnswer) {
  std::mt19937 rng(2024);
  std::uniform_real_distribution<double> jitter(-0.4, 0.4);
  std::uniform_real_distribution<double> spacing(0.5, 1.5);
  const double rate = 5000.0;
  std::vector<double> jittered;
  for (std::size_t i = 0; i <= 2000; ++i) jittered.push_back((static_cast<double>(i) + jitter(rng)) / rate);
  std::vector<double> random_walk{0.0};
  while (random_walk.back() < 0.4) random_walk.push_back(random_walk.back() + spacing(rng) / rate);

  auto expect_same = [](const OscillationReport& a, const OscillationReport& b, const char* what) {
    SCOPED_TRACE(what);
    EXPECT_EQ(a.kind, b.kind) << to_string(a.kind) << " vs " << to_string(b.kind);
    EXPECT_NEAR(a.frequency_hz / b.frequency_hz, 1.0, 0.005);
    EXPECT_NEAR(a.peak_to_peak / b.peak_to_peak, 1.0, 0.03);
    EXPECT_NEAR(a.damping_ratio, b.damping_ratio, 0.003);
    EXPECT_NEAR(a.mean, b.mean, 0.01);
  };

  const OscillationReport uniform_damped =
      analyse_oscillation(uniform_times(0.4, rate), damped_sine(uniform_times(0.4, rate), 50.0, 0.08, 1.0, 2.0).y);
  for (const std::vector<double>* t : {&jittered, &random_walk}) {
    const Signal s = damped_sine(*t, 50.0, 0.08, 1.0, 2.0);
    expect_same(analyse_oscillation(s.t, s.y), uniform_damped, "damped");
  }

  auto noisy_sine = [](const std::vector<double>& t) {
    Signal s{t, {}};
    for (double ti : t) s.y.push_back(1.0 + 5.0 * ti + std::sin(2.0 * pi * 60.0 * ti));
    add_noise(s, 0.05, 99);
    return s;
  };
  const Signal uniform = noisy_sine(uniform_times(0.4, rate));
  const OscillationReport uniform_sustained = analyse_oscillation(uniform.t, uniform.y);
  EXPECT_EQ(uniform_sustained.kind, OscillationKind::sustained);
  for (const std::vector<double>* t : {&jittered, &random_walk}) {
    const Signal s = noisy_sine(*t);
    expect_same(analyse_oscillation(s.t, s.y), uniform_sustained, "sustained with noise");
  }
}

// The stretch bounds select what is analysed: a sinusoid (Thomson & Dahleh)
// that stops half-way is sustained in the first half and settled after.
TEST(Oscillation, StretchBoundsSelectThePartAnalysed) {
  Signal s{uniform_times(1.0, 4000.0), {}};
  for (double ti : s.t) s.y.push_back(ti < 0.5 ? std::sin(2.0 * pi * 40.0 * ti) : 0.0);
  add_noise(s, 0.02, 3);
  EXPECT_EQ(analyse_oscillation(s.t, s.y, 0.0, 0.5).kind, OscillationKind::sustained);
  EXPECT_EQ(analyse_oscillation(s.t, s.y, 0.5, 1.0).kind, OscillationKind::settled);
  EXPECT_EQ(analyse_oscillation(s.t, s.y, 0.5).kind, OscillationKind::settled);
}

// The amplitude floor decides what counts as settled: a sinusoid of
// amplitude 1 swings 2 peak to peak (Thomson & Dahleh).
TEST(Oscillation, AmplitudeFloorMakesSmallOscillationsSettled) {
  Signal s{uniform_times(1.0, 4000.0), {}};
  for (double ti : s.t) s.y.push_back(std::sin(2.0 * pi * 40.0 * ti));
  OscillationOptions options;
  options.amplitude_floor = 1.9;
  const OscillationReport above = analyse_oscillation(s.t, s.y, std::nullopt, std::nullopt, options);
  EXPECT_EQ(above.kind, OscillationKind::sustained);
  EXPECT_NEAR(above.peak_to_peak, 2.0, 0.02);
  options.amplitude_floor = 2.1;
  const OscillationReport r = analyse_oscillation(s.t, s.y, std::nullopt, std::nullopt, options);
  EXPECT_EQ(r.kind, OscillationKind::settled);
  EXPECT_EQ(r.frequency_hz, 0.0);
}

// Bad input is refused with std::invalid_argument (the header's contract).
TEST(Oscillation, BadInputThrows) {
  const std::vector<double> t = uniform_times(0.1, 1000.0);  // 101 points
  const std::vector<double> y(t.size(), 1.0);
  const std::vector<double> shorter(t.size() - 1, 1.0);
  EXPECT_THROW(analyse_oscillation(t, shorter), std::invalid_argument);

  const std::vector<double> seven_t(t.begin(), t.begin() + 7);
  const std::vector<double> seven_y(7, 1.0);
  EXPECT_THROW(analyse_oscillation(seven_t, seven_y), std::invalid_argument);
  EXPECT_THROW(analyse_oscillation(t, y, 0.0, 0.0065), std::invalid_argument);  // 7 samples in the stretch
  EXPECT_NO_THROW(analyse_oscillation(t, y, 0.0, 0.0075));                      // 8 samples

  std::vector<double> decreasing = t;
  std::swap(decreasing[40], decreasing[41]);
  EXPECT_THROW(analyse_oscillation(decreasing, y), std::invalid_argument);
  std::vector<double> repeated = t;
  repeated[41] = repeated[40];
  EXPECT_THROW(analyse_oscillation(repeated, y), std::invalid_argument);

  EXPECT_THROW(analyse_oscillation(t, y, 0.05, 0.02), std::invalid_argument);
  std::vector<double> with_nan = y;
  with_nan[10] = std::numeric_limits<double>::quiet_NaN();
  EXPECT_THROW(analyse_oscillation(t, with_nan), std::invalid_argument);
  OscillationOptions bad;
  bad.skip_fraction = 1.0;
  EXPECT_THROW(analyse_oscillation(t, y, std::nullopt, std::nullopt, bad), std::invalid_argument);
}

TEST(Oscillation, KindsHaveNames) {
  EXPECT_STREQ(to_string(OscillationKind::settled), "settled");
  EXPECT_STREQ(to_string(OscillationKind::settling), "settling");
  EXPECT_STREQ(to_string(OscillationKind::decaying_slowly), "decaying slowly");
  EXPECT_STREQ(to_string(OscillationKind::sustained), "sustained oscillation");
}

}  // namespace
