// The hard end stops of the swashplate and the compensator spool as located
// events: guard functions whose sign change marks a contact or a release,
// and what a located switch does. Shared by the project's integrator and the
// CVODE benchmark peer, so that both run exactly the same hybrid model.
#pragma once

#include <array>

#include "swashtune/model.hpp"

namespace swashtune {

// Which coordinate a guard watches and what its sign change means.
enum class StopGuard {
  swash_lower_hit,
  swash_upper_hit,
  swash_release,
  spool_lower_hit,
  spool_upper_hit,
  spool_release
};

// A penetration of 1e-9 of the travel counts as a hit; a release needs a
// force of 1e-8 of the loop's force scale (plus a sticky spool's breakaway
// force), so a coordinate resting on a stop with no net force stays there.
struct StopThresholds {
  double swash_penetration;
  double spool_penetration;
  double swash_release_moment;
  double spool_release_force;

  StopThresholds(const ModelParameters& p, double pressure_scale);
};

// The guards that apply in these stop modes, in a fixed order (at most four).
struct ActiveGuards {
  std::array<StopGuard, 4> guard{};
  int count = 0;
};
ActiveGuards active_stop_guards(const StopModes& modes);

// The guard's value at state x; the switch happens when it falls below zero.
double stop_guard_value(StopGuard guard, const ModelParameters& p, const Derived& d, const StopModes& modes,
                        const StopThresholds& thresholds, const State& x);

// Carries out a located switch. A hit puts the coordinate on its stop with
// zero velocity (an inelastic contact) and holds it there unless the force
// already points away; a release frees it.
void apply_stop_switch(StopGuard guard, const ModelParameters& p, const Derived& d, const StopThresholds& thresholds,
                       StopModes& modes, State& x);

// How fast the stops move while a parameter ramps: d(a_max)/dt and
// d(x_max)/dt (the lower swash stop, zero stroke, never moves).
struct StopMotion {
  double full_stroke_rate = 0.0;   // rad/s
  double spool_travel_rate = 0.0;  // m/s
};

// Puts every held coordinate exactly on its stop, moving with it, and a
// free coordinate that a moving stop has overtaken onto that stop (held
// there unless the force already points away).
void pin_to_stops(const ModelParameters& p, const Derived& d, const StopThresholds& thresholds,
                  const StopMotion& motion, StopModes& modes, State& x);

// Adds the motion of the stops to the rates of the coordinates held on them.
void add_stop_motion(const StopModes& modes, const StopMotion& motion, State& dx);

}  // namespace swashtune
