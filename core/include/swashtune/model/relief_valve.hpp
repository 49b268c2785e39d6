// The relief valve on the discharge line, a static element: closed below
// its cracking pressure, above it a flow rising linearly with the pressure,
// the rated flow at cracking pressure plus override (the steady
// characteristic of a direct-acting relief valve, linearised), rounded over
// 2 % of the override so the right-hand side stays smooth. relief.setting =
// "none" removes it (v1).
#pragma once

#include <cmath>

#include "swashtune/model/fluid_node.hpp"
#include "swashtune/parameters.hpp"

namespace swashtune {

struct ReliefValveElement {
  bool present = false;
  double cracking = 0.0;  // Pa, gauge
  double gain = 0.0;      // m^3/s per Pa above cracking
  double width = 1.0;     // Pa

  ReliefValveElement() = default;
  explicit ReliefValveElement(const ModelParameters& p)
      : present(std::isfinite(p.relief_setting)),
        cracking(p.relief_setting),
        gain(p.relief_rated_flow / p.relief_override),
        width(0.02 * p.relief_override) {}

  // Flow from the line to tank at line pressure p (tank pressure p_t).
  template <class T>
  T flow(const T& p, double p_t) const {
    if (!present) return T(0.0);
    return gain * smooth_positive_part(T(p - (cracking + p_t)), width);
  }
};

}  // namespace swashtune
