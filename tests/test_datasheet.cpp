// Data-sheet figures as fit targets (issue 13, item 5): the target syntax,
// and fits that say what the figures cannot determine or cannot meet.
#include <gtest/gtest.h>

#include <cmath>

#include "swashtune/datasheet.hpp"
#include "swashtune/parameters.hpp"

using namespace swashtune;

namespace {

const std::string demos = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/";

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

std::string message_of(const std::string& targets) {
  try {
    parse_targets(targets);
  } catch (const ScenarioError& e) {
    return e.what();
  }
  return "";
}

}  // namespace

TEST(DataSheetTargets, TakeUnitsAndDefaultTolerances) {
  const std::vector<FigureTarget> t = parse_targets("off_stroke=35ms, on_stroke=0.09s+-10ms,droop=3%,deadhead=3100PSI");
  ASSERT_EQ(t.size(), 4u);
  EXPECT_EQ(t[0].figure, Figure::off_stroke);
  EXPECT_NEAR(t[0].value, 0.035, 1e-15);
  EXPECT_NEAR(t[0].tolerance, 0.0035, 1e-15);  // 10 % of a time
  EXPECT_FALSE(t[0].tolerance_given);
  EXPECT_NEAR(t[1].tolerance, 0.010, 1e-15);
  EXPECT_TRUE(t[1].tolerance_given);
  EXPECT_NEAR(t[2].value, 0.03, 1e-15);
  EXPECT_NEAR(t[3].value, 3100 * 6894.757293168361, 1e-5);  // psi: NIST SP 811
  EXPECT_NEAR(t[3].tolerance, 0.01 * t[3].value, 1e-6);     // 1 % of a pressure
}

TEST(DataSheetTargets, RefuseWhatTheyCannotReadNamingTheOption) {
  EXPECT_TRUE(contains(message_of("off_stroke=35"), "--target off_stroke=35: \"35\" has no unit")) << message_of("off_stroke=35");
  EXPECT_TRUE(contains(message_of("droop=3bar"), "droop is a percentage"));
  EXPECT_TRUE(contains(message_of("offstroke=35ms"), "the figures are off_stroke, on_stroke, droop, deadhead, cut_in, peak"));
  EXPECT_TRUE(contains(message_of("droop=3%,droop=2%"), "given twice"));
  EXPECT_TRUE(contains(message_of("droop=0%"), "tolerance must be above zero"));
  EXPECT_TRUE(contains(message_of("off_stroke=35ms,,droop=3%"), "empty item"));
}

// Against scipy.stats.chi2.ppf(0.99, k) (scipy 1.x, computed here with
// /usr/bin/python3): 6.6349, 9.2103, 11.3449, 13.2767, 15.0863, 16.8119,
// 18.4753, 20.0902, 21.666, 23.2093 for k = 1 to 10.
TEST(DataSheetFit, ChiSquarePercentileAgreesWithScipy) {
  const double scipy[] = {6.6349, 9.2103, 11.3449, 13.2767, 15.0863, 16.8119, 18.4753, 20.0902, 21.666, 23.2093};
  double worst = 0.0;
  for (int k = 1; k <= 10; ++k) worst = std::max(worst, std::abs(chi_square_99(k) / scipy[k - 1] - 1.0));
  std::printf("chi-square 99th percentile: worst relative error %.2e against scipy (k = 1..10)\n", worst);
  EXPECT_LT(worst, 3e-3);  // Wilson-Hilferty: 2.2e-3 at worst (k = 3)
}

// A fit recovers internal values from figures of the same model: a check of
// the search and its standard errors, not of the physics. Off-stroke time
// and droop see the control orifice and the compensator spring apart.
TEST(DataSheetFit, RecoversTheValuesBehindTheFigures) {
  Scenario truth = load_scenario(demos + "valve-slam.toml");
  find_parameter("compensator.control_orifice")->set(truth.parameters, 1.75e-3);
  find_parameter("compensator.spring_rate")->set(truth.parameters, 50e3);
  const DataSheetFigures f = datasheet_figures(truth, {}, {Figure::off_stroke, Figure::droop});
  ASSERT_TRUE(f.off_stroke && f.droop);
  DataSheetFitOptions options;
  options.free_keys = {"compensator.control_orifice", "compensator.spring_rate"};
  options.targets = parse_targets("off_stroke=" + std::to_string(1e3 * *f.off_stroke) + "ms+-0.5ms,droop=" +
                                  std::to_string(100 * *f.droop) + "%+-0.05%");
  options.starts = 1;
  const DataSheetFitResult r = fit_to_datasheet(load_scenario(demos + "valve-slam.toml"), options);
  std::printf("from %.2f ms, %.3f %%: orifice %.4f +- %.4f mm, spring %.3f +- %.3f N/mm, %d tests\n",
              1e3 * *f.off_stroke, 100 * *f.droop, 1e3 * r.parameters[0].value, 1e3 * r.parameters[0].standard_error,
              1e-3 * r.parameters[1].value, 1e-3 * r.parameters[1].standard_error, r.simulations);
  EXPECT_TRUE(r.converged) << r.message;
  EXPECT_TRUE(r.all_met) << r.verdict_text;
  EXPECT_TRUE(r.undetermined.empty()) << r.verdict_text;
  EXPECT_NEAR(r.parameters[0].value, 1.75e-3, 2e-6);
  EXPECT_NEAR(r.parameters[1].value, 50e3, 50.0);
  EXPECT_GT(r.parameters[0].standard_error, 1e-3 * 1.75e-3);
  EXPECT_LT(r.parameters[0].standard_error, 0.2 * 1.75e-3);
}

// Off-stroke and on-stroke times both follow the control orifice and the
// bias spring's preload in nearly the same proportion: the fit meets them
// and says that only a combination of the two is known.
TEST(DataSheetFit, SaysWhenTwoParametersAreSeenOnlyTogether) {
  Scenario truth = load_scenario(demos + "valve-slam.toml");
  find_parameter("compensator.control_orifice")->set(truth.parameters, 2.0e-3);
  find_parameter("bias_spring.force_at_full_stroke")->set(truth.parameters, 200.0);
  const DataSheetFigures f = datasheet_figures(truth, {}, {Figure::off_stroke, Figure::on_stroke});
  ASSERT_TRUE(f.off_stroke && f.on_stroke);
  DataSheetFitOptions options;
  options.free_keys = {"compensator.control_orifice", "bias_spring.force_at_full_stroke"};
  options.targets = parse_targets("off_stroke=" + std::to_string(1e3 * *f.off_stroke) + "ms+-0.5ms,on_stroke=" +
                                  std::to_string(1e3 * *f.on_stroke) + "ms+-1ms");
  options.starts = 1;
  const DataSheetFitResult r = fit_to_datasheet(load_scenario(demos + "valve-slam.toml"), options);
  EXPECT_TRUE(r.all_met) << r.verdict_text;
  ASSERT_FALSE(r.undetermined.empty());
  EXPECT_TRUE(contains(r.undetermined.back(), "only a combination of compensator.control_orifice and "
                                              "bias_spring.force_at_full_stroke"))
      << r.undetermined.back();
}

TEST(DataSheetFit, SaysWhenTooFewFiguresCannotDetermineTheParameters) {
  DataSheetFitOptions options;
  options.free_keys = {"compensator.control_orifice", "compensator.spring_rate"};
  options.targets = parse_targets("droop=2.5%");
  options.starts = 1;
  const DataSheetFitResult r = fit_to_datasheet(load_scenario(demos + "valve-slam.toml"), options);
  ASSERT_FALSE(r.undetermined.empty());
  EXPECT_TRUE(contains(r.undetermined.front(), "1 figure cannot determine 2 parameters")) << r.undetermined.front();
  EXPECT_TRUE(contains(r.verdict_text, "what the figures leave open")) << r.verdict_text;
  // The control orifice hardly moves the droop: not determined.
  EXPECT_FALSE(r.parameters[0].identifiable);
}

TEST(DataSheetFit, NamesTheFigureItCannotMeet) {
  DataSheetFitOptions options;
  options.free_keys = {"bias_spring.force_at_full_stroke"};
  options.targets = parse_targets("off_stroke=1ms");
  options.starts = 1;
  const DataSheetFitResult r = fit_to_datasheet(load_scenario(demos + "valve-slam.toml"), options);
  EXPECT_FALSE(r.all_met);
  EXPECT_TRUE(contains(r.verdict_text, "cannot meet off_stroke (target 1 ms")) << r.verdict_text;
}

TEST(DataSheetFit, RefusesATestThatDoesNotStartAtFullFlow) {
  Scenario s = load_scenario(demos + "valve-slam.toml");
  s.parameters.opening = 0.05;
  DataSheetFitOptions options;
  options.free_keys = {"compensator.control_orifice"};
  options.targets = parse_targets("off_stroke=35ms");
  try {
    fit_to_datasheet(s, options);
    FAIL() << "no error";
  } catch (const ScenarioError& e) {
    EXPECT_TRUE(contains(e.what(), "it needs full flow: open load.opening further")) << e.what();
  }
}
