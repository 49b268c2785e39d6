#include "swashtune/event_window.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

namespace swashtune {
namespace detail {

Staircase::Staircase(bool suffix, int sign, double resolution)
    : suffix_(suffix), sign_(sign), resolution_(resolution) {}

void Staircase::add(double t, double raw) {
  const double v = sign_ * raw;
  if (suffix_) {
    // The point before this one is always the last step (or merged into it).
    if (!steps_.empty() && !steps_.back().has_other) {
      steps_.back().other_t = t;
      steps_.back().other_v = v;
      steps_.back().has_other = true;
    }
    while (!steps_.empty() && steps_.back().v <= v) steps_.pop_back();
    if (!steps_.empty() && steps_.back().anchor - v < resolution_) {
      // Merged towards the later time: the larger value is claimed until now.
      Step& s = steps_.back();
      s.t = t;
      s.has_other = false;
    } else {
      steps_.push_back(Step{t, v, v, t, v, false});
    }
  } else if (steps_.empty() || v > steps_.back().v) {
    if (!steps_.empty() && v - steps_.back().anchor < resolution_) {
      // Merged towards the later record, interpolated from the point before it.
      Step& s = steps_.back();
      s = Step{t, v, s.anchor, last_t_, last_v_, true};
    } else {
      steps_.push_back(Step{t, v, v, last_t_, last_v_, any_});
    }
  }
  last_t_ = t;
  last_v_ = v;
  any_ = true;
  if (steps_.size() > capacity) compress();
}

void Staircase::compress() {
  while (steps_.size() > capacity / 2) {
    resolution_ *= 4.0;
    std::vector<Step> out;
    out.reserve(steps_.size());
    for (const Step& s : steps_) {
      if (!out.empty() && std::abs(out.back().anchor - s.v) < resolution_) {
        Step& m = out.back();
        if (suffix_) {  // keep the earlier (larger) value until the later time
          m.t = s.t;
          m.other_t = s.other_t;
          m.other_v = s.other_v;
          m.has_other = s.has_other;
        } else {  // keep the later record
          m = Step{s.t, s.v, m.anchor, s.other_t, s.other_v, s.has_other};
        }
      } else {
        out.push_back(s);
        out.back().anchor = s.v;
      }
    }
    steps_.swap(out);
  }
}

std::optional<double> Staircase::last_above(double level) const {
  const double l = sign_ * level;
  // Suffix extremes fall with time: the steps above the level come first.
  const auto after = std::partition_point(steps_.begin(), steps_.end(), [l](const Step& s) { return s.v > l; });
  if (after == steps_.begin()) return std::nullopt;
  const Step& s = *(after - 1);
  if (!s.has_other || s.other_v >= s.v) return s.t;
  const double f = std::clamp((s.v - l) / (s.v - s.other_v), 0.0, 1.0);
  return s.t + f * (s.other_t - s.t);
}

std::optional<double> Staircase::first_reaching(double level) const {
  const double l = sign_ * level;
  // Prefix records rise with time: the first at or above the level.
  const auto at = std::partition_point(steps_.begin(), steps_.end(), [l](const Step& s) { return s.v < l; });
  if (at == steps_.end()) return std::nullopt;
  if (!at->has_other || at->other_v >= l || at->v <= at->other_v) return at->t;
  const double f = (l - at->other_v) / (at->v - at->other_v);
  return at->other_t + f * (at->t - at->other_t);
}

std::optional<double> Staircase::extreme_after(double t) const {
  const auto at = std::partition_point(steps_.begin(), steps_.end(), [t](const Step& s) { return s.t < t; });
  if (at == steps_.end()) return std::nullopt;
  return sign_ * at->v;
}

}  // namespace detail

namespace {
constexpr double staircase_resolution = 1e-9;  // of the signal's scale, to begin with
}

OscillationOptions window_oscillation_options(const ModelParameters& p) {
  OscillationOptions o;
  o.skip_fraction = 0.02;
  o.amplitude_floor = 1e-3 * std::max(p.setting, 1e6);
  return o;
}

EventWindow::EventWindow(double start, double end, double pressure_scale, double angle_scale,
                         const OscillationOptions& oscillation)
    : start_(start),
      end_(end),
      oscillation_options_(oscillation),
      pressure_high_(true, 1, staircase_resolution * pressure_scale),
      pressure_low_(true, -1, staircase_resolution * pressure_scale),
      angle_high_(false, 1, staircase_resolution * angle_scale),
      angle_low_(false, -1, staircase_resolution * angle_scale) {}

void EventWindow::observe(double t, double pressure, double angle, bool sample) {
  if (finished_ || t < start_ || t > end_) return;
  if (count_++ == 0) {
    first_p_ = pressure;
    first_a_ = angle;
    peak_ = lowest_ = pressure;
  }
  last_p_ = pressure;
  last_a_ = angle;
  peak_ = std::max(peak_, pressure);
  lowest_ = std::min(lowest_, pressure);
  pressure_high_.add(t, pressure);
  pressure_low_.add(t, pressure);
  angle_high_.add(t, angle);
  angle_low_.add(t, angle);
  if (!sample) return;
  if (sample_t_.size() < max_oscillation_samples) {
    sample_t_.push_back(t);
    sample_p_.push_back(pressure);
  } else {
    const std::size_t slot = samples_seen_ % max_oscillation_samples;
    sample_t_[slot] = t;
    sample_p_[slot] = pressure;
  }
  ++samples_seen_;
}

void EventWindow::finish() {
  if (finished_) return;
  finished_ = true;
  std::vector<double> t, p;
  const std::size_t n = sample_t_.size();
  const std::size_t first = samples_seen_ > n ? samples_seen_ % n : 0;  // the oldest sample in the ring
  t.reserve(n);
  p.reserve(n);
  for (std::size_t k = 0; k < n; ++k) {
    t.push_back(sample_t_[(first + k) % n]);
    p.push_back(sample_p_[(first + k) % n]);
  }
  std::vector<double>().swap(sample_t_);
  std::vector<double>().swap(sample_p_);
  if (t.size() < 16) return;  // too short a window to say anything
  oscillation_from_ = t.front();
  oscillation_to_ = t.back();
  try {
    oscillation_ = analyse_oscillation(t, p, std::nullopt, std::nullopt, oscillation_options_);
  } catch (const std::invalid_argument&) {
    oscillation_ = OscillationReport{};  // e.g. samples not increasing in time: nothing to say
  }
}

double EventWindow::settled_from(double low, double high) const {
  double t = start_;
  if (const auto above = pressure_high_.last_above(high)) t = std::max(t, *above);
  if (const auto below = pressure_low_.last_above(low)) t = std::max(t, *below);
  return t;
}

double EventWindow::pressure_span_after(double t) const {
  const auto high = pressure_high_.extreme_after(t), low = pressure_low_.extreme_after(t);
  return high && low ? *high - *low : 0.0;
}

std::optional<double> EventWindow::angle_first_reaching(double level, bool rising) const {
  return rising ? angle_high_.first_reaching(level) : angle_low_.first_reaching(level);
}

}  // namespace swashtune
