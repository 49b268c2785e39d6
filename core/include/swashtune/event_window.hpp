// What a run keeps of one event window for its transient figures: fed with
// every solver step and every trace sample (before any thinning of the kept
// trace), in bounded memory, so that the figures of an event do not depend
// on how long the run is or how its trace is kept.
//
// The settling time needs the last time the pressure was outside a band
// around a final value that is known only when the window ends; the swash
// response needs the first time the angle reached a fraction of a change
// known only then. Both are answered by "staircases" of running extremes:
// the suffix maxima (and minima) of the pressure and the prefix maxima (and
// minima) of the angle. A staircase holds only the points that are records,
// and records closer in value than a resolution to the first of their group
// are merged towards the later time, so an answer is never early; the
// resolution starts far below any band (1e-9 of the signal's scale) and is
// coarsened (x4) only when a window makes more than 4096 records, so memory
// is bounded whatever the length. A long steady tail then merges first: its
// records lie within a hair of one another, the transient's far apart.
#pragma once

#include <cstddef>
#include <optional>
#include <vector>

#include "swashtune/oscillation.hpp"
#include "swashtune/parameters.hpp"

namespace swashtune {

// How an event window's pressure is examined for oscillation: the first 2 %
// (the event itself) is skipped; swings below 0.1 % of the setting count as
// none (a simulated trace has no measurement noise to set that floor).
OscillationOptions window_oscillation_options(const ModelParameters& p);

namespace detail {

// Running extremes of a signal fed in time order. `suffix`: for any time,
// the largest value from then to the end; prefix: the largest so far.
// `sign` -1 turns maxima into minima.
class Staircase {
 public:
  Staircase(bool suffix, int sign, double resolution);
  void add(double t, double v);
  // suffix: the last time the signal was above `level` (interpolated to
  // where it came down through it); nullopt if it never was.
  std::optional<double> last_above(double level) const;
  // prefix: the first time the signal reached `level` (interpolated from the
  // point before); nullopt if it never did.
  std::optional<double> first_reaching(double level) const;
  // suffix: the extreme of the signal from time t to the end.
  std::optional<double> extreme_after(double t) const;
  std::size_t size() const { return steps_.size(); }
  double resolution() const { return resolution_; }

  static constexpr std::size_t capacity = 4096;

 private:
  struct Step {
    double t, v;              // v already multiplied by sign
    double anchor;            // the value the merged group started at (merging never drifts from it)
    double other_t, other_v;  // suffix: the point after; prefix: the point before
    bool has_other;
  };
  void compress();

  bool suffix_;
  int sign_;
  double resolution_;
  std::vector<Step> steps_;
  double last_t_ = 0.0, last_v_ = 0.0;
  bool any_ = false;
};

}  // namespace detail

class EventWindow {
 public:
  // [start, end] of the window; the scales set the staircases' resolution;
  // the oscillation options those of the pressure's analysis at the end.
  EventWindow(double start, double end, double pressure_scale, double angle_scale,
              const OscillationOptions& oscillation);

  double start() const { return start_; }
  double end() const { return end_; }

  // A solver step's end or a trace sample, in time order; points outside
  // [start, end] are ignored. Samples (uniform in time) also feed the
  // oscillation analysis.
  void observe(double t, double pressure, double angle, bool sample);
  // Analyses the oscillation and frees the sample buffer; called once when
  // the run has passed the window's end.
  void finish();

  bool observed() const { return count_ > 0; }
  double initial_pressure() const { return first_p_; }
  double final_pressure() const { return last_p_; }
  double initial_angle() const { return first_a_; }
  double final_angle() const { return last_a_; }
  double peak_pressure() const { return peak_; }
  double lowest_pressure() const { return lowest_; }

  // The time after which the pressure stays within [low, high] to the end:
  // start() when it always did.
  double settled_from(double low, double high) const;
  // Highest minus lowest pressure from time t to the end.
  double pressure_span_after(double t) const;
  // First time the angle reached `level` going up (rising) or down; nullopt if never.
  std::optional<double> angle_first_reaching(double level, bool rising) const;

  // Of the pressure over the window, from the samples: the whole window when
  // it has at most max_oscillation_samples of them, else its last
  // max_oscillation_samples (the window's end is what says whether it hunts).
  const OscillationReport& oscillation() const { return oscillation_; }
  double oscillation_from() const { return oscillation_from_; }
  double oscillation_to() const { return oscillation_to_; }

  static constexpr std::size_t max_oscillation_samples = std::size_t(1) << 17;

 private:
  double start_, end_;
  OscillationOptions oscillation_options_;
  long long count_ = 0;
  double first_p_ = 0.0, last_p_ = 0.0, first_a_ = 0.0, last_a_ = 0.0;
  double peak_ = 0.0, lowest_ = 0.0;
  detail::Staircase pressure_high_, pressure_low_;  // suffix max and min
  detail::Staircase angle_high_, angle_low_;        // prefix max and min
  // Ring of the last samples (times and pressures).
  std::vector<double> sample_t_, sample_p_;
  std::size_t samples_seen_ = 0;
  bool finished_ = false;
  OscillationReport oscillation_;
  double oscillation_from_ = 0.0, oscillation_to_ = 0.0;
};

}  // namespace swashtune
