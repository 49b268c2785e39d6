// The discharge line between the pump and the load valve: its geometry and
// wall, and, when distributed, the pressure waves along it.
//
// Geometry: a line given by length and bore holds A L of oil; its wall adds
// compliance to the oil's, per unit volume w = D / (E e) for a thin-walled
// tube (Korteweg, 1878: the wave speed c = sqrt(K / rho / (1 + K D / (E e))))
// or w = C_h / A for a hose whose volume grows by C_h per metre and pascal.
// The lumped line (v1) is one volume with that compliance.
//
// Distributed: the line is cut into N equal reaches (a segmented line,
// Wylie and Streeter, Fluid Transients in Systems, 1993, ch. 5's lumped
// form): N + 1 nodes hold the compliance (half a reach at each end, a whole
// reach between), N reaches the oil's inertia rho l / A and its laminar
// friction. Friction is frequency-dependent: the wall shear of unsteady
// laminar flow is Zielke's (1968) convolution of the flow's acceleration
// with a weighting function W(tau), tau = nu t / r^2, here a sum of five
// exponentials W ~ sum m_i exp(-n_i tau), each a first-order state per
// reach. The weights are fitted (tests/python/fit_friction_weights.py) so
// that a reach's series impedance follows Brown's (1962) exact laminar one
// to 1.0 % up to w r^2 / nu = 1e5 (7 kHz in a 20 mm line of 46 mm^2/s
// oil); Trikha's (1975) three terms miss it by 2.4 % and under-damp the
// first modes. Their integral is 0.0853 (Zielke's W: 1/12). Five, not
// more: 15 reaches of 7 states and the pump's fill max_states.
// reach. The pressure drop over a reach is
//   dp_f = (8 mu l / (r^2 A)) (Q + 1/2 sum_i (z_i + m_i Q)),
//   dz_i/dt = -(n_i nu / r^2) (z_i + m_i Q),
// which is Hagen-Poiseuille's 128 mu l Q / (pi D^4) in steady flow (z_i =
// -m_i Q). The pump end is node 0, the model's discharge-pressure state
// (what the compensator senses); the load valve and the relief valve take
// their flow at node N. A segmented line follows the lowest modes closely
// and the higher ones less: the k-th mode of N reaches lies near
// (2N / pi) sin(k pi / (2N)) times the exact one (its dispersion), so
// more reaches follow more modes (DEVELOPERS.md gives the measured errors).
#pragma once

#include <cmath>

#include "swashtune/model/layout.hpp"
#include "swashtune/parameters.hpp"

namespace swashtune {

enum class LineModel : int { lumped = 0, distributed = 1 };
enum class LineWall : int { rigid = 0, steel = 1, hose = 2 };

// Whether the parameters ask for waves along the line (its geometry given
// and line.model = "distributed"): decides the layout and the trace columns.
inline bool has_distributed_line(const ModelParameters& p) {
  return p.line_length > 0.0 && p.line_bore > 0.0 &&
         static_cast<LineModel>(static_cast<int>(p.line_model)) == LineModel::distributed;
}

struct LineElement {
  // From tests/python/fit_friction_weights.py (see above).
  static constexpr int friction_terms = 5;
  static constexpr double weight_m[friction_terms] = {1.31978, 7.158, 17.2729, 73.4256, 284.568};
  static constexpr double weight_n[friction_terms] = {26.3746, 275.988, 2887.97, 30220.1, 316228};

  bool geometry = false;     // length and bore given
  bool distributed = false;  // waves along the line
  int reaches = 0;
  double length = 0.0;  // m
  double area = 0.0;    // m^2
  double wall = 0.0;    // compliance of the wall per unit volume, 1/Pa
  double reach_volume = 0.0;
  double acceleration_gain = 0.0;  // A / (rho l): dQ/dt per Pa over a reach
  double friction_gain = 0.0;      // 8 mu l / (r^2 A): Pa per m^3/s of steady flow over a reach
  double decay[friction_terms] = {};  // n_i nu / r^2, 1/s
  // Where the states sit (Layout::line_*): node k = 1..N at line_nodes + k - 1.
  int first_node = -1, first_flow = -1, first_friction = -1;

  LineElement() = default;
  // density and kinematic viscosity (m^2/s) of the oil at its temperature.
  LineElement(const ModelParameters& p, double density, double kinematic_viscosity)
      : geometry(p.line_length > 0.0 && p.line_bore > 0.0), distributed(has_distributed_line(p)) {
    if (!geometry) return;
    length = p.line_length;
    area = 0.25 * 3.14159265358979323846 * p.line_bore * p.line_bore;
    switch (static_cast<LineWall>(static_cast<int>(p.line_wall))) {
      case LineWall::steel:
        wall = p.line_bore / (p.wall_modulus * p.wall_thickness);
        break;
      case LineWall::hose:
        wall = p.hose_expansion / area;
        break;
      case LineWall::rigid:
        wall = 0.0;
        break;
    }
    if (!distributed) return;
    reaches = static_cast<int>(p.line_reaches);
    const double l = length / reaches, r = 0.5 * p.line_bore;
    reach_volume = area * l;
    acceleration_gain = area / (density * l);
    friction_gain = 8.0 * density * kinematic_viscosity * l / (r * r * area);
    for (int i = 0; i < friction_terms; ++i) decay[i] = weight_n[i] * kinematic_viscosity / (r * r);
  }

  double volume() const { return area * length; }

  // Waves along the line at pressure-independent oil bulk modulus K: the
  // Korteweg speed with the wall's compliance.
  double wave_speed(double bulk_modulus, double density) const {
    return std::sqrt(1.0 / (density * (1.0 / bulk_modulus + wall)));
  }

  // The highest frequency whose modes the N reaches place within 5 % (the
  // dispersion sin(x) / x, x = k pi / (2N), falls to 0.95 at x = 0.5513):
  // k c / (2L) with k = 0.5513 2N / pi, at the wave speed c.
  double resolved_frequency(double wave_speed_now) const {
    if (!distributed) return 0.0;
    const double k = 0.5513 * 2.0 * reaches / 3.14159265358979323846;
    return k * wave_speed_now / (2.0 * length);
  }

  void add_states(Layout& layout) const {
    if (!distributed) return;
    layout.line_reaches = reaches;
    layout.line_nodes = layout.size;
    layout.size += reaches;
    layout.line_flows = layout.size;
    layout.size += reaches;
    layout.line_friction = layout.size;
    layout.size += friction_terms * reaches;
  }

  void locate(const Layout& layout) {
    first_node = layout.line_nodes;
    first_flow = layout.line_flows;
    first_friction = layout.line_friction;
  }

  // The state of the valve-end node (N): the pressure state the load and
  // relief valves see; the pump end's for a lumped line.
  template <class T>
  const T& valve_end_state(const StateOf<T>& x) const {
    return distributed ? x[first_node + reaches - 1] : x[state::discharge_pressure];
  }

  template <class T>
  const T& flow_into_line(const StateOf<T>& x) const {
    return x[first_flow];
  }

  // Rates of the line's own states: node pressures 1..N (their pressures
  // from `pressure_of`, which applies the vapour floor, and their rate from
  // `node_rate(pressure, volume, net_flow)`), reach flows and friction
  // states; `valve_outflow` leaves node N. Node 0's rate is the model's.
  template <class T, class PressureOf, class NodeRate>
  void rates(const StateOf<T>& x, const T& pump_end_pressure, const T& valve_outflow, PressureOf pressure_of,
             NodeRate node_rate, StateOf<T>& dx) const {
    T upstream = pump_end_pressure;
    for (int j = 0; j < reaches; ++j) {
      const T& q = x[first_flow + j];
      const T downstream = pressure_of(x[first_node + j]);
      // Sums start from a term, not from T(0): an automatic-differentiation
      // zero has no derivatives, and adding into it would drop them.
      T unsteady = x[first_friction + friction_terms * j] + weight_m[0] * q;
      dx[first_friction + friction_terms * j] = T(-decay[0] * unsteady);
      for (int i = 1; i < friction_terms; ++i) {
        const T& z = x[first_friction + friction_terms * j + i];
        const T y = z + weight_m[i] * q;
        unsteady = T(unsteady + y);
        dx[first_friction + friction_terms * j + i] = T(-decay[i] * y);
      }
      const T drop = friction_gain * (q + 0.5 * unsteady);
      dx[first_flow + j] = T(acceleration_gain * (upstream - downstream - drop));
      const T out = j + 1 < reaches ? T(x[first_flow + j + 1]) : valve_outflow;
      const double volume = j + 1 < reaches ? reach_volume : 0.5 * reach_volume;
      dx[first_node + j] = node_rate(downstream, volume, T(q - out));
      upstream = downstream;
    }
  }

  // A steady flow q along the line from the pump end at pressure p0: the
  // node pressures fall by the laminar drop of each reach.
  template <class Vector>
  void set_steady(Vector& x, double pump_end_pressure, double q) const {
    if (!distributed) return;
    for (int j = 0; j < reaches; ++j) {
      x[first_node + j] = pump_end_pressure - friction_gain * q * (j + 1);
      x[first_flow + j] = q;
      for (int i = 0; i < friction_terms; ++i) x[first_friction + friction_terms * j + i] = -weight_m[i] * q;
    }
  }

  // Scales of the states for the error control (pressure, flow).
  template <class Vector>
  void set_scales(Vector& s, double pressure, double flow) const {
    if (!distributed) return;
    for (int j = 0; j < reaches; ++j) {
      s[first_node + j] = pressure;
      s[first_flow + j] = flow;
      for (int i = 0; i < friction_terms; ++i) s[first_friction + friction_terms * j + i] = weight_m[i] * flow;
    }
  }
};

}  // namespace swashtune
