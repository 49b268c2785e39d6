// The model's state vector: the six states of the v1 model always come
// first, at fixed indices; the optional elements present in a study add
// theirs after them. The layout is assembled once from the parameters (an
// element's presence cannot change during a run) and the state lives in a
// stack-allocated vector of a fixed maximum size.
#pragma once

#include <Eigen/Core>
#include <type_traits>

namespace swashtune {

// A distributed line of 15 reaches takes 105 states. The Jacobian's state
// of automatic-differentiation scalars, max_states^2 doubles, must stay
// under Eigen's 128 kB limit for an object on the stack.
inline constexpr int max_states = 120;

namespace state {
enum Index : int {
  discharge_pressure = 0,  // p_d, Pa (with cavitation: the line's pressure state, see fluid_node.hpp)
  control_pressure = 1,    // p_c, Pa
  swash_angle = 2,         // a, rad
  swash_velocity = 3,      // w, rad/s
  spool_position = 4,      // x_s, m
  spool_velocity = 5,      // v_s, m/s
  core_size = 6
};
}  // namespace state

template <class T>
using StateOf = Eigen::Matrix<T, Eigen::Dynamic, 1, 0, max_states, 1>;
using State = StateOf<double>;
using Jacobian = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, 0, max_states, max_states>;

// Calls f(std::integral_constant<int, K>{}) with K = n for the layout sizes
// that occur (6 to 11 states), else with K = Eigen::Dynamic: fixed-size
// Eigen code, which the compiler unrolls, for the common layouts and one
// generic instance for the rest. Every instance must return the same type.
template <class F>
decltype(auto) with_layout_size(int n, F&& f) {
  switch (n) {
    case 6:
      return f(std::integral_constant<int, 6>{});
    case 7:
      return f(std::integral_constant<int, 7>{});
    case 8:
      return f(std::integral_constant<int, 8>{});
    case 9:
      return f(std::integral_constant<int, 9>{});
    case 10:
      return f(std::integral_constant<int, 10>{});
    case 11:
      return f(std::integral_constant<int, 11>{});
    default:
      return f(std::integral_constant<int, Eigen::Dynamic>{});
  }
}

// Where the optional elements keep their states; -1 when absent.
struct Layout {
  int size = state::core_size;
  int port_pressure = -1;  // control orifice: pressure of the spool's control port
  int line_air = -1;       // cavitation: released air in the line
  int chamber_air = -1;    //   ... in the control chamber
  int port_air = -1;       //   ... in the control port
  int shaft_angle = -1;    // flow ripple: shaft angle, rad
  int line_reaches = 0;    // distributed line (model/line.hpp): its reaches N, and where
  int line_nodes = -1;     //   the pressures of nodes 1..N,
  int line_flows = -1;     //   the flows of reaches 1..N and
  int line_friction = -1;  //   their unsteady-friction states (LineElement::friction_terms per reach) begin

  int add() { return size++; }
  friend bool operator==(const Layout& a, const Layout& b) {
    return a.size == b.size && a.port_pressure == b.port_pressure && a.line_air == b.line_air &&
           a.chamber_air == b.chamber_air && a.port_air == b.port_air && a.shaft_angle == b.shaft_angle &&
           a.line_reaches == b.line_reaches && a.line_nodes == b.line_nodes;
  }
  friend bool operator!=(const Layout& a, const Layout& b) { return !(a == b); }
};

}  // namespace swashtune
