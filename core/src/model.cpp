#include "swashtune/model.hpp"

#include <unsupported/Eigen/AutoDiff>

namespace swashtune {

Layout layout_of(const ModelParameters& p) {
  Layout layout;
  const ControlOrificeElement orifice(p);
  orifice.add_states(layout);
  if (p.cavitation) {
    layout.line_air = layout.add();
    layout.chamber_air = layout.add();
    if (orifice.present) layout.port_air = layout.add();
  }
  FlowRippleElement(p).add_states(layout);
  LineElement(p, p.density, 1e-6 * p.viscosity_grade).add_states(layout);  // the layout needs only N
  return layout;
}

namespace {

OilState oil_of(const ModelParameters& p) {
  return oil_state(p.viscosity_grade, p.viscosity_index, p.viscosity_at_100c, p.density, p.thermal_expansion,
                   p.temperature);
}

// Dynamic viscosity over that of the reference oil (46 mm^2/s at the
// density given for 40 degC): exactly 1 for the reference oil at 40 degC.
double viscosity_ratio_of(const ModelParameters& p, const OilState& oil) {
  if (p.temperature == reference_temperature_c && p.viscosity_grade == reference_viscosity) return 1.0;
  return oil.kinematic_viscosity / reference_viscosity * (oil.density / p.density);
}

}  // namespace

Derived::Derived(const ModelParameters& p) {
  const OilState oil = oil_of(p);
  layout = layout_of(p);
  density = p.temperature == reference_temperature_c ? p.density : oil.density;
  root_two_over_density = std::sqrt(2.0 / density);
  viscosity_ratio = viscosity_ratio_of(p, oil);
  control_area = pi / 4.0 * p.control_piston_diameter * p.control_piston_diameter;
  sensing_area = pi / 4.0 * p.spool_diameter * p.spool_diameter;
  bleed_area = pi / 4.0 * p.bleed_diameter * p.bleed_diameter * p.fault_bleed_area_factor;
  full_flow = p.displacement * p.speed / 60.0;
  tan_max = std::tan(p.max_swash_angle);
  flow_force_gain = p.flow_forces ? 2.0 * p.spool_discharge_coefficient * std::cos(69.0 * pi / 180.0) : 0.0;
  // Laminar leakage goes with 1/viscosity, viscous damping with viscosity.
  leakage_coefficient = p.leakage_coefficient * p.fault_leakage_factor / viscosity_ratio;
  swash_damping = p.swash_damping * viscosity_ratio;
  spool_damping = p.spool_damping * viscosity_ratio;
  air_fraction = std::min(p.air_fraction + p.fault_entrained_air, 0.5);
  bias_force_at_full_stroke = p.bias_force_at_full_stroke * p.fault_bias_strength;
  bias_rate = p.bias_rate * p.fault_bias_strength;
  setting = p.setting * (1.0 - p.fault_setting_drift);
  kinematic_viscosity = 1e-6 * oil.kinematic_viscosity;
  line = LineElement(p, density, kinematic_viscosity);
  line.locate(layout);
  line_wall = line.wall;
  // A line given by its geometry holds A L (half a reach at the pump end
  // when distributed) and meets the pump's own outlet volume, whose housing
  // adds no compliance; line.volume includes it. The fault factor sizes the
  // lumped line only.
  const double line_part = line.distributed ? 0.5 * line.reach_volume : line.volume();
  if (line.geometry) {
    line_volume = line_part + p.pump_outlet_volume;
    pump_end_wall = line.wall * line_part / line_volume;
    if (!line.distributed) line_volume *= p.fault_line_volume_factor;
  } else {
    line_volume = p.line_volume * p.fault_line_volume_factor;
    pump_end_wall = 0.0;
  }
  case_pressure = p.tank_pressure + p.fault_case_pressure;
  coulomb_friction = p.fault_spool_friction;
  breakaway_friction = p.fault_spool_friction * p.fault_stiction_ratio;
  swash_friction = p.swash_friction;
  friction_branch = p.friction_branch;
  cavitation = CavitationElement(p);
  control_orifice = ControlOrificeElement(p);
  relief = ReliefValveElement(p);
  ripple = FlowRippleElement(p);
}

namespace {

// Forward-mode automatic differentiation with derivative vectors of a
// fixed length N >= the number of states n (the unused tail stays zero). A
// fixed N lets the compiler unroll the derivative arithmetic, which
// dominates the cost of a step; the common layouts (6 to 11 states) get
// their own N, larger ones (a distributed line) the next of a few sizes.
// Never Eigen::Dynamic: a constant of the model (T(area)) would then carry
// an empty derivative vector, and Eigen's AutoDiff asserts (in debug
// builds) when an expression adds it to a full one.
template <int N>
Jacobian jacobian_of_size(const ModelParameters& p, const Derived& d, const StopModes& modes, const State& x,
                          const double* pump_flow_angle) {
  using Derivatives = Eigen::Matrix<double, N, 1>;
  using Dual = Eigen::AutoDiffScalar<Derivatives>;
  const int n = static_cast<int>(x.size());
  StateOf<Dual> xd(n);
  for (int i = 0; i < n; ++i) xd[i] = Dual(x[i], N, i);
  const Dual angle(pump_flow_angle ? *pump_flow_angle : 0.0, Derivatives::Zero());  // a constant
  const StateOf<Dual> f = derivatives<Dual>(p, d, modes, xd, pump_flow_angle ? &angle : nullptr);
  Jacobian jac(n, n);
  for (int i = 0; i < n; ++i) jac.row(i) = f[i].derivatives().head(n).transpose();
  return jac;
}

}  // namespace

Jacobian jacobian(const ModelParameters& p, const Derived& d, const StopModes& modes, const State& x,
                  const double* pump_flow_angle) {
  const int n = static_cast<int>(x.size());
  if (n <= 11)
    return with_layout_size(n, [&](auto size) {
      constexpr int exact = decltype(size)::value;
      if constexpr (exact == Eigen::Dynamic)
        return jacobian_of_size<11>(p, d, modes, x, pump_flow_angle);  // n < 6 does not occur
      else
        return jacobian_of_size<exact>(p, d, modes, x, pump_flow_angle);
    });
  if (n <= 24) return jacobian_of_size<24>(p, d, modes, x, pump_flow_angle);
  if (n <= 48) return jacobian_of_size<48>(p, d, modes, x, pump_flow_angle);
  if (n <= 80) return jacobian_of_size<80>(p, d, modes, x, pump_flow_angle);
  static_assert(max_states <= 120, "a larger layout needs a larger derivative length here");
  return jacobian_of_size<120>(p, d, modes, x, pump_flow_angle);
}

State flow_angle_sensitivity(const ModelParameters& p, const Derived& d, const StopModes& modes, const State& x,
                             double u) {
  using Dual = Eigen::AutoDiffScalar<Eigen::Matrix<double, 1, 1>>;
  const Eigen::Matrix<double, 1, 1> none = Eigen::Matrix<double, 1, 1>::Zero();
  const int n = static_cast<int>(x.size());
  StateOf<Dual> xd(n);
  for (int i = 0; i < n; ++i) xd[i] = Dual(x[i], none);
  const Dual angle(u, Eigen::Matrix<double, 1, 1>::Ones());
  const StateOf<Dual> f = derivatives<Dual>(p, d, modes, xd, &angle);
  State out(n);
  for (int i = 0; i < n; ++i) out[i] = f[i].derivatives()[0];
  return out;
}

std::vector<double> line_pressures(const Derived& d, const State& x) {
  std::vector<double> along{d.cavitation.pressure(x[state::discharge_pressure])};
  if (!d.line.distributed) return along;
  for (int k = 0; k < d.line.reaches; ++k) along.push_back(d.cavitation.pressure(x[d.line.first_node + k]));
  return along;
}

}  // namespace swashtune
