#include "pressure_scale.hpp"

#include <algorithm>
#include <cmath>

namespace swashtune::ui {
namespace {

struct Stop {
  double at;
  QRgb colour;
};

// Chosen for this program: cool at rest, warm as pressure builds.
const Stop kStops[] = {
    {0.00, 0x466a8f},  // slate: tank pressure
    {0.25, 0x2f8f83},  // teal
    {0.50, 0x9fae3b},  // olive
    {0.72, 0xe3b03c},  // sand
    {0.88, 0xe07b39},  // orange
    {1.00, 0xb8402f},  // brick: the top of the scale
};
const QRgb kOverScale = 0x5e2750;  // plum: above the scale

double nice_up(double v) {
  if (!(v > 0.0)) return 1.0;
  const double decade = std::pow(10.0, std::floor(std::log10(v)));
  for (double step : {1.0, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0})
    if (step * decade >= v * (1.0 - 1e-12)) return step * decade;
  return 10.0 * decade;
}

}  // namespace

QColor pressure_colour(double fraction) {
  if (!std::isfinite(fraction)) return QColor(Qt::gray);
  if (fraction > 1.05) return QColor(kOverScale);
  fraction = std::clamp(fraction, 0.0, 1.0);
  for (std::size_t i = 1; i < std::size(kStops); ++i) {
    if (fraction > kStops[i].at) continue;
    const double t = (fraction - kStops[i - 1].at) / (kStops[i].at - kStops[i - 1].at);
    const QColor a(kStops[i - 1].colour), b(kStops[i].colour);
    return QColor::fromRgbF(static_cast<float>(a.redF() + t * (b.redF() - a.redF())),
                            static_cast<float>(a.greenF() + t * (b.greenF() - a.greenF())),
                            static_cast<float>(a.blueF() + t * (b.blueF() - a.blueF())));
  }
  return QColor(kStops[std::size(kStops) - 1].colour);
}

double pressure_scale_top(double compensator_setting, double relief_setting, double relief_override) {
  double highest = compensator_setting;
  if (std::isfinite(relief_setting)) highest = std::max(highest, relief_setting + relief_override);
  return nice_up(1.15 * highest * 1e-5) * 1e5;  // round in bar
}

std::vector<double> pressure_scale_ticks(double top_shown) {
  const double step = nice_up(top_shown / 5.0);
  std::vector<double> ticks;
  for (double v = 0.0; v <= top_shown * (1.0 + 1e-9); v += step) ticks.push_back(v);
  return ticks;
}

}  // namespace swashtune::ui
