// Ranked remedies (issue 15, item 3): each remedy claimed to stop the
// hunting is shown stable by the eigenvalues of the changed design (solved
// again here) and by a run's oscillation analysis, and it is the smallest:
// a little less of the same change still hunts.
#include "swashtune/remedies.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "swashtune/analysis.hpp"
#include "swashtune/scenario.hpp"

using namespace swashtune;

namespace {

const std::string demos = std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/";

double least_damping_at(const Scenario& s, const ParameterSpec& spec, double value) {
  ModelParameters p = s.parameters;
  spec.set(p, value);
  p.opening = 0.0;
  const StabilityReport r = analyse_stability(p, s.settings);
  if (!r.stable) return -1.0;
  return r.dominant ? r.dominant->damping_ratio : 1.0;
}

}  // namespace

// Each remedy claimed for the aerated-oil demo is stable by the eigenvalues
// of the changed design and settles in a run of the demo's events.
TEST(Remedies, AeratedOilRemediesAreStableAndSettle) {
  const Scenario s = load_scenario(demos + "hunting-aerated-oil.toml");
  RemedyOptions options;
  options.jobs = 2;
  const RemedyReport r = rank_remedies(s, options);
  ASSERT_TRUE(r.hunts);
  ASSERT_FALSE(r.by_runs);
  EXPECT_GT(r.run_peak_to_peak, 10e5);  // the present pump swings by tens of bar
  int found = 0;
  double previous_size = 0.0;
  for (const Remedy& m : r.remedies) {
    if (!m.found) continue;
    ++found;
    EXPECT_GE(m.size, previous_size);  // ranked by how small the change is
    previous_size = m.size;
    EXPECT_FALSE(m.run_hunts) << m.action << ": the run still hunts at " << m.run_frequency_hz << " Hz";
    if (m.also_changes()) continue;  // bleeding the air: two keys
    EXPECT_GE(least_damping_at(s, *m.spec, m.to), options.least_damping - 1e-9) << m.action;
  }
  EXPECT_GE(found, 3);
  bool bleeding = false;  // the cause of this demo
  for (const Remedy& m : r.remedies) bleeding = bleeding || (m.found && m.action.find("bleed the air") == 0);
  EXPECT_TRUE(bleeding);
}

// On a demo whose verdict changes once along each change (the line and
// spool hunting at no flow), every remedy is also the smallest: 3 % of the
// way back toward the present value it still hunts.
TEST(Remedies, EachRemedyIsTheSmallestAmount) {
  const Scenario s = load_scenario(demos + "hunting-oversized-damping-orifice.toml");
  RemedyOptions options;
  options.jobs = 2;
  const RemedyReport r = rank_remedies(s, options);
  ASSERT_TRUE(r.hunts);
  int checked = 0;
  for (const Remedy& m : r.remedies) {
    if (!m.found || m.also_changes() || m.spec->is_none(m.from) || m.from <= 0.0) continue;
    EXPECT_GE(least_damping_at(s, *m.spec, m.to), options.least_damping - 1e-9) << m.action;
    EXPECT_FALSE(m.run_hunts) << m.action;
    const double less = m.spec->key == "fluid.temperature" || m.spec->key == "fluid.viscosity_grade"
                            ? m.from + 0.97 * (m.to - m.from)
                            : m.from * std::pow(m.to / m.from, 0.97);
    if (m.spec->key == "fluid.viscosity_grade") continue;  // grades are steps: the one below was tried and failed
    EXPECT_LT(least_damping_at(s, *m.spec, less), options.least_damping) << m.action;
    ++checked;
  }
  EXPECT_GE(checked, 2);
}

TEST(Remedies, StickySpoolIsJudgedByRunsAndTheRepairStopsIt) {
  RemedyOptions options;
  options.jobs = 2;
  const RemedyReport r = rank_remedies(load_scenario(demos + "hunting-sticky-spool.toml"), options);
  ASSERT_TRUE(r.hunts);
  EXPECT_TRUE(r.by_runs);
  bool repaired = false;
  for (const Remedy& m : r.remedies)
    if (m.spec->key == "faults.spool_friction") {
      repaired = m.found;
      EXPECT_EQ(m.to, 0.0);
      EXPECT_FALSE(m.run_hunts);
    }
  EXPECT_TRUE(repaired);
}

TEST(Remedies, APumpThatDoesNotHuntNeedsNone) {
  const RemedyReport r = rank_remedies(load_scenario(demos + "valve-slam.toml"));
  EXPECT_FALSE(r.hunts);
  EXPECT_TRUE(r.remedies.empty());
}
