// Fitting parameters to a recorded trace: the model's own output, with known
// parameters and added noise, must give those parameters back within the
// stated uncertainty; a parameter the trace cannot see must be called so.
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "v1_pump.hpp"
#include "swashtune/fit.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/simulator.hpp"

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
