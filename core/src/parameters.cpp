#include "swashtune/parameters.hpp"

#include <array>
#include <cmath>
#include <limits>
#include <optional>
#include <sstream>

namespace swashtune {
namespace {

constexpr double inf = std::numeric_limits<double>::infinity();
constexpr double deg = 3.14159265358979323846 / 180.0;

// Ranges are physical limits (or the model's own validity), generous enough
// for any industrial pump but tight enough to catch a value given in the
// wrong unit (a line volume of 1000 m^3, an opening of 50).
constexpr Range positive(double max) { return Range{0.0, max, true, false}; }
constexpr Range non_negative(double max) { return Range{0.0, max, false, false}; }

using P = ModelParameters;

// A registry row that also accepts a word for a special value (stored
// outside the range), e.g. "none" for a part that is not fitted.
ParameterSpec with_word(ParameterSpec spec, std::string_view word, double value) {
  spec.none_word = word;
  spec.none_value = value;
  return spec;
}

// A design parameter the sensitivity and tuning tools vary, by 10 % of its
// value or, with an amount, by that much in its stored unit.
ParameterSpec tunable(ParameterSpec spec, std::optional<double> amount = std::nullopt) {
  spec.tunable = true;
  if (amount) {
    spec.tuning_relative = false;
    spec.tuning_change = *amount;
  }
  return spec;
}

// A registry row whose value is one of a few words (stored as numbers).
ParameterSpec with_choices(ParameterSpec spec, std::array<ParameterSpec::Choice, 3> choices) {
  spec.choices = choices;
  return spec;
}

std::vector<ParameterSpec> make_parameters() {
  // clang-format off
  return {
    {"fluid.density", "rho", "kg/m^3", 870.0, Range{500.0, 2000.0}, "density of the oil at 40 degC", "kg/m^3", "lb/in^3", &P::density},
    {"fluid.bulk_modulus", "beta_oil", "Pa", 1.6e9, Range{1e8, 5e9}, "bulk modulus of the air-free oil", "GPa", "psi", &P::bulk_modulus},
    {"fluid.air_fraction", "x_a", "-", 0.0, Range{0.0, 0.5, false, true}, "volume fraction of undissolved air at atmospheric pressure", "%", "%", &P::air_fraction},
    {"fluid.polytropic_index", "n", "-", 1.4, Range{1.0, 1.4}, "polytropic index of the air (1 isothermal, 1.4 adiabatic)", "-", "-", &P::polytropic_index},
    {"fluid.cavitation", "", "-", 1.0, Range{0.0, 1.0}, "no pressure below vapour pressure; dissolved air comes out below saturation (false: v1, oil may go into tension)", "-", "-", nullptr, &P::cavitation},
    {"fluid.vapour_pressure", "p_v", "Pa", 1e3, Range{1.0, 5e4}, "vapour pressure of the oil, absolute", "bar", "psi", &P::vapour_pressure},
    {"fluid.dissolved_air", "alpha", "-", 0.09, Range{0.0, 0.3}, "air dissolved per oil volume at saturation, as volume at atmospheric pressure (Henry's law)", "%", "%", &P::dissolved_air},
    {"fluid.saturation_pressure", "p_sat", "Pa", 101325.0, Range{1e4, 1e6}, "absolute pressure at which the oil was saturated with air (the tank's)", "bar", "psi", &P::saturation_pressure},
    {"fluid.air_release_time", "tau_r", "s", 0.05, Range{1e-4, 100.0}, "time constant of dissolved air coming out below saturation", "ms", "ms", &P::air_release_time},
    {"fluid.air_absorption_time", "tau_a", "s", 2.0, Range{1e-3, 1e4}, "time constant of released air dissolving again above saturation", "s", "s", &P::air_absorption_time},
    tunable({"fluid.viscosity_grade", "nu_40", "mm^2/s", 46.0, Range{2.5, 1500.0}, "kinematic viscosity at 40 degC (ISO 3448 grade, e.g. 32, 46, 68)", "mm^2/s", "mm^2/s", &P::viscosity_grade}),
    {"fluid.viscosity_index", "VI", "-", 100.0, Range{-50.0, 400.0}, "viscosity index (ASTM D2270); sets the 100 degC viscosity unless that is given", "-", "-", &P::viscosity_index},
    with_word({"fluid.viscosity_at_100C", "nu_100", "mm^2/s", 0.0, Range{2.0, 500.0}, "kinematic viscosity at 100 degC (\"from index\": from grade and viscosity index)", "mm^2/s", "mm^2/s", &P::viscosity_at_100c}, "from index", 0.0),
    tunable({"fluid.temperature", "T", "degC", 50.0, Range{-40.0, 150.0}, "oil temperature; coefficients of leakage and damping are given at 40 degC", "degC", "degF", &P::temperature}, 10.0),
    {"fluid.thermal_expansion", "alpha_T", "K^-1", 7e-4, Range{0.0, 2e-3}, "volumetric thermal expansion of the oil (density is given at 40 degC)", "K^-1", "K^-1", &P::thermal_expansion},

    {"pump.displacement", "D_max", "m^3/rev", 45e-6, positive(1e-2), "displacement at full stroke", "cm^3/rev", "in^3/rev", &P::displacement},
    {"pump.speed", "N", "rev/min", 1800.0, non_negative(2e4), "shaft speed", "rev/min", "rev/min", &P::speed},
    {"pump.max_swash_angle", "a_max", "rad", 17.0 * deg, Range{0.5 * deg, 30.0 * deg}, "swash angle at full stroke", "deg", "deg", &P::max_swash_angle},
    {"pump.leakage_coefficient", "K_leak", "m^3/(s*Pa)", 1.29e-12, non_negative(1e-9), "internal leakage per unit discharge pressure", "L/min/bar", "gpm/psi", &P::leakage_coefficient},
    {"pump.swash_inertia", "J", "kg*m^2", 0.002, positive(10.0), "moment of inertia of the swashplate", "kg*m^2", "lb*in^2", &P::swash_inertia},
    tunable({"pump.swash_damping", "c_a", "N*m*s/rad", 3.0, non_negative(1e5), "viscous damping of the swashplate", "N*m*s/rad", "lbf*in*s/rad", &P::swash_damping}),
    {"pump.pressure_moment", "K_carry", "N*m/Pa", 4.1e-7, Range{-1e-4, 1e-4}, "swash moment per unit discharge pressure (+ destrokes)", "N*m/bar", "lbf*in/psi", &P::pressure_moment},
    {"pump.swash_friction", "M_f", "N*m", 5.0, non_negative(1e3), "Coulomb friction moment of the swash cradle", "N*m", "lbf*in", &P::swash_friction},
    {"pump.pistons", "z", "-", 9.0, Range{3.0, 15.0}, "number of pistons", "-", "-", &P::pistons},
    tunable({"pump.outlet_volume", "V_o", "m^3", 0.1e-3, non_negative(0.1), "oil volume inside the pump from the cylinder ports to the outlet; joins the line at the pump end when the line is given by line.length and line.bore (line.volume includes it)", "cm^3", "in^3", &P::pump_outlet_volume}),
    {"pump.flow_ripple", "", "-", 0.0, Range{0.0, 1.0}, "add the kinematic flow ripple of the pistons", "-", "-", nullptr, &P::flow_ripple},

    tunable({"bias_spring.rate", "k_b", "N/m", 30e3, non_negative(1e8), "rate of the bias spring", "N/mm", "lbf/in", &P::bias_rate}),
    tunable({"bias_spring.force_at_full_stroke", "F_b,full", "N", 300.0, non_negative(1e6), "bias spring force at full stroke", "N", "lbf", &P::bias_force_at_full_stroke}),
    {"bias_spring.arm", "r_b", "m", 0.05, positive(1.0), "lever arm of the bias spring on the swashplate", "mm", "in", &P::bias_arm},

    tunable({"control_piston.diameter", "d_c", "m", 0.028, positive(0.5), "control piston diameter", "mm", "in", &P::control_piston_diameter}),
    {"control_piston.arm", "r_c", "m", 0.05, positive(1.0), "lever arm of the control piston on the swashplate", "mm", "in", &P::control_piston_arm},
    tunable({"control_piston.dead_volume", "V_c0", "m^3", 15e-6, positive(1e-2), "control chamber volume at full stroke", "cm^3", "in^3", &P::control_dead_volume}),

    tunable({"compensator.setting", "p_set", "Pa", 210e5, non_negative(1e9), "compensator setting (spring preload over the sensing area)", "bar", "psi", &P::setting}),
    tunable({"compensator.spool_diameter", "d_s", "m", 3.2e-3, positive(0.1), "diameter of the sensing area", "mm", "in", &P::spool_diameter}),
    tunable({"compensator.spring_rate", "k_s", "N/m", 65e3, non_negative(1e9), "rate of the compensator spring", "N/mm", "lbf/in", &P::spool_spring_rate}),
    {"compensator.spool_mass", "m_s", "kg", 0.005, positive(10.0), "moving mass of the spool", "g", "lb", &P::spool_mass},
    tunable({"compensator.spool_damping", "b_s", "N*s/m", 30.0, non_negative(1e6), "viscous damping of the spool", "N*s/m", "lbf*s/in", &P::spool_damping}),
    {"compensator.spool_travel", "x_max", "m", 1.0e-3, positive(0.05), "spool travel either side of centre", "mm", "in", &P::spool_travel},
    tunable({"compensator.port_width", "w", "m", 0.008, positive(0.5), "metering area gradient (port width)", "mm", "in", &P::port_width}),
    tunable({"compensator.underlap", "u", "m", 0.08e-3, Range{-0.05, 0.05}, "underlap of the metering edges (negative: overlap)", "mm", "in", &P::underlap}),
    {"compensator.discharge_coefficient", "Cd", "-", 0.7, Range{0.0, 1.0, true, false}, "discharge coefficient of the metering edges", "-", "-", &P::spool_discharge_coefficient},
    {"compensator.flow_forces", "", "-", 1.0, Range{0.0, 1.0}, "include steady flow forces on the spool", "-", "-", nullptr, &P::flow_forces},
    tunable({"compensator.bleed_orifice", "d_b", "m", 1.0e-3, non_negative(0.05), "diameter of the fixed bleed from control chamber to case (0: none)", "mm", "in", &P::bleed_diameter}),
    tunable(with_word({"compensator.control_orifice", "d_o", "m", 1.5e-3, positive(0.05), "orifice in the control line between the spool's control port and the control piston (\"none\": open passage)", "mm", "in", &P::control_orifice}, "none", inf)),
    {"compensator.orifice_discharge_coefficient", "Cd_o", "-", 0.7, Range{0.0, 1.0, true, false}, "discharge coefficient of the control orifice", "-", "-", &P::orifice_discharge_coefficient},
    tunable({"compensator.port_volume", "V_k", "m^3", 1e-6, positive(1e-3), "oil volume between the spool's control port and the control orifice", "cm^3", "in^3", &P::port_volume}),

    with_word({"relief.setting", "p_r", "Pa", 250e5, positive(1e9), "cracking pressure of the relief valve on the discharge line (\"none\": no valve)", "bar", "psi", &P::relief_setting}, "none", inf),
    {"relief.override", "dp_r", "Pa", 15e5, positive(1e8), "pressure rise above cracking at the rated flow", "bar", "psi", &P::relief_override},
    {"relief.rated_flow", "Q_r", "m^3/s", 100.0 / 60000.0, positive(1.0), "flow of the relief valve at cracking pressure plus override", "L/min", "gpm", &P::relief_rated_flow},

    with_choices({"line.model", "", "-", 0.0, Range{0.0, 1.0}, "\"lumped\": the line is one volume (v1); \"distributed\": pressure waves along it (needs line.length and line.bore)", "-", "-", &P::line_model}, {{{"lumped", 0.0}, {"distributed", 1.0}}}),
    tunable({"line.volume", "V_d", "m^3", 1.0e-3, positive(10.0), "oil volume between pump and load valve (when line.length and line.bore are not given)", "L", "in^3", &P::line_volume}),
    tunable(with_word({"line.length", "L", "m", 0.0, positive(1e4), "length of the discharge line from the pump to the load valve (\"none\": the line is given by line.volume)", "m", "ft", &P::line_length}, "none", 0.0)),
    tunable(with_word({"line.bore", "d_l", "m", 0.0, positive(1.0), "inner diameter of the discharge line (\"none\": given by line.volume)", "mm", "in", &P::line_bore}, "none", 0.0)),
    with_choices({"line.wall", "", "-", 1.0, Range{0.0, 2.0}, "wall of the line: \"steel\" tube (line.wall_thickness, line.wall_modulus), \"hose\" (line.hose_expansion) or \"rigid\"", "-", "-", &P::line_wall}, {{{"steel", 1.0}, {"hose", 2.0}, {"rigid", 0.0}}}),
    {"line.wall_thickness", "e", "m", 2.0e-3, positive(0.1), "wall thickness of a steel tube", "mm", "in", &P::wall_thickness},
    {"line.wall_modulus", "E", "Pa", 206e9, Range{1e8, 1e12}, "Young's modulus of a tube's wall (steel about 206 GPa)", "GPa", "psi", &P::wall_modulus},
    {"line.hose_expansion", "C_h", "m^3/(m*Pa)", 1.3e-13, non_negative(1e-9), "volumetric expansion of a hose per metre and per unit pressure (from the hose's data)", "cm^3/(m*bar)", "in^3/(ft*psi)", &P::hose_expansion},
    {"line.reaches", "N_l", "-", 8.0, Range{2.0, 15.0}, "reaches of the distributed line (more follow higher modes, at more cost)", "-", "-", &P::line_reaches},
    {"line.tank_pressure", "p_t", "Pa", 0.0, non_negative(1e7), "case and tank pressure", "bar", "psi", &P::tank_pressure},
    with_word({"line.rated_pressure", "p_rated", "Pa", inf, positive(1e9), "rated pressure of the discharge line and its parts: a run that peaks above it prints a caution (\"none\": not given)", "bar", "psi", &P::rated_pressure}, "none", inf),

    {"load.valve_area", "A_v", "m^2", 56.9e-6, positive(1.0), "flow area of the load needle valve fully open", "mm^2", "in^2", &P::valve_area},
    {"load.discharge_coefficient", "Cd_v", "-", 0.7, Range{0.0, 1.0, true, false}, "discharge coefficient of the load valve", "-", "-", &P::valve_discharge_coefficient},
    {"load.opening", "s", "-", 1.0, Range{0.0, 1.0}, "load valve opening (0 closed, 1 fully open)", "-", "-", &P::opening},

    {"solver.transition_pressure", "dp_tr", "Pa", 1e4, Range{1.0, 1e6}, "pressure drop where orifice flow turns laminar", "bar", "psi", &P::transition_pressure},

    {"faults.leakage_factor", "f_leak", "-", 1.0, Range{0.0, 50.0}, "worn pump: internal leakage multiplied by this", "-", "-", &P::fault_leakage_factor},
    {"faults.entrained_air", "x_a,add", "-", 0.0, Range{0.0, 0.3}, "aerated oil: air fraction (at atmosphere) added to fluid.air_fraction", "%", "%", &P::fault_entrained_air},
    {"faults.bleed_area_factor", "f_b", "-", 1.0, Range{0.0, 25.0}, "bleed orifice flow area multiplied (0 clogged, > 1 worn open)", "-", "-", &P::fault_bleed_area_factor},
    {"faults.bias_spring_strength", "f_k", "-", 1.0, Range{0.0, 2.0}, "bias spring force and rate multiplied (< 1 weak, 0 broken)", "-", "-", &P::fault_bias_strength},
    {"faults.spool_friction", "F_c", "N", 0.0, non_negative(500.0), "sticky compensator spool: Coulomb friction force", "N", "lbf", &P::fault_spool_friction},
    {"faults.spool_stiction_ratio", "F_s/F_c", "-", 1.5, Range{1.0, 5.0}, "breakaway friction over Coulomb friction of a sticky spool", "-", "-", &P::fault_stiction_ratio},
    {"faults.setting_drift", "f_set", "-", 0.0, Range{-0.5, 0.5}, "fatigued compensator spring: fraction of its preload lost (+ lowers the pressure)", "%", "%", &P::fault_setting_drift},
    {"faults.line_volume_factor", "f_V", "-", 1.0, Range{0.05, 20.0}, "discharge volume multiplied (< 1 undersized, > 1 oversized)", "-", "-", &P::fault_line_volume_factor},
    {"faults.case_pressure", "p_case", "Pa", 0.0, non_negative(5e6), "case pressure raised above tank (the control chamber drains to case)", "bar", "psi", &P::fault_case_pressure},
  };
  // clang-format on
}

using R = RunSettings;

std::vector<SettingSpec> make_settings() {
  // clang-format off
  return {
    {"scenario.duration", "", "s", 1.0, Range{0.0, 1e6, true, false}, "simulated time", "s", "s", &R::duration},
    {"scenario.sample_interval", "", "s", 0.5e-3, Range{1e-7, 10.0}, "spacing of the written trace", "ms", "ms", &R::sample_interval},
    {"scenario.settle_time_limit", "", "s", 5.0, Range{0.0, 1e3}, "simulated time allowed for reaching the initial steady state", "s", "s", &R::settle_time_limit},
    {"solver.rtol", "", "-", 1e-6, Range{1e-12, 1e-2}, "relative tolerance of the integrator", "-", "-", &R::rtol},
    {"solver.atol", "", "-", 1e-6, Range{1e-14, 1e-2}, "absolute tolerance, as a fraction of each state's scale", "-", "-", &R::atol},
    {"solver.max_step", "", "s", 5e-3, Range{1e-7, 1.0}, "longest step the integrator may take", "ms", "ms", &R::max_step},
  };
  // clang-format on
}

template <class Spec>
const Spec* find_in(const std::vector<Spec>& registry, std::string_view key) {
  for (const Spec& s : registry)
    if (s.key == key) return &s;
  return nullptr;
}

template <class Owner, class Spec>
Owner defaults_of(const std::vector<Spec>& registry) {
  Owner o{};
  for (const Spec& s : registry) s.set(o, s.default_value);
  return o;
}

std::string number(double v) {
  std::ostringstream out;
  out << v;
  return out.str();
}

}  // namespace

std::string Range::describe(std::string_view unit) const {
  const std::string u = (unit == "-" || unit.empty()) ? "" : " " + std::string(unit);
  std::string lo = (min_open ? "> " : ">= ") + number(min) + u;
  std::string hi = (max_open ? "< " : "<= ") + number(max) + u;
  if (std::isinf(max)) return lo;
  return lo + " and " + hi;
}

const std::vector<ParameterSpec>& parameter_registry() {
  static const std::vector<ParameterSpec> registry = make_parameters();
  return registry;
}

const std::vector<SettingSpec>& setting_registry() {
  static const std::vector<SettingSpec> registry = make_settings();
  return registry;
}

const ParameterSpec* find_parameter(std::string_view key) { return find_in(parameter_registry(), key); }
const SettingSpec* find_setting(std::string_view key) { return find_in(setting_registry(), key); }

ModelParameters default_parameters() { return defaults_of<ModelParameters>(parameter_registry()); }
RunSettings default_settings() { return defaults_of<RunSettings>(setting_registry()); }

std::vector<std::string> check_consistency(const ModelParameters& p) {
  std::vector<std::string> problems;
  if (std::abs(p.underlap) >= p.spool_travel)
    problems.push_back("compensator.underlap (" + number(p.underlap) +
                       " m) must be smaller in size than compensator.spool_travel (" + number(p.spool_travel) + " m)");
  if (p.tank_pressure >= p.setting && p.setting > 0)
    problems.push_back("line.tank_pressure (" + number(p.tank_pressure) + " Pa) must be below compensator.setting (" +
                       number(p.setting) + " Pa)");
  const bool length = p.line_length > 0.0, bore = p.line_bore > 0.0;
  if (length != bore)
    problems.push_back(std::string(length ? "line.length is given without line.bore" : "line.bore is given without line.length") +
                       ": give both to describe the line by its geometry, or neither and give line.volume");
  if (length && bore && p.line_volume != find_parameter("line.volume")->default_value)
    problems.push_back("line.volume (" + number(p.line_volume) + " m^3) and line.length and line.bore are all given: the "
                       "geometry gives the volume (" + number(0.25 * 3.14159265358979323846 * p.line_bore * p.line_bore * p.line_length) +
                       " m^3); remove one or the other");
  if (p.line_model == 1.0 && !(length && bore))
    problems.push_back("line.model = \"distributed\" needs the line's geometry: give line.length and line.bore");
  if (p.line_reaches != std::floor(p.line_reaches))
    problems.push_back("line.reaches (" + number(p.line_reaches) + ") must be a whole number");
  return problems;
}

}  // namespace swashtune
