// The one registry of every model parameter and run setting: key, symbol,
// unit, default, valid range and meaning. The scenario loader, the command
// line, the desktop editor and the docs all read it; nothing repeats it.
#pragma once

#include <array>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace swashtune {

// Model parameters in the units of model.md's table: SI, except the pump
// speed, which is in rev/min. Values come from the registry's defaults
// (see default_parameters()); the zero initialisers only keep the type trivial.
struct ModelParameters {
  // fluid
  double density = 0;
  double bulk_modulus = 0;
  double air_fraction = 0;
  double polytropic_index = 0;
  bool cavitation = false;         // floor at vapour pressure, release of dissolved air
  double vapour_pressure = 0;      // Pa absolute
  double dissolved_air = 0;        // air volume (at atmosphere) dissolved per oil volume at saturation
  double saturation_pressure = 0;  // Pa absolute, where the oil was saturated with air
  double air_release_time = 0;     // s
  double air_absorption_time = 0;  // s
  double viscosity_grade = 0;      // mm^2/s at 40 degC (ISO 3448 VG)
  double viscosity_index = 0;      // ASTM D2270
  double viscosity_at_100c = 0;    // mm^2/s; 0: from the viscosity index
  double temperature = 0;          // degC
  double thermal_expansion = 0;    // 1/K, volumetric
  // pump
  double displacement = 0;  // m^3/rev at full stroke
  double speed = 0;         // rev/min
  double max_swash_angle = 0;
  double leakage_coefficient = 0;
  double swash_inertia = 0;
  double swash_damping = 0;
  double pressure_moment = 0;
  double swash_friction = 0;  // N*m, Coulomb moment on the cradle
  double pistons = 0;         // number of pistons
  double pump_outlet_volume = 0;  // m^3 inside the pump, pistons' ports to outlet (with a line by geometry)
  bool flow_ripple = false;   // kinematic flow ripple of the pistons
  // bias spring
  double bias_rate = 0;
  double bias_force_at_full_stroke = 0;
  double bias_arm = 0;
  // control piston
  double control_piston_diameter = 0;
  double control_piston_arm = 0;
  double control_dead_volume = 0;
  // compensator
  double setting = 0;
  double spool_diameter = 0;
  double spool_spring_rate = 0;
  double spool_mass = 0;
  double spool_damping = 0;
  double spool_travel = 0;
  double port_width = 0;
  double underlap = 0;
  double spool_discharge_coefficient = 0;
  bool flow_forces = true;
  double bleed_diameter = 0;
  double control_orifice = 0;  // m diameter; +infinity: an open passage (no orifice)
  double orifice_discharge_coefficient = 0;
  double port_volume = 0;  // m^3 between the spool's control port and the orifice
  // relief valve on the discharge line
  double relief_setting = 0;     // Pa cracking pressure; +infinity: no relief valve
  double relief_override = 0;    // Pa rise above cracking at the rated flow
  double relief_rated_flow = 0;  // m^3/s
  // discharge line (model/line.hpp)
  double line_model = 0;  // LineModel: lumped (v1) or distributed
  double line_volume = 0;
  double line_length = 0;          // m; 0: not given (the line is its volume)
  double line_bore = 0;            // m inner diameter; 0: not given
  double line_wall = 0;            // LineWall: rigid, steel tube or hose
  double wall_thickness = 0;       // m, of a tube
  double wall_modulus = 0;         // Pa, Young's modulus of a tube's wall
  double hose_expansion = 0;       // m^3 per m of hose per Pa
  double line_reaches = 0;         // reaches of the distributed line
  double tank_pressure = 0;
  double rated_pressure = 0;  // Pa, of the line and its parts (+inf: not given); only for the caution after a run
  // load needle valve
  double valve_area = 0;
  double valve_discharge_coefficient = 0;
  double opening = 0;
  // numerics of the orifice law
  double transition_pressure = 0;
  // fault conditions (troubleshooting studies); the defaults are a healthy
  // machine, for which the model is exactly model.md v1
  double fault_leakage_factor = 0;
  double fault_entrained_air = 0;
  double fault_bleed_area_factor = 0;
  double fault_bias_strength = 0;
  double fault_spool_friction = 0;
  double fault_stiction_ratio = 0;
  double fault_setting_drift = 0;
  double fault_line_volume_factor = 0;
  double fault_case_pressure = 0;
  // Not a registry entry, never read from a file: +1 or -1 holds every dry
  // friction at its sliding level, as while the pressure rises slowly (the
  // swash destrokes, the spool opens to the control port) or falls slowly.
  // The steady characteristic's friction band is the steady states of the
  // two. 0, in every run: friction follows the speed.
  int friction_branch = 0;
};

// Settings of a run that are not physics.
struct RunSettings {
  double duration = 0;         // s
  double sample_interval = 0;  // s
  double rtol = 0;
  double atol = 0;               // in units of each state's scale (see model.hpp)
  double max_step = 0;           // s
  double settle_time_limit = 0;  // s of simulated time allowed to reach the initial steady state
};

// How one registry entry is bounded. Bounds are inclusive unless marked open.
struct Range {
  double min;
  double max;
  bool min_open = false;
  bool max_open = false;
  bool contains(double v) const { return (min_open ? v > min : v >= min) && (max_open ? v < max : v <= max); }
  std::string describe(std::string_view unit) const;
};

template <class Owner>
struct FieldSpec {
  std::string_view key;     // "compensator.setting", as in scenario files
  std::string_view symbol;  // as in model.md
  std::string_view unit;    // unit of the stored value ("-" for plain numbers)
  double default_value;
  Range range;
  std::string_view meaning;      // one line, for the editor and the docs
  std::string_view metric_unit;  // preferred display units
  std::string_view us_unit;
  double Owner::*field = nullptr;
  bool Owner::*flag = nullptr;  // set instead of field for on/off switches
  // A word that stands for a special value outside the range, e.g. "none"
  // for an orifice that is not fitted (stored as +infinity). Empty: none.
  std::string_view none_word{};
  double none_value = 0.0;

  // A design parameter a designer or a plant can change (an orifice, a
  // spring, a volume, the oil): the sensitivity and tuning tools vary it.
  // Its effects are reported for a change of tuning_change: a fraction of
  // its value (0.1: 10 % larger) or, when not relative, an amount in the
  // stored unit (a temperature: 10 K).
  bool tunable = false;
  bool tuning_relative = true;
  double tuning_change = 0.1;

  bool is_none(double v) const { return !none_word.empty() && v == none_value; }
  // Words only (e.g. line.model = "lumped" or "distributed"), stored as the
  // numbers beside them; an empty word ends the list. No number is accepted.
  struct Choice {
    std::string_view word;
    double value = 0.0;
  };
  std::array<Choice, 3> choices{};
  bool is_choice() const { return !choices[0].word.empty(); }
  // The word that stands for a stored value (a choice or the none word).
  std::optional<std::string_view> word_for(double v) const {
    for (const Choice& c : choices)
      if (!c.word.empty() && c.value == v) return c.word;
    if (is_none(v)) return none_word;
    return std::nullopt;
  }
  std::optional<double> value_of_word(std::string_view w) const {
    for (const Choice& c : choices)
      if (!c.word.empty() && c.word == w) return c.value;
    if (!none_word.empty() && w == none_word) return none_value;
    return std::nullopt;
  }
  // "\"lumped\" or \"distributed\"", for messages.
  std::string choices_text() const {
    std::string out;
    for (std::size_t i = 0; i < choices.size() && !choices[i].word.empty(); ++i) {
      if (i) out += (i + 1 < choices.size() && !choices[i + 1].word.empty()) ? ", " : " or ";
      out += "\"" + std::string(choices[i].word) + "\"";
    }
    return out;
  }

  bool is_flag() const { return flag != nullptr; }
  double get(const Owner& o) const { return is_flag() ? (o.*flag ? 1.0 : 0.0) : o.*field; }
  void set(Owner& o, double v) const {
    if (is_flag())
      o.*flag = v != 0.0;
    else
      o.*field = v;
  }
};

using ParameterSpec = FieldSpec<ModelParameters>;
using SettingSpec = FieldSpec<RunSettings>;

const std::vector<ParameterSpec>& parameter_registry();
const std::vector<SettingSpec>& setting_registry();

// Looks a key up ("pump.speed"); nullptr when there is no such key.
const ParameterSpec* find_parameter(std::string_view key);
const SettingSpec* find_setting(std::string_view key);

ModelParameters default_parameters();
RunSettings default_settings();

// Checks relations between parameters that single ranges cannot express.
// Returns one message per violation; empty when consistent.
std::vector<std::string> check_consistency(const ModelParameters& p);

}  // namespace swashtune
