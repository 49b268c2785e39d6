// The lumped-parameter model: the six-state v1 model of model.md (pump,
// swashplate, control piston, compensator spool, discharge line, load
// valve) and the v2 elements (cavitation and air release, control-line
// orifice, oil temperature, relief valve, swash friction and pressure
// moment, flow ripple). With every v2 element at its off value the model is
// v1 exactly. Pure functions of (state, parameters, stop modes); no I/O, no
// allocation; templated on the scalar so that the Jacobian is forward
// automatic differentiation of the very same code.
#pragma once

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <vector>

#include "swashtune/fluid.hpp"
#include "swashtune/model/control_orifice.hpp"
#include "swashtune/model/flow_ripple.hpp"
#include "swashtune/model/fluid_node.hpp"
#include "swashtune/model/layout.hpp"
#include "swashtune/model/line.hpp"
#include "swashtune/model/oil.hpp"
#include "swashtune/model/relief_valve.hpp"
#include "swashtune/parameters.hpp"

namespace swashtune {

inline constexpr double pi = 3.14159265358979323846;

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
// `coefficient` is Cd sqrt(2/rho): the model works it out once per oil.
template <class T>
T orifice_flow_with(double coefficient, const T& area, const T& dp, double transition) {
  using std::sqrt;
  const T root = sqrt(sqrt(T(dp * dp + transition * transition)));
  return T(coefficient * area * dp / root);
}

template <class T>
T orifice_flow(double cd, const T& area, const T& dp, double density, double transition) {
  return orifice_flow_with(cd * std::sqrt(2.0 / density), area, dp, transition);
}

// Friction that opposes a motion at speed v: Coulomb level plus a Stribeck
// rise to the breakaway level at low speed, made smooth through zero speed
// (tanh) so that the stiff integrator never has to locate a stick event.
inline constexpr double friction_smoothing_speed = 1e-4;        // m/s, spool
inline constexpr double stribeck_speed = 2e-3;                  // m/s, spool
inline constexpr double swash_friction_smoothing_speed = 1e-3;  // rad/s

// The viscosity the pump's leakage and damping coefficients are given for:
// an oil of 46 mm^2/s (ISO VG 46 at 40 degC, the default).
inline constexpr double reference_viscosity = 46.0;  // mm^2/s

// Quantities derived from the parameters once per evaluation, with the fault
// conditions and the oil's temperature folded in, and the state layout of
// the elements present.
struct Derived {
  Layout layout;
  double density;                // at the oil's temperature
  double root_two_over_density;  // sqrt(2 / rho), of the orifice law
  double viscosity_ratio;        // dynamic viscosity over that of the reference oil
  double control_area;           // A_c
  double sensing_area;           // A_s
  double bleed_area;
  double full_flow;  // D_max N / 60, m^3/s
  double tan_max;
  double flow_force_gain;  // 2 Cd cos(69 deg), or 0 without flow forces
  double leakage_coefficient;
  double swash_damping;
  double spool_damping;
  double air_fraction;  // entrained (free) air
  double bias_force_at_full_stroke;
  double bias_rate;
  double setting;  // the pressure the spring preload balances
  double line_volume;  // of the lumped line, or of the distributed line's pump-end node
  double line_wall;    // compliance of the line's wall per unit volume, 1/Pa
  double pump_end_wall;  // the same averaged over the pump-end volume (line and pump outlet)
  double kinematic_viscosity;  // m^2/s, at the oil's temperature
  double case_pressure;  // where the control chamber and the bleed drain
  double coulomb_friction;
  double breakaway_friction;
  double swash_friction;
  int friction_branch;  // ModelParameters::friction_branch
  CavitationElement cavitation;
  ControlOrificeElement control_orifice;
  ReliefValveElement relief;
  FlowRippleElement ripple;
  LineElement line;

  explicit Derived(const ModelParameters& p);
};

// The layout alone (which elements the parameters switch on).
Layout layout_of(const ModelParameters& p);

// Every flow of the model at one state, m^3/s, and the node pressures.
template <class T>
struct FlowsOf {
  T line_pressure;      // p_d, what the flows see (the vapour floor applied)
  T valve_end_pressure;  // at the load and relief valves: p_d for a lumped line
  T chamber_pressure;   // p_c
  T port_pressure;      // p_k, the spool's control port (= p_c without an orifice)
  T geometric;          // Q_g
  T leakage;            // Q_leak
  T to_control;         // Q_pc, discharge -> control port
  T control_to_case;    // Q_ct, control port -> case
  T through_orifice;    // Q_o, control port -> chamber (= Q_pc - Q_ct without an orifice)
  T bleed;              // Q_b
  T load;               // Q_load
  T relief;             // Q_r
  T metering_area_in;   // A_pc
  T metering_area_out;  // A_ct
};
using Flows = FlowsOf<double>;

// The pump's geometric flow at swash angle a (tangent law), with the
// pistons' ripple when that element is present.
template <class T>
T geometric_flow(const Derived& d, const T& a, const StateOf<T>& x) {
  using std::tan;
  T q = d.full_flow * tan(a) / d.tan_max;
  if (d.ripple.present) q *= d.ripple.factor(x[d.layout.shaft_angle]);
  return q;
}

// `pump_flow_angle`, when given, replaces the swash angle in the tangent law
// only: that is where the stability analysis opens the displacement loop
// (interfaces.md, "Stability v2"); everything else still sees x's angle.
template <class T>
FlowsOf<T> flows(const ModelParameters& p, const Derived& d, const StateOf<T>& x, const T* pump_flow_angle = nullptr) {
  const double dp_tr = p.transition_pressure;
  const T& x_s = x[state::spool_position];

  FlowsOf<T> f;
  f.line_pressure = d.cavitation.pressure(x[state::discharge_pressure]);
  f.chamber_pressure = d.cavitation.pressure(x[state::control_pressure]);
  f.port_pressure = d.control_orifice.present ? d.cavitation.pressure(x[d.layout.port_pressure]) : f.chamber_pressure;
  const T& p_d = f.line_pressure;
  const T& p_c = f.chamber_pressure;
  const T& p_k = f.port_pressure;

  f.geometric = geometric_flow(d, pump_flow_angle ? *pump_flow_angle : x[state::swash_angle], x);
  f.leakage = d.leakage_coefficient * p_d;
  const T open_in = p.underlap + x_s;
  const T open_out = p.underlap - x_s;
  f.metering_area_in = open_in > 0.0 ? T(p.port_width * open_in) : T(0.0);
  f.metering_area_out = open_out > 0.0 ? T(p.port_width * open_out) : T(0.0);
  const double k_spool = p.spool_discharge_coefficient * d.root_two_over_density;
  f.to_control = orifice_flow_with(k_spool, f.metering_area_in, T(p_d - p_k), dp_tr);
  f.control_to_case = orifice_flow_with(k_spool, f.metering_area_out, T(p_k - d.case_pressure), dp_tr);
  f.through_orifice = d.control_orifice.present
                          ? orifice_flow_with(d.control_orifice.discharge_coefficient * d.root_two_over_density,
                                              T(d.control_orifice.area), T(p_k - p_c), dp_tr)
                          : T(f.to_control - f.control_to_case);
  f.bleed = orifice_flow_with(k_spool, T(d.bleed_area), T(p_c - d.case_pressure), dp_tr);
  f.valve_end_pressure = d.line.distributed ? d.cavitation.pressure(d.line.valve_end_state(x)) : p_d;
  f.load = orifice_flow_with(p.valve_discharge_coefficient * d.root_two_over_density, T(p.opening * p.valve_area),
                             T(f.valve_end_pressure - p.tank_pressure), dp_tr);
  f.relief = d.relief.flow(f.valve_end_pressure, p.tank_pressure);
  return f;
}

// Volume of the control chamber at swash angle a (the piston extension
// r_c (a_max - a) destrokes the pump).
template <class T>
T control_volume(const ModelParameters& p, const Derived& d, const T& a) {
  return p.control_dead_volume + d.control_area * p.control_piston_arm * (p.max_swash_angle - a);
}

// Net moment on the swashplate with its velocity set to zero (positive
// strokes the pump), without friction; decides when a plate held at a stop
// is released (friction then adds to the threshold).
template <class T>
T swash_static_moment(const ModelParameters& p, const Derived& d, const FlowsOf<T>& f, const StateOf<T>& x) {
  const T bias_force =
      d.bias_force_at_full_stroke + d.bias_rate * p.bias_arm * (p.max_swash_angle - x[state::swash_angle]);
  return p.bias_arm * bias_force - p.control_piston_arm * d.control_area * f.chamber_pressure -
         p.pressure_moment * f.line_pressure;
}

template <class T>
T swash_static_moment(const ModelParameters& p, const Derived& d, const StateOf<T>& x) {
  return swash_static_moment(p, d, flows(p, d, x), x);
}

// Steady flow force on the spool: a 69 degree jet tends to close each
// metering edge, F = 2 Cd cos(69 deg) A dp (Merritt 1967, ch. 5).
template <class T>
T spool_flow_force(const Derived& d, const FlowsOf<T>& f) {
  if (d.flow_force_gain == 0.0) return T(0.0);
  return d.flow_force_gain * (-f.metering_area_in * (f.line_pressure - f.port_pressure) +
                              f.metering_area_out * (f.port_pressure - d.case_pressure));
}

// Net force on the spool with its velocity set to zero (positive opens
// discharge -> control port).
template <class T>
T spool_static_force(const ModelParameters& p, const Derived& d, const FlowsOf<T>& f, const StateOf<T>& x) {
  return d.sensing_area * (f.line_pressure - d.setting) - p.spool_spring_rate * x[state::spool_position] +
         spool_flow_force(d, f);
}

// Friction force on a spool moving at v (opposes the motion). On a
// quasi-static friction branch the spool slides the way a rising (+1) or
// falling (-1) pressure moves it, at the Coulomb level.
template <class T>
T spool_friction(const Derived& d, const T& v) {
  if (d.coulomb_friction == 0.0) return T(0.0);
  if (d.friction_branch != 0) return T(-d.friction_branch * d.coulomb_friction);
  using std::exp;
  using std::tanh;
  const T ratio = v / stribeck_speed;
  const T level = d.coulomb_friction + (d.breakaway_friction - d.coulomb_friction) * exp(T(-ratio * ratio));
  return T(-level * tanh(T(v / friction_smoothing_speed)));
}

// Coulomb friction moment of the swash cradle at angular speed w. On a
// quasi-static branch a rising pressure (+1) destrokes the plate (w < 0), so
// the friction strokes it; a falling one the reverse.
template <class T>
T swash_friction(const Derived& d, const T& w) {
  if (d.swash_friction == 0.0) return T(0.0);
  if (d.friction_branch != 0) return T(d.friction_branch * d.swash_friction);
  using std::tanh;
  return T(-d.swash_friction * tanh(T(w / swash_friction_smoothing_speed)));
}

// The pressure rate of a volume V that takes the net flow q_net,
// beta_e / V * q_net, with the entrained air alone (v1) or with air
// released from the oil (a state of the cavitation element; `air_at` is
// then the air's state at the volume's pressure).
// `wall` is the compliance a line's wall adds per unit volume (1/Pa).
template <class T>
T pressure_rate(const ModelParameters& p, const Derived& d, const T& pressure, const T* released_air,
                const AirAtPressure<T>* air_at, const T& volume, const T& q_net, double wall = 0.0) {
  const T beta = released_air ? bulk_modulus_with_air(*air_at, p.bulk_modulus, T(d.air_fraction + *released_air),
                                                      p.polytropic_index)
                              : effective_bulk_modulus(pressure, p.bulk_modulus, d.air_fraction, p.polytropic_index);
  if (wall == 0.0) return beta / volume * q_net;
  // Written as the v1 expression (beta / V q) so that a constant beta, whose
  // automatic derivative is empty, stays the left operand.
  const T beta_with_wall = beta / (1.0 + beta * wall);
  return beta_with_wall / volume * q_net;
}

// dx/dt. A coordinate held at a stop has zero rates here (the simulator
// adds the motion of a moving stop).
template <class T>
StateOf<T> derivatives(const ModelParameters& p, const Derived& d, const StopModes& modes, const StateOf<T>& x,
                       const T* pump_flow_angle = nullptr) {
  const Layout& L = d.layout;
  const FlowsOf<T> f = flows(p, d, x, pump_flow_angle);
  const T& a = x[state::swash_angle];
  const T& w = x[state::swash_velocity];
  const T& v_s = x[state::spool_velocity];

  StateOf<T> dx(L.size);
  const double piston_moment_arm_area = d.control_area * p.control_piston_arm;
  const T chamber_volume = control_volume(p, d, a);

  // Released air in each volume (cavitation element), and the volume it adds.
  const T* air_line = nullptr;
  const T* air_chamber = nullptr;
  const T* air_port = nullptr;
  AirAtPressure<T> at_line{}, at_chamber{}, at_port{};
  T release_line(0.0), release_chamber(0.0), release_port(0.0);
  if (L.line_air >= 0) {
    const CavitationElement& c = d.cavitation;
    air_line = &x[L.line_air];
    air_chamber = &x[L.chamber_air];
    at_line = air_at_pressure(f.line_pressure, p.polytropic_index);
    at_chamber = air_at_pressure(f.chamber_pressure, p.polytropic_index);
    dx[L.line_air] = c.air_rate(f.line_pressure, *air_line);
    dx[L.chamber_air] = c.air_rate(f.chamber_pressure, *air_chamber);
    release_line = c.released_volume_rate(at_line, T(dx[L.line_air]), T(d.line_volume));
    release_chamber = c.released_volume_rate(at_chamber, T(dx[L.chamber_air]), chamber_volume);
    if (L.port_air >= 0) {
      air_port = &x[L.port_air];
      at_port = air_at_pressure(f.port_pressure, p.polytropic_index);
      dx[L.port_air] = c.air_rate(f.port_pressure, *air_port);
      release_port = c.released_volume_rate(at_port, T(dx[L.port_air]), T(d.control_orifice.port_volume));
    }
  }

  // A distributed line takes the pump's delivery into its first reach; the
  // valves draw from its far end.
  const T into_line = d.line.distributed ? T(d.line.flow_into_line(x)) : T(f.load + f.relief);
  dx[state::discharge_pressure] =
      pressure_rate(p, d, f.line_pressure, air_line, &at_line, T(d.line_volume),
                    T(f.geometric - f.leakage - f.to_control - into_line + release_line), d.pump_end_wall);
  if (d.line.distributed)
    d.line.rates(
        x, f.line_pressure, T(f.load + f.relief), [&](const T& psi) { return d.cavitation.pressure(psi); },
        [&](const T& pressure, double volume, const T& q_net) {
          return pressure_rate(p, d, pressure, static_cast<const T*>(nullptr), static_cast<const AirAtPressure<T>*>(nullptr),
                               T(volume), q_net, d.line_wall);
        },
        dx);
  if (d.control_orifice.present)
    dx[L.port_pressure] = pressure_rate(p, d, f.port_pressure, air_port, &at_port, T(d.control_orifice.port_volume),
                                        T(f.to_control - f.control_to_case - f.through_orifice + release_port));
  dx[state::control_pressure] =
      pressure_rate(p, d, f.chamber_pressure, air_chamber, &at_chamber, chamber_volume,
                    T(f.through_orifice - f.bleed + piston_moment_arm_area * w + release_chamber));

  if (modes.swash == Stop::free) {
    dx[state::swash_angle] = w;
    dx[state::swash_velocity] =
        (swash_static_moment(p, d, f, x) - d.swash_damping * w + swash_friction(d, w)) / p.swash_inertia;
  } else {
    dx[state::swash_angle] = T(0.0);
    dx[state::swash_velocity] = T(0.0);
  }
  if (modes.spool == Stop::free) {
    dx[state::spool_position] = v_s;
    dx[state::spool_velocity] =
        (spool_static_force(p, d, f, x) - d.spool_damping * v_s + spool_friction(d, v_s)) / p.spool_mass;
  } else {
    dx[state::spool_position] = T(0.0);
    dx[state::spool_velocity] = T(0.0);
  }
  if (d.ripple.present) dx[L.shaft_angle] = T(d.ripple.shaft_speed);
  return dx;
}

inline State derivatives(const ModelParameters& p, const StopModes& modes, const State& x) {
  return derivatives<double>(p, Derived(p), modes, x);
}

// Jacobian d(dx/dt)/dx by forward automatic differentiation (Eigen AutoDiff).
// With `pump_flow_angle` the tangent law sees that fixed angle instead of x's
// (the displacement loop opened, as the stability analysis does).
Jacobian jacobian(const ModelParameters& p, const Derived& d, const StopModes& modes, const State& x,
                  const double* pump_flow_angle = nullptr);

// d(dx/dt)/du, u being the angle the tangent law sees, at u (automatic
// differentiation with x held): the input column of the opened loop.
State flow_angle_sensitivity(const ModelParameters& p, const Derived& d, const StopModes& modes, const State& x,
                             double u);

inline Flows flows(const ModelParameters& p, const State& x) { return flows<double>(p, Derived(p), x); }

// A state of the layout's size with every entry zero.
// The pressures along the discharge line, pump end first, the vapour floor
// applied: the N + 1 nodes of a distributed line (evenly spaced), or the
// one pressure of a lumped line. For drawing the line.
std::vector<double> line_pressures(const Derived& d, const State& x);

inline State zero_state(const Layout& layout) { return State::Zero(layout.size); }

}  // namespace swashtune
