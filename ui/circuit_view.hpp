// A view for the room: the machine as a live circuit diagram drawn with
// ISO 1219-1 symbols (variable pump with its compensator valve, control
// piston and bias spring, discharge line, relief valve, load needle valve,
// pressure gauge, tanks), every line coloured by its pressure on Swashtune's
// own scale, the compensator spool and the swash shown where they are, and
// big read-outs of pressure, flow and swash. It draws what it is given.
#pragma once

#include <QString>
#include <QTransform>
#include <QWidget>
#include <optional>
#include <vector>

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

  // discharge: the pump end, what the compensator senses; valve_end: where
  // the load and relief valves take their flow (the same for a lumped line).
  enum class Line { discharge, valve_end, control, pilot, tank };
  QColor lineColour(Line line) const;
  // A distributed line is drawn with the pressure along it: the colour at a
  // share of its length from the pump end (0) to the valve end (1), and
  // where that point is drawn, in widget coordinates.
  bool lineIsDistributed() const { return along_.size() > 1; }
  QColor alongLineColour(double share) const;
  QPointF alongLinePoint(double share) const;
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
  QTransform canvasTransform() const;  // the diagram's canvas to the widget
  int readoutBand() const;

  DisplayUnits units_ = DisplayUnits::make(UnitSystem::metric);
  std::optional<Sample> now_;
  ModelParameters p_ = default_parameters();
  double scale_top_ = 250e5;
  std::vector<double> along_;  // pressures along the line, pump end first (one for a lumped line)
};

}  // namespace swashtune::ui
