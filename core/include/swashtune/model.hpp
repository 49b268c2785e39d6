// The reference lumped-parameter model (model.md, v1): state layout and the
// right-hand side as pure functions of (state, parameters, stop modes).
// No I/O, no allocation; templated on the scalar so that the Jacobian can be
// taken by forward automatic differentiation.
#pragma once

#include <Eigen/Core>
#include <algorithm>
#include <cmath>

#include "swashtune/fluid.hpp"
#include "swashtune/parameters.hpp"

namespace swashtune {

inline constexpr double pi = 3.14159265358979323846;

namespace state {
enum Index : int {
  discharge_pressure = 0,  // p_d, Pa
  control_pressure = 1,    // p_c, Pa
  swash_angle = 2,         // a, rad
  swash_velocity = 3,      // w, rad/s
  spool_position = 4,      // x_s, m
  spool_velocity = 5,      // v_s, m/s
  size = 6
};
}  // namespace state

template <class T>
using StateOf = Eigen::Matrix<T, state::size, 1>;
using State = StateOf<double>;
using Jacobian = Eigen::Matrix<double, state::size, state::size>;

// End stops are hard: a coordinate that reaches a stop is held there with zero
// velocity until the net force on it points away from the stop.
enum class Stop : signed char { free = 0, lower = -1, upper = 1 };

struct StopModes {
  Stop swash = Stop::free;  // lower: zero displacement, upper: full stroke
  Stop spool = Stop::free;  // lower: -x_max, upper: +x_max
  friend bool operator==(const StopModes& a, const StopModes& b) { return a.swash == b.swash && a.spool == b.spool; }
  friend bool operator!=(const StopModes& a, const StopModes& b) { return !(a == b); }
};

// Turbulent orifice law with a smooth laminar region near zero pressure drop:
//   Q = Cd A sqrt(2/rho) dp / (dp^2 + dp_tr^2)^(1/4)
// For |dp| >> dp_tr this is the classic Q = Cd A sqrt(2|dp|/rho) sign(dp)
// (Merritt, Hydraulic Control Systems, 1967, ch. 3).
template <class T>
T orifice_flow(double cd, const T& area, const T& dp, double density, double transition) {
  using std::sqrt;
  const T root = sqrt(sqrt(T(dp * dp + transition * transition)));
  return T(cd * std::sqrt(2.0 / density) * area * dp / root);
}

// Friction of a sticky spool (faults.spool_friction): Coulomb friction with a
// Stribeck rise to the breakaway force at low speed, made smooth through zero
// speed (tanh) so that the stiff integrator never has to locate a stick event.
inline constexpr double friction_smoothing_speed = 1e-4;  // m/s
inline constexpr double stribeck_speed = 2e-3;            // m/s

// Quantities derived from the parameters once per evaluation, with the fault
// conditions folded in; a healthy machine gives model.md v1 exactly.
struct Derived {
  double control_area;  // A_c
  double sensing_area;  // A_s
  double bleed_area;
  double full_flow;  // D_max N / 60, m^3/s
  double tan_max;
  double flow_force_gain;  // 2 Cd cos(69 deg), or 0 without flow forces
  double leakage_coefficient;
  double air_fraction;
  double bias_force_at_full_stroke;
  double bias_rate;
  double setting;  // the pressure the spring preload balances
  double line_volume;
  double case_pressure;  // where the control chamber and the bleed drain
  double coulomb_friction;
  double breakaway_friction;

  explicit Derived(const ModelParameters& p)
      : control_area(pi / 4.0 * p.control_piston_diameter * p.control_piston_diameter),
        sensing_area(pi / 4.0 * p.spool_diameter * p.spool_diameter),
        bleed_area(pi / 4.0 * p.bleed_diameter * p.bleed_diameter * p.fault_bleed_area_factor),
        full_flow(p.displacement * p.speed / 60.0),
        tan_max(std::tan(p.max_swash_angle)),
        flow_force_gain(p.flow_forces ? 2.0 * p.spool_discharge_coefficient * std::cos(69.0 * pi / 180.0) : 0.0),
        leakage_coefficient(p.leakage_coefficient * p.fault_leakage_factor),
        air_fraction(std::min(p.air_fraction + p.fault_entrained_air, 0.5)),
        bias_force_at_full_stroke(p.bias_force_at_full_stroke * p.fault_bias_strength),
        bias_rate(p.bias_rate * p.fault_bias_strength),
        setting(p.setting * (1.0 - p.fault_setting_drift)),
        line_volume(p.line_volume * p.fault_line_volume_factor),
        case_pressure(p.tank_pressure + p.fault_case_pressure),
        coulomb_friction(p.fault_spool_friction),
        breakaway_friction(p.fault_spool_friction * p.fault_stiction_ratio) {}
};

// Every flow of the model at one state, m^3/s.
template <class T>
struct FlowsOf {
  T geometric;          // Q_g
  T leakage;            // Q_leak
  T to_control;         // Q_pc, discharge -> control chamber
  T control_to_case;    // Q_ct
  T bleed;              // Q_b
  T load;               // Q_load
  T metering_area_in;   // A_pc
  T metering_area_out;  // A_ct
};
using Flows = FlowsOf<double>;

template <class T>
FlowsOf<T> flows(const ModelParameters& p, const Derived& d, const StateOf<T>& x) {
  using std::tan;
  const T& p_d = x[state::discharge_pressure];
  const T& p_c = x[state::control_pressure];
  const T& a = x[state::swash_angle];
  const T& x_s = x[state::spool_position];
  const double rho = p.density;
  const double dp_tr = p.transition_pressure;

  FlowsOf<T> f;
  f.geometric = d.full_flow * tan(a) / d.tan_max;
  f.leakage = d.leakage_coefficient * p_d;
  const T open_in = p.underlap + x_s;
  const T open_out = p.underlap - x_s;
  f.metering_area_in = open_in > 0.0 ? T(p.port_width * open_in) : T(0.0);
  f.metering_area_out = open_out > 0.0 ? T(p.port_width * open_out) : T(0.0);
  const double cd = p.spool_discharge_coefficient;
  f.to_control = orifice_flow(cd, f.metering_area_in, T(p_d - p_c), rho, dp_tr);
  f.control_to_case = orifice_flow(cd, f.metering_area_out, T(p_c - d.case_pressure), rho, dp_tr);
  f.bleed = orifice_flow(cd, T(d.bleed_area), T(p_c - d.case_pressure), rho, dp_tr);
  f.load =
      orifice_flow(p.valve_discharge_coefficient, T(p.opening * p.valve_area), T(p_d - p.tank_pressure), rho, dp_tr);
  return f;
}

// Net moment on the swashplate with its velocity set to zero (positive
// strokes the pump); decides when a plate held at a stop is released.
template <class T>
T swash_static_moment(const ModelParameters& p, const Derived& d, const StateOf<T>& x) {
  const T bias_force =
      d.bias_force_at_full_stroke + d.bias_rate * p.bias_arm * (p.max_swash_angle - x[state::swash_angle]);
  return p.bias_arm * bias_force - p.control_piston_arm * d.control_area * x[state::control_pressure] -
         p.pressure_moment * x[state::discharge_pressure];
}

// Steady flow force on the spool: a 69 degree jet tends to close each
// metering edge, F = 2 Cd cos(69 deg) A dp (Merritt 1967, ch. 5).
template <class T>
T spool_flow_force(const Derived& d, const FlowsOf<T>& f, const StateOf<T>& x) {
  if (d.flow_force_gain == 0.0) return T(0.0);
  const T& p_d = x[state::discharge_pressure];
  const T& p_c = x[state::control_pressure];
  return d.flow_force_gain * (-f.metering_area_in * (p_d - p_c) + f.metering_area_out * (p_c - d.case_pressure));
}

// Net force on the spool with its velocity set to zero (positive opens
// discharge -> control chamber).
template <class T>
T spool_static_force(const ModelParameters& p, const Derived& d, const FlowsOf<T>& f, const StateOf<T>& x) {
  return d.sensing_area * (x[state::discharge_pressure] - d.setting) - p.spool_spring_rate * x[state::spool_position] +
         spool_flow_force(d, f, x);
}

// Friction force on a spool moving at v (opposes the motion).
template <class T>
T spool_friction(const Derived& d, const T& v) {
  if (d.coulomb_friction == 0.0) return T(0.0);
  using std::exp;
  using std::tanh;
  const T ratio = v / stribeck_speed;
  const T level = d.coulomb_friction + (d.breakaway_friction - d.coulomb_friction) * exp(T(-ratio * ratio));
  return T(-level * tanh(T(v / friction_smoothing_speed)));
}

// dx/dt of model.md. A coordinate held at a stop has zero rates.
template <class T>
StateOf<T> derivatives(const ModelParameters& p, const Derived& d, const StopModes& modes, const StateOf<T>& x) {
  const FlowsOf<T> f = flows(p, d, x);
  const T& p_d = x[state::discharge_pressure];
  const T& p_c = x[state::control_pressure];
  const T& a = x[state::swash_angle];
  const T& w = x[state::swash_velocity];
  const T& v_s = x[state::spool_velocity];

  const T beta_d = effective_bulk_modulus(p_d, p.bulk_modulus, d.air_fraction, p.polytropic_index);
  const T beta_c = effective_bulk_modulus(p_c, p.bulk_modulus, d.air_fraction, p.polytropic_index);
  const double piston_moment_arm_area = d.control_area * p.control_piston_arm;
  const T control_volume = p.control_dead_volume + piston_moment_arm_area * (p.max_swash_angle - a);

  StateOf<T> dx;
  dx[state::discharge_pressure] = beta_d / d.line_volume * (f.geometric - f.leakage - f.to_control - f.load);
  dx[state::control_pressure] =
      beta_c / control_volume * (f.to_control - f.control_to_case - f.bleed + piston_moment_arm_area * w);

  if (modes.swash == Stop::free) {
    dx[state::swash_angle] = w;
    dx[state::swash_velocity] = (swash_static_moment(p, d, x) - p.swash_damping * w) / p.swash_inertia;
  } else {
    dx[state::swash_angle] = T(0.0);
    dx[state::swash_velocity] = T(0.0);
  }
  if (modes.spool == Stop::free) {
    dx[state::spool_position] = v_s;
    dx[state::spool_velocity] =
        (spool_static_force(p, d, f, x) - p.spool_damping * v_s + spool_friction(d, v_s)) / p.spool_mass;
  } else {
    dx[state::spool_position] = T(0.0);
    dx[state::spool_velocity] = T(0.0);
  }
  return dx;
}

inline State derivatives(const ModelParameters& p, const StopModes& modes, const State& x) {
  return derivatives<double>(p, Derived(p), modes, x);
}

// Jacobian d(dx/dt)/dx by forward automatic differentiation (Eigen AutoDiff).
Jacobian jacobian(const ModelParameters& p, const Derived& d, const StopModes& modes, const State& x);

inline Flows flows(const ModelParameters& p, const State& x) { return flows<double>(p, Derived(p), x); }

}  // namespace swashtune
