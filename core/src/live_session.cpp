#include "swashtune/live_session.hpp"

#include <algorithm>
#include <cmath>

#include "swashtune/analysis.hpp"

namespace swashtune {

LiveSession::LiveSession(const Scenario& scenario)
    : scenario_(scenario), scripted_duration_(scenario.settings.duration) {
  std::vector<Event> scripted = scenario_.events;
  sort_events(scripted);
  scenario_.events.clear();
  begin(scenario_.parameters);
  for (const Event& e : scripted) {
    simulator_->add_event(e);
    scenario_.events.push_back(e);
  }
}

void LiveSession::begin(const ModelParameters& initial) {
  scenario_.parameters = initial;
  scenario_.events.clear();
  start_ = steady_state(initial, scenario_.settings);
  simulator_ = std::make_unique<Simulator>(initial, scenario_.settings, start_.condition);
}

Event LiveSession::change(const std::string& key, double to, double ramp) {
  Event e;
  e.at = simulator_->time();
  e.target = key;
  e.to = to;
  e.ramp = std::max(0.0, ramp);
  Scenario probe = scenario_;
  probe.settings.duration = std::max(scenario_.settings.duration, e.at);
  validate_event(e, probe, "live change");
  simulator_->add_event(e);
  // The schedule lets a new event on a key supersede everything planned after
  // it; scripted events still to come are planned again after the change, in
  // the order a replay (events sorted by time) applies them.
  for (const Event& planned : scenario_.events)
    if (planned.target == e.target && planned.at > e.at) simulator_->add_event(planned);
  scenario_.events.push_back(e);
  return e;
}

void LiveSession::advance(double dt, const Simulator::SampleSink& sink) {
  if (!(dt > 0.0)) return;
  // Rounded onto the grid: n / 1e7 is the double nearest the decimal, so a
  // change at this time is written "0.0840501", not "0.08405009999999911".
  const double clean = std::round((simulator_->time() + dt) * steps_per_second) / steps_per_second;
  if (clean > simulator_->time()) simulator_->advance_to(clean, sink);
}

void LiveSession::set_sample_interval(double seconds) {
  simulator_->set_sample_interval(seconds);
  scenario_.settings.sample_interval = seconds;
}

void LiveSession::reset(const ModelParameters& initial) { begin(initial); }

Sample LiveSession::sample_now() const {
  return make_sample(simulator_->time(), simulator_->state(), simulator_->parameters_now());
}

Scenario LiveSession::to_scenario() const {
  Scenario s = scenario_;
  const double now = simulator_->time();
  const bool script_goes_on = std::any_of(s.events.begin(), s.events.end(), [&](const Event& e) { return e.at > now; });
  s.settings.duration = std::max(script_goes_on ? std::max(now, scripted_duration_) : now, s.settings.sample_interval);
  sort_events(s.events);  // stable: at equal times in the order they were applied
  return s;
}

}  // namespace swashtune
