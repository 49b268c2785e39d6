#include "swashtune/end_stops.hpp"

namespace swashtune {

StopThresholds::StopThresholds(const ModelParameters& p, double pressure_scale) {
  const Derived d(p);
  swash_penetration = 1e-9 * p.max_swash_angle;
  spool_penetration = 1e-9 * p.spool_travel;
  swash_release_moment = 1e-8 * p.control_piston_arm * d.control_area * pressure_scale + d.swash_friction;
  spool_release_force = 1e-8 * d.sensing_area * pressure_scale;
}

ActiveGuards active_stop_guards(const StopModes& modes) {
  ActiveGuards a;
  if (modes.swash == Stop::free) {
    a.guard[a.count++] = StopGuard::swash_lower_hit;
    a.guard[a.count++] = StopGuard::swash_upper_hit;
  } else {
    a.guard[a.count++] = StopGuard::swash_release;
  }
  if (modes.spool == Stop::free) {
    a.guard[a.count++] = StopGuard::spool_lower_hit;
    a.guard[a.count++] = StopGuard::spool_upper_hit;
  } else {
    a.guard[a.count++] = StopGuard::spool_release;
  }
  return a;
}

double stop_guard_value(StopGuard guard, const ModelParameters& p, const Derived& d, const StopModes& modes,
                        const StopThresholds& th, const State& x) {
  switch (guard) {
    case StopGuard::swash_lower_hit:
      return x[state::swash_angle] + 0.5 * th.swash_penetration;
    case StopGuard::swash_upper_hit:
      return p.max_swash_angle - x[state::swash_angle] + 0.5 * th.swash_penetration;
    case StopGuard::swash_release: {
      const double moment = swash_static_moment<double>(p, d, x);
      const double away = modes.swash == Stop::lower ? moment : -moment;
      return th.swash_release_moment - away;
    }
    case StopGuard::spool_lower_hit:
      return x[state::spool_position] + p.spool_travel + 0.5 * th.spool_penetration;
    case StopGuard::spool_upper_hit:
      return p.spool_travel - x[state::spool_position] + 0.5 * th.spool_penetration;
    case StopGuard::spool_release: {
      const Flows f = flows<double>(p, d, x);
      const double force = spool_static_force<double>(p, d, f, x);
      const double away = modes.spool == Stop::lower ? force : -force;
      return th.spool_release_force + d.breakaway_friction - away;  // a sticky spool must break away
    }
  }
  return 1.0;
}

void apply_stop_switch(StopGuard guard, const ModelParameters& p, const Derived& d, const StopThresholds& th,
                       StopModes& modes, State& x) {
  auto settle_on = [&](Stop& mode, Stop stop, double position, int pos_index, int vel_index, double away_force,
                       double threshold) {
    x[pos_index] = position;
    x[vel_index] = 0.0;
    mode = away_force > threshold ? Stop::free : stop;
  };
  switch (guard) {
    case StopGuard::swash_lower_hit:
    case StopGuard::swash_upper_hit: {
      const bool lower = guard == StopGuard::swash_lower_hit;
      State xs = x;
      xs[state::swash_angle] = lower ? 0.0 : p.max_swash_angle;
      const double moment = swash_static_moment<double>(p, d, xs);
      settle_on(modes.swash, lower ? Stop::lower : Stop::upper, xs[state::swash_angle], state::swash_angle,
                state::swash_velocity, lower ? moment : -moment, th.swash_release_moment);
      break;
    }
    case StopGuard::spool_lower_hit:
    case StopGuard::spool_upper_hit: {
      const bool lower = guard == StopGuard::spool_lower_hit;
      State xs = x;
      xs[state::spool_position] = lower ? -p.spool_travel : p.spool_travel;
      const Flows f = flows<double>(p, d, xs);
      const double force = spool_static_force<double>(p, d, f, xs);
      settle_on(modes.spool, lower ? Stop::lower : Stop::upper, xs[state::spool_position], state::spool_position,
                state::spool_velocity, lower ? force : -force, th.spool_release_force + d.breakaway_friction);
      break;
    }
    case StopGuard::swash_release:
      modes.swash = Stop::free;
      break;
    case StopGuard::spool_release:
      modes.spool = Stop::free;
      break;
  }
}

void pin_to_stops(const ModelParameters& p, const Derived& d, const StopThresholds& thresholds,
                  const StopMotion& motion, StopModes& modes, State& x) {
  if (modes.swash == Stop::free) {
    if (x[state::swash_angle] < -thresholds.swash_penetration)
      apply_stop_switch(StopGuard::swash_lower_hit, p, d, thresholds, modes, x);
    else if (x[state::swash_angle] > p.max_swash_angle + thresholds.swash_penetration)
      apply_stop_switch(StopGuard::swash_upper_hit, p, d, thresholds, modes, x);
  }
  if (modes.spool == Stop::free) {
    if (x[state::spool_position] < -p.spool_travel - thresholds.spool_penetration)
      apply_stop_switch(StopGuard::spool_lower_hit, p, d, thresholds, modes, x);
    else if (x[state::spool_position] > p.spool_travel + thresholds.spool_penetration)
      apply_stop_switch(StopGuard::spool_upper_hit, p, d, thresholds, modes, x);
  }
  if (modes.swash != Stop::free) {
    const bool upper = modes.swash == Stop::upper;
    x[state::swash_angle] = upper ? p.max_swash_angle : 0.0;
    x[state::swash_velocity] = upper ? motion.full_stroke_rate : 0.0;
  }
  if (modes.spool != Stop::free) {
    const double side = modes.spool == Stop::lower ? -1.0 : 1.0;
    x[state::spool_position] = side * p.spool_travel;
    x[state::spool_velocity] = side * motion.spool_travel_rate;
  }
}

void add_stop_motion(const StopModes& modes, const StopMotion& motion, State& dx) {
  if (modes.swash == Stop::upper) dx[state::swash_angle] = motion.full_stroke_rate;
  if (modes.spool != Stop::free)
    dx[state::spool_position] = (modes.spool == Stop::lower ? -1.0 : 1.0) * motion.spool_travel_rate;
}

}  // namespace swashtune
