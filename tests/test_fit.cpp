// Fitting parameters to a recorded trace: the model's own output, with known
// parameters and added noise, must give those parameters back within the
// stated uncertainty; a parameter the trace cannot see must be called so.
// Then recordings made by the independent scipy reference
// (tests/python/make_field_demos.py): the truth within the standard errors
// and their coverage in a repeated-noise study, the verdict on a model
// difference and on another machine, the criterion met, local minima.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <random>

#include "swashtune/field_trace.hpp"
#include "swashtune/fit.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/simulator.hpp"
#include "v1_pump.hpp"

using namespace swashtune;

namespace {

// On the v1 pump: its open control passage lets the spool's damping show in
// the slam's pressure, so both parameters can be recovered.
Scenario slam(double duration) {
  Scenario s;
  s.parameters = v1_pump();
  s.settings.duration = duration;
  s.settings.sample_interval = 0.25e-3;
  s.events = {Event{0.02, "load.opening", 0.0, 0.005, 0}};
  return s;
}

// A "recording": the model's discharge pressure with Gaussian noise.
FieldTrace record(const Scenario& truth, double noise_pa, unsigned seed) {
  const RunResult r = run_scenario(truth);
  std::mt19937 random(seed);
  std::normal_distribution<double> noise(0.0, noise_pa);
  FieldTrace trace;
  trace.source = "synthetic";
  for (const Sample& s : r.trace) {
    trace.time.push_back(s.time);
    trace.pressure.push_back(s.x[state::discharge_pressure] + noise(random));
  }
  return trace;
}

}  // namespace

TEST(Fit, RecoversLineVolumeAndSpoolDampingFromANoisyTrace) {
  Scenario truth = slam(0.12);
  truth.parameters.line_volume = 1.5e-3;
  truth.parameters.spool_damping = 12.0;
  const FieldTrace trace = record(truth, 0.5e5, 7);  // 0.5 bar noise

  Scenario guess = slam(0.12);  // 1 L and 20 N s/m to start from
  FitOptions options;
  options.free_keys = {"line.volume", "compensator.spool_damping"};
  int calls = 0;
  const FitResult fit = fit_to_trace(guess, trace, options, [&](int, double) { return ++calls > 0; });
  ASSERT_EQ(fit.parameters.size(), 2u);
  EXPECT_TRUE(fit.converged) << fit.message;
  EXPECT_EQ(calls, fit.simulations);
  EXPECT_LT(fit.rms, fit.initial_rms);
  // The residual is the noise: nothing systematic left.
  EXPECT_NEAR(fit.rms / 0.5e5, 1.0, 0.1);
  const double truth_values[] = {1.5e-3, 12.0};
  for (int i = 0; i < 2; ++i) {
    const FittedParameter& p = fit.parameters[i];
    EXPECT_TRUE(p.identifiable) << p.key;
    EXPECT_GT(p.standard_error, 0.0) << p.key;
    EXPECT_LT(p.standard_error, 0.1 * p.value) << p.key;
    EXPECT_LT(std::abs(p.value - truth_values[i]), 3.0 * p.standard_error)
        << p.key << ": " << p.value << " +- " << p.standard_error;
  }
  EXPECT_NEAR(fit.fitted.parameters.line_volume, fit.parameters[0].value, 0.0);
}

// With the load valve shut all along, its discharge coefficient has no effect
// on the pressure: the fit must say so instead of inventing a value.
TEST(Fit, SaysWhenAParameterIsNotIdentifiable) {
  Scenario truth;
  truth.parameters.opening = 0.0;
  truth.settings.duration = 0.1;
  truth.settings.sample_interval = 0.5e-3;
  truth.events = {Event{0.02, "compensator.setting", 200e5, 0.01, 0}};
  const FieldTrace trace = record(truth, 0.2e5, 3);
  FitOptions options;
  options.free_keys = {"load.discharge_coefficient", "compensator.spring_rate"};
  const FitResult fit = fit_to_trace(truth, trace, options);
  ASSERT_EQ(fit.parameters.size(), 2u);
  EXPECT_FALSE(fit.parameters[0].identifiable);
  EXPECT_NE(fit.parameters[0].note.find("not identifiable"), std::string::npos);
}

TEST(Fit, CancelStopsTheSearchAndRefusesBadKeys) {
  const Scenario s = slam(0.05);
  const FieldTrace trace = record(s, 0.1e5, 1);
  FitOptions options;
  options.free_keys = {"line.volume"};
  const FitResult fit = fit_to_trace(s, trace, options, [](int simulations, double) { return simulations < 3; });
  EXPECT_TRUE(fit.cancelled);
  EXPECT_EQ(fit.simulations, 3);
  const FitResult at_once = fit_to_trace(s, trace, options, [](int, double) { return false; });
  EXPECT_TRUE(at_once.cancelled);  // even before the first step
  EXPECT_EQ(at_once.simulations, 1);
  options.free_keys = {"line.volumes"};
  EXPECT_THROW(fit_to_trace(s, trace, options), ScenarioError);
  options.free_keys = {"compensator.flow_forces"};
  EXPECT_THROW(fit_to_trace(s, trace, options), ScenarioError);
  FieldTrace late = trace;
  for (double& t : late.time) t += 10.0;  // nothing inside the run
  options.free_keys = {"line.volume"};
  EXPECT_THROW(fit_to_trace(s, late, options), ScenarioError);
}

// ---- recordings made by the independent scipy reference ------------------
// (tests/python/make_field_demos.py; the C++ side is tests/data/fit/slam.toml,
// started at 1 L and 20 N*s/m; the recordings were made at 1.5 L, 12 N*s/m)

namespace {

const std::string fit_data = std::string(SWASHTUNE_SOURCE_DIR) + "/tests/data/fit/";

Scenario fit_plant() { return load_scenario(fit_data + "slam.toml"); }

FitOptions volume_and_damping(int starts) {
  FitOptions options;
  options.free_keys = {"line.volume", "compensator.spool_damping"};
  options.starts = starts;
  return options;
}

FieldTrace with_noise(const FieldTrace& exact, double noise_pa, unsigned seed) {
  FieldTrace noisy = exact;
  std::mt19937 random(seed);
  std::normal_distribution<double> noise(0.0, noise_pa);
  for (double& p : noisy.pressure) p += noise(random);
  return noisy;
}

}  // namespace

TEST(FitReference, ReproducesTheReferenceWithinItsNoiseAndFindsTheTruth) {
  const FieldTrace exact = read_field_trace(fit_data + "slam-reference.csv");
  const FitResult fit = fit_to_trace(fit_plant(), with_noise(exact, 0.5e5, 21), volume_and_damping(3));
  EXPECT_TRUE(fit.converged) << fit.message;
  EXPECT_NE(fit.stop, FitStop::stalled);
  EXPECT_LT(fit.remaining_step, 0.2);
  ASSERT_EQ(fit.starts.size(), 3u);
  // A start that ends elsewhere (here the spool damping runs to zero from
  // the low start) ends clearly worse, and is named.
  for (const FitStart& st : fit.starts)
    if (!st.same_minimum) {
      EXPECT_GT(st.rms, 1.1 * fit.rms);
      EXPECT_NE(fit.starts_note.find("local minima"), std::string::npos) << fit.starts_note;
    }
  EXPECT_NEAR(fit.noise / 0.5e5, 1.0, 0.1);  // the estimate's deviation is 7 % at 481 samples
  EXPECT_EQ(fit.verdict, FitVerdict::reproduces) << fit.verdict_text;
  const double truth[] = {1.5e-3, 12.0};
  for (int i = 0; i < 2; ++i)
    EXPECT_LT(std::abs(fit.parameters[i].value - truth[i]), 3.0 * fit.parameters[i].standard_error)
        << fit.parameters[i].key << " " << fit.parameters[i].value << " +- " << fit.parameters[i].standard_error;
  // The fitted trace is the fitted scenario's pressure at the samples.
  ASSERT_EQ(fit.simulated.size(), fit.times.size());
  double sum = 0.0;
  for (std::size_t i = 0; i < fit.times.size(); ++i) sum += std::pow(fit.simulated[i] - fit.measured[i], 2);
  EXPECT_NEAR(std::sqrt(sum / fit.times.size()), fit.rms, 1e-9 * fit.rms);
}

// A repeated-noise study: 95 % intervals (1.96 standard errors) must cover
// the true value in about 95 % of recordings. Recordings: the reference's
// exact trace plus Gaussian noise, one seed each.
struct CoverageFigures {
  int covered[2] = {0, 0};
  double spread_to_error[2] = {0, 0};  // spread of the estimates / mean standard error
  int converged = 0;
};

CoverageFigures coverage_study(const std::vector<std::string>& keys, int starts, int repetitions) {
  const FieldTrace exact = read_field_trace(fit_data + "slam-reference.csv");
  Scenario plant = fit_plant();
  const std::map<std::string, double> truth = {{"line.volume", 1.5e-3}, {"compensator.spool_damping", 12.0}};
  // The parameters not fitted are held at the recording's values: otherwise
  // the model differs from the machine and no interval need cover anything.
  for (const auto& [key, value] : truth)
    if (std::find(keys.begin(), keys.end(), key) == keys.end()) find_parameter(key)->set(plant.parameters, value);
  FitOptions options;
  options.free_keys = keys;
  options.starts = starts;
  CoverageFigures out;
  double sum[2] = {0, 0}, sum_squares[2] = {0, 0}, se_sum[2] = {0, 0};
  for (int k = 0; k < repetitions; ++k) {
    const FitResult fit = fit_to_trace(plant, with_noise(exact, 0.5e5, 1000 + k), options);
    out.converged += fit.converged ? 1 : 0;
    for (std::size_t i = 0; i < keys.size(); ++i) {
      const FittedParameter& p = fit.parameters[i];
      if (std::abs(p.value - truth.at(p.key)) <= 1.96 * p.standard_error) ++out.covered[i];
      sum[i] += p.value;
      sum_squares[i] += p.value * p.value;
      se_sum[i] += p.standard_error;
    }
  }
  for (std::size_t i = 0; i < keys.size(); ++i) {
    const double mean = sum[i] / repetitions;
    const double spread = std::sqrt(std::max(0.0, sum_squares[i] - repetitions * mean * mean) / (repetitions - 1));
    out.spread_to_error[i] = spread / (se_sum[i] / repetitions);
    std::printf(
        "coverage of %s at 95 %%: %d of %d (%.1f %%); spread of the estimates / standard error %.3f; "
        "%d of %d converged; %d start(s)\n",
        keys[i].c_str(), out.covered[i], repetitions, 100.0 * out.covered[i] / repetitions, out.spread_to_error[i],
        out.converged, repetitions, starts);
  }
  return out;
}

// In CI: the line volume alone, 40 recordings. With a true coverage of 95 %,
// fewer than 34 covered has a chance of 1.4 % (binomial); the spread of the
// estimates must match the standard errors (1 +- 0.35: three deviations of
// a spread from 40 samples).
TEST(FitReference, StandardErrorsCoverTheTruthInARepeatedNoiseStudy) {
  const CoverageFigures f = coverage_study({"line.volume"}, 1, 40);
  EXPECT_EQ(f.converged, 40);
  EXPECT_GE(f.covered[0], 34);
  EXPECT_NEAR(f.spread_to_error[0], 1.0, 0.35);
}

// The bigger study, by hand (it prints its figures; a few minutes):
//   build/tests/test_fit --gtest_also_run_disabled_tests --gtest_filter='*DISABLED_*'
TEST(FitReference, DISABLED_CoverageStudyOfTwoParameters) {
  coverage_study({"line.volume", "compensator.spool_damping"}, 1, 200);
  coverage_study({"line.volume", "compensator.spool_damping"}, 3, 200);
}

// A load valve off the square-root law, piston ripple and quantisation: the
// C++ model cannot reproduce it; the fit must say that differences remain
// rather than pass its values off as this machine's.
TEST(FitReference, SaysWhenSystematicDifferencesRemain) {
  const FitResult fit =
      fit_to_trace(fit_plant(), read_field_trace(fit_data + "slam-other-orifice-law.csv"), volume_and_damping(3));
  EXPECT_TRUE(fit.converged) << fit.message;
  EXPECT_GT(fit.residual_to_noise, fits_within_noise_limit(fit.samples));
  EXPECT_EQ(fit.verdict, FitVerdict::systematic_difference) << fit.verdict_text;
  EXPECT_NE(fit.verdict_text.find("standard errors"), std::string::npos) << fit.verdict_text;
}

// A recording of another machine (setting 240 bar, stiffer bias spring): the
// model does not fit it, and says so plainly.
TEST(FitReference, SaysWhenTheModelDoesNotFitTheMachine) {
  const FitResult fit =
      fit_to_trace(fit_plant(), read_field_trace(fit_data + "slam-other-machine.csv"), volume_and_damping(1));
  EXPECT_GT(fit.residual_to_noise, kDoesNotFit);
  EXPECT_EQ(fit.verdict, FitVerdict::does_not_fit);
  EXPECT_NE(fit.verdict_text.find("does not fit this machine"), std::string::npos) << fit.verdict_text;
}

// The criterion met is reported as it is: out of simulations is not
// convergence.
TEST(FitReference, ReportsTheIterationLimitAsNotConverged) {
  FitOptions options = volume_and_damping(1);
  options.max_iterations = 1;
  const FitResult fit = fit_to_trace(fit_plant(), read_field_trace(fit_data + "slam-reference.csv"), options);
  EXPECT_FALSE(fit.converged);
  EXPECT_EQ(fit.stop, FitStop::iteration_limit);
  EXPECT_EQ(fit.message.rfind("not converged (iteration limit", 0), 0u) << fit.message;
  options.starts = 0;
  EXPECT_THROW(fit_to_trace(fit_plant(), read_field_trace(fit_data + "slam-reference.csv"), options), ScenarioError);
}

// Hunting at about 470 Hz: fitting the line volume (which sets the
// frequency) from 0.4 L, the search slips into a local minimum; a restart
// finds the recording's 0.25 L, and the fit says the starts disagree.
TEST(FitReference, RestartsFindTheMinimumAndReportLocalMinima) {
  Scenario plant =
      load_scenario(std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/hunting-oversized-damping-orifice.toml");
  plant.settings.duration = 0.1;
  plant.parameters.line_volume = 0.4e-3;
  FitOptions options;
  options.free_keys = {"line.volume"};
  const FieldTrace trace = read_field_trace(fit_data + "hunting-reference.csv");
  const FitResult fit = fit_to_trace(plant, trace, options);
  ASSERT_EQ(fit.starts.size(), 3u);
  EXPECT_FALSE(fit.starts_agree);
  EXPECT_FALSE(fit.starts[0].same_minimum);  // the given start is trapped
  EXPECT_NE(fit.starts_note.find("local minima"), std::string::npos) << fit.starts_note;
  EXPECT_LT(std::abs(fit.parameters[0].value - 0.25e-3), 3.0 * fit.parameters[0].standard_error)
      << fit.parameters[0].value;
  EXPECT_EQ(fit.verdict, FitVerdict::reproduces) << fit.verdict_text;
  options.starts = 1;  // searched once, it is stuck and the residual says so
  const FitResult once = fit_to_trace(plant, trace, options);
  EXPECT_GT(once.residual_to_noise, kDoesNotFit) << once.verdict_text;
}
