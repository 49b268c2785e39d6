// The steady pressure-flow characteristic (pressure against load flow over
// load openings 0..1) with the present operating point moving on it.
#pragma once

#include <QWidget>
#include <optional>
#include <utility>

#include "display_units.hpp"
#include "swashtune/analysis.hpp"

class QCustomPlot;

namespace swashtune::ui {

class PressureFlowView : public QWidget {
  Q_OBJECT
 public:
  explicit PressureFlowView(QWidget* parent = nullptr);
  ~PressureFlowView() override;
  void setUnits(UnitSystem system);
  // A new characteristic; the one shown before stays as a faint curve named
  // by `before` ("before: compensator.setting 210 bar") when it differs.
  void setCharacteristic(const Characteristic& characteristic, double setting_pa, const QString& before = QString());
  // The faint earlier curve's name and point count (empty, 0 when none is shown).
  QString previousName() const;
  void clearPrevious();  // a new study: nothing to compare with
  int previousPoints() const;
  // The friction band's points (0 when the machine has no dry friction) and
  // its edges at no load flow, display units (closing, opening).
  int frictionBandPoints() const;
  std::optional<std::pair<double, double>> frictionBandAtNoFlow() const;
  void setOperatingPoint(double pressure_pa, double load_flow_m3_s);  // the live point
  QCustomPlot* plot() const;
  // The operating point as drawn (display units: flow, pressure); nothing before the first.
  std::optional<std::pair<double, double>> operatingPoint() const;

 private:
  struct Impl;
  Impl* d;  // owned; deleted in the destructor
};

}  // namespace swashtune::ui
