// The orifice in the control line between the compensator spool's control
// port and the control piston, and the small port volume it separates from
// the control chamber: on real pumps the part that sets how fast the pump
// destrokes and how well the loop is damped. The spool meters into and out
// of the port volume; the orifice joins the port to the chamber.
// compensator.control_orifice = "none" removes both (v1: the spool meters
// straight into the chamber).
#pragma once

#include <cmath>

#include "swashtune/model/layout.hpp"
#include "swashtune/parameters.hpp"

namespace swashtune {

struct ControlOrificeElement {
  bool present = false;
  double area = 0.0;  // m^2
  double discharge_coefficient = 0.7;
  double port_volume = 0.0;  // m^3

  ControlOrificeElement() = default;
  explicit ControlOrificeElement(const ModelParameters& p)
      : present(std::isfinite(p.control_orifice)),
        area(present ? 0.25 * 3.14159265358979323846 * p.control_orifice * p.control_orifice : 0.0),
        discharge_coefficient(p.orifice_discharge_coefficient),
        port_volume(p.port_volume) {}

  void add_states(Layout& layout) const {
    if (present) layout.port_pressure = layout.add();
  }
};

}  // namespace swashtune
