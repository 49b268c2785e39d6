// The controls a person turns while the pump runs: load restriction (coarse
// and fine, plus fast close/open with an adjustable ramp), compensator
// setting, pump speed, time scale and the run buttons. It only asks for
// changes; the session turns them into events.
#pragma once

#include <QWidget>

#include "display_units.hpp"
#include "swashtune/parameters.hpp"

class QSlider;
class QDoubleSpinBox;
class QSpinBox;
class QComboBox;
class QPushButton;
class QLabel;

namespace swashtune::ui {

class ControlPanel : public QWidget {
  Q_OBJECT
 public:
  explicit ControlPanel(QWidget* parent = nullptr);

  void setUnits(UnitSystem system);
  // Shows these values without asking for changes (after a load or reset,
  // or when a change came from elsewhere).
  void showParameters(const ModelParameters& p);
  void setRunning(bool running);
  double timeScale() const;

  // For tests and scripting: the widgets themselves.
  QSlider* openingSlider() const { return opening_slider_; }
  QDoubleSpinBox* openingFine() const { return opening_fine_; }
  QDoubleSpinBox* rampMs() const { return ramp_ms_; }
  QPushButton* closeFastButton() const { return close_fast_; }
  QPushButton* openFastButton() const { return open_fast_; }
  QDoubleSpinBox* settingBox() const { return setting_; }
  QSpinBox* speedBox() const { return speed_; }
  QComboBox* timeScaleBox() const { return time_scale_; }
  QPushButton* runButton() const { return run_; }

 signals:
  void changeRequested(const QString& key, double stored_value, double ramp_seconds);
  // A drag of the coarse slider: many small changes that undo as one.
  void sliderMoved(const QString& key, double stored_value);
  void runRequested(bool run);
  void stepRequested();
  void resetRequested();
  void timeScaleChanged(double scale);

 private:
  void requestOpening(double opening, double ramp);

  DisplayUnits units_ = DisplayUnits::make(UnitSystem::metric);
  bool showing_ = false;  // true while showParameters() updates the widgets
  QSlider* opening_slider_;
  QDoubleSpinBox* opening_fine_;
  QDoubleSpinBox* ramp_ms_;
  QPushButton* close_fast_;
  QPushButton* open_fast_;
  QDoubleSpinBox* setting_;
  QLabel* setting_unit_;
  QSpinBox* speed_;
  QComboBox* time_scale_;
  QPushButton* run_;
  QPushButton* step_;
  QPushButton* reset_;
};

}  // namespace swashtune::ui
