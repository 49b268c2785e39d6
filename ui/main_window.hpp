// The desktop program's window: live strip charts in the middle, the
// controls on the left, margins, pressure-flow and parameters on the right.
#pragma once

#include <QMainWindow>
#include <QString>
#include <optional>

#include "display_units.hpp"
#include "swashtune/analysis.hpp"
#include "swashtune/scenario.hpp"

class QLabel;
class QTimer;
class QMenu;
class QTabWidget;
class QAction;

namespace swashtune::ui {

class SessionController;
class TraceView;
class PressureFlowView;
class MarginsView;
class ParameterEditor;
class ControlPanel;
class TroubleshootingPanel;

class MainWindow : public QMainWindow {
  Q_OBJECT
 public:
  struct Options {
    bool interactive = true;  // false: no modal questions (tests, screenshots)
    bool autosave = true;
  };
  explicit MainWindow(Options options, QWidget* parent = nullptr);
  ~MainWindow() override;

  // Opens a scenario file; on bad input shows the message and keeps the
  // present study. Returns false then.
  bool openFile(const QString& path);
  // Starts a study from a scenario (the built-in demo, a recovered session).
  void openStudy(const Scenario& study, const QString& path);
  bool saveTo(const QString& path);
  bool exportTracesCsv(const QString& path);
  bool exportCharts(const QString& path);
  // Runs the study's events from start to end at once and overlays the result.
  bool runStudyToEnd();
  // Brings the views up to date now (normally done by the display timer).
  void refreshNow();

  SessionController* session() const { return session_; }
  TraceView* traces() const { return traces_; }
  MarginsView* margins() const { return margins_; }
  PressureFlowView* pressureFlow() const { return pressure_flow_; }
  ParameterEditor* parameters() const { return editor_; }
  ControlPanel* controls() const { return controls_; }
  TroubleshootingPanel* troubleshooting() const { return troubleshooting_; }
  // The simulated pressure's oscillation over the loaded recording's span:
  // the study with the present faults, run at the recording's resolution.
  void compareWithRecording();
  bool warningShown() const;
  QString warningText() const;
  QString lastError() const { return last_error_; }
  const Scenario& study() const { return study_; }
  bool isModified() const { return modified_; }
  UnitSystem units() const { return units_; }
  void setUnits(UnitSystem system);
  // Brings a side tab forward by its title ("Loop margins", "Troubleshooting", ...).
  bool showSideTab(const QString& title);
  double framesPerSecond() const { return fps_; }
  long long framesDrawn() const { return frames_drawn_; }  // display updates with new samples

  static QString autosavePath();

 protected:
  void closeEvent(QCloseEvent* event) override;

 private:
  void buildMenus();
  void applyChange(const QString& key, double value, double ramp);
  void onDisplayTick();
  void refreshAnalysis(bool force);
  void setModified(bool modified);
  void updateTitle();
  bool maybeKeepChanges();  // asks before losing unsaved edits; true to go on
  void showError(const QString& message);
  void checkSettingUnderFlow(const QString& key, double value);
  void rememberRecent(const QString& path);
  void rebuildRecentMenu();
  void writeAutosave();

  Options options_;
  SessionController* session_;
  TraceView* traces_;
  PressureFlowView* pressure_flow_;
  MarginsView* margins_;
  ParameterEditor* editor_;
  ControlPanel* controls_;
  TroubleshootingPanel* troubleshooting_;
  QTabWidget* side_tabs_;
  QLabel* warning_;
  QLabel* status_time_;
  QLabel* status_rate_;
  QTimer* display_timer_;
  QTimer* autosave_timer_;
  QMenu* recent_menu_ = nullptr;
  QAction* follow_action_ = nullptr;

  Scenario study_;
  QString path_;
  bool modified_ = false;
  UnitSystem units_ = UnitSystem::metric;
  QString last_error_;
  std::optional<ModelParameters> analysed_;  // parameters of the shown analysis
  std::optional<ModelParameters> shown_;     // parameters the controls show
  int runs_overlaid_ = 0;
  // Display-rate measurement.
  int frames_ = 0;
  long long frames_drawn_ = 0;
  qint64 frame_clock_start_ = 0;
  double fps_ = 0.0;
};

}  // namespace swashtune::ui
