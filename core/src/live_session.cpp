#include "swashtune/live_session.hpp"

#include <algorithm>

#include "swashtune/analysis.hpp"

namespace swashtune {

LiveSession::LiveSession(const Scenario& scenario) : scenario_(scenario) {
  std::vector<Event> scripted = scenario_.events;
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
  scenario_.events.push_back(e);
  return e;
}

void LiveSession::advance(double dt, const Simulator::SampleSink& sink) {
  if (dt > 0.0) simulator_->advance_to(simulator_->time() + dt, sink);
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
  s.settings.duration = std::max(simulator_->time(), s.settings.sample_interval);
  // Scripted events not reached yet did not happen in this session.
  s.events.erase(
      std::remove_if(s.events.begin(), s.events.end(), [&](const Event& e) { return e.at > s.settings.duration; }),
      s.events.end());
  return s;
}

}  // namespace swashtune
