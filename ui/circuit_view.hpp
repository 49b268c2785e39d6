// A view for the room: the machine as a live circuit diagram drawn with
// ISO 1219-1 symbols (variable pump with its compensator valve, control
// piston and bias spring, discharge line, relief valve, load needle valve,
// pressure gauge, tanks), every line coloured by its pressure on Swashtune's
// own scale, the compensator spool and the swash shown where they are, and
// big read-outs of pressure, flow and swash. It draws what it is given.
#pragma once

#include <QString>
#include <QWidget>
#include <optional>

#include "display_units.hpp"
#include "swashtune/parameters.hpp"
#include "swashtune/simulator.hpp"

namespace swashtune::ui {

class CircuitView : public QWidget {
  Q_OBJECT
 public:
  explicit CircuitView(QWidget* parent = nullptr);

  void setUnits(UnitSystem system);
  // The present state and the parameters in force.
  void setState(const Sample& now, const ModelParameters& p);

  enum class Line { discharge, control, pilot, tank };
  QColor lineColour(Line line) const;
  // Where the moving parts are drawn: the compensator's valve envelope as a
  // share of one box width from the vent position (0) to the supply position
  // (1); the swash as a share of full stroke; the gauge needle's angle in
  // degrees (-135 at zero to +135 at the scale's top).
  double spoolShift() const;
  double strokeShown() const;
  double gaugeAngle() const;
  // The big read-outs as text: 0 pressure, 1 flow, 2 swash.
  QString readoutText(int index) const;
  double scaleTop() const { return scale_top_; }  // Pa

  QSize sizeHint() const override { return QSize(900, 640); }
  QSize minimumSizeHint() const override { return QSize(420, 320); }

 protected:
  void paintEvent(QPaintEvent* event) override;

 private:
  double fraction(double pressure) const;

  DisplayUnits units_ = DisplayUnits::make(UnitSystem::metric);
  std::optional<Sample> now_;
  ModelParameters p_ = default_parameters();
  double scale_top_ = 250e5;
};

}  // namespace swashtune::ui
