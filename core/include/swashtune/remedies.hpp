// Ranked remedies for a pump that hunts (issue 15, item 3): each single
// change a plant can make, with the smallest amount of it that stops the
// hunting, what it costs in response time and droop, and a run of the
// scenario's events with the change to show it.
//
// "Stops the hunting" is decided by the eigenvalues where a linear model
// describes the loop: every closed-loop eigenvalue in the left half plane
// with the least damped oscillatory mode at a damping ratio of at least
// `least_damping` (0.05: a mode that rings down within about three cycles
// to a quarter; common practice, from memory). Where dry friction decides
// the loop, by runs: no window of the scenario's events with a sustained
// oscillation. The smallest amount is found by a scan from the present
// value to the change's limit and bisection of the first stretch that stops
// it (a second mode can take over further on, so the stretch that stops it
// need not reach the limit); every remedy found is run again and the run's
// oscillation analysis is given beside it.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "swashtune/analysis.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/parameters.hpp"
#include "swashtune/scenario.hpp"

namespace swashtune {

struct RemedyOptions {
  double load_opening = 0.0;   // where the loop is linearised (deadhead: where pumps hunt)
  double least_damping = 0.05;  // damping ratio a stopped hunt must reach
  int jobs = 1;
  int scan_points = 16;  // the path from the present value to the limit is scanned at these many points,
  int bisections = 10;   // then the first stretch that stops the hunting bisected (to 0.006 % of the path)
};

struct Remedy {
  const ParameterSpec* spec = nullptr;
  std::string action;  // in plant words: "fit a smaller control orifice"
  double from = 0.0, to = 0.0;  // stored units: present value and the remedy's
  double size = 0.0;   // how large a change: |ln(to / from)|, or 1 for resetting a fault or bleeding the air
  bool found = false;  // false: no amount up to the limit stops it (to = the limit tried)
  bool by_runs = false;  // decided by runs (dry friction), not by the eigenvalues
  // At the remedy: the linear figures (when they apply) and the run.
  std::optional<double> least_damping, least_damped_hz, phase_margin_deg, gain_margin_db;
  bool run_hunts = false;
  double run_frequency_hz = 0.0, run_peak_to_peak = 0.0;  // of the worst window
  // What it costs, against the present design (the data-sheet test from full flow).
  std::optional<double> off_stroke_change, on_stroke_change, droop_change;  // s, s, fraction
  std::string note;
  // Keys changed with this one (bleeding the air clears both air fractions).
  std::vector<const ParameterSpec*> also;
  bool also_changes() const { return !also.empty(); }
};

struct RemedyReport {
  bool hunts = false;  // the present design
  bool by_runs = false;
  std::optional<double> least_damping, least_damped_hz;  // present, when linear figures apply
  double run_frequency_hz = 0.0, run_peak_to_peak = 0.0;  // present run's worst window, when it hunts
  std::vector<Remedy> remedies;  // those found first, by size; then those not found
};

RemedyReport rank_remedies(const Scenario& scenario, const RemedyOptions& options = {});

}  // namespace swashtune
