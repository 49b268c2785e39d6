#include "swashtune/schedule.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

namespace swashtune {

double Schedule::Track::value_at(double t) const {
  // Last knot at or before t; knots at equal times: the later one wins.
  auto after = std::upper_bound(knots.begin(), knots.end(), t, [](double time, const Knot& k) { return time < k.t; });
  if (after == knots.begin()) return knots.front().value;  // first knot is at -inf: not reached
  const Knot& k0 = *(after - 1);
  if (after == knots.end()) return k0.value;
  const Knot& k1 = *after;
  if (k0.value == k1.value || !std::isfinite(k0.t)) return k0.value;  // flat (the first knot is at -inf)
  const double f = (t - k0.t) / (k1.t - k0.t);
  return k0.value + f * (k1.value - k0.value);
}

void Schedule::add(const Event& event) {
  const ParameterSpec* spec = find_parameter(event.target);
  if (!spec || spec->is_flag())
    throw std::invalid_argument("\"" + event.target + "\" is not a numeric model parameter");
  auto track = std::find_if(tracks_.begin(), tracks_.end(), [&](const Track& tr) { return tr.spec == spec; });
  if (track == tracks_.end()) {
    tracks_.push_back(Track{spec, {Knot{-std::numeric_limits<double>::infinity(), spec->get(initial_)}}});
    track = tracks_.end() - 1;
  }
  const double start_value = track->value_at(event.at);
  // Whatever was planned after this moment is superseded.
  while (track->knots.size() > 1 && track->knots.back().t > event.at) track->knots.pop_back();
  track->knots.push_back(Knot{event.at, start_value});
  track->knots.push_back(Knot{event.at + std::max(0.0, event.ramp), event.to});
}

ModelParameters Schedule::at(double t) const {
  ModelParameters p = initial_;
  for (const Track& track : tracks_) track.spec->set(p, track.value_at(t));
  return p;
}

double Schedule::next_corner_after(double t) const {
  double next = std::numeric_limits<double>::infinity();
  for (const Track& track : tracks_)
    for (const Knot& k : track.knots)
      if (k.t > t) {
        next = std::min(next, k.t);
        break;
      }
  return next;
}

bool Schedule::varies_between(double t0, double t1) const {
  for (const Track& track : tracks_) {
    // A ramp from knot i to i+1 overlaps (t0, t1) and actually changes the value.
    for (std::size_t i = 0; i + 1 < track.knots.size(); ++i) {
      const Knot& a = track.knots[i];
      const Knot& b = track.knots[i + 1];
      if (b.t > t0 && a.t < t1 && b.t > a.t && a.value != b.value) return true;
    }
  }
  return false;
}

}  // namespace swashtune
