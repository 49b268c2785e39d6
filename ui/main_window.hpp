// The desktop program's window: live strip charts in the middle, the
// controls on the left, margins, pressure-flow and parameters on the right.
//
// Sessions never lose work: a session is written only to a file the person
// chose for it (the first save asks for a name; the shipped examples and the
// autosave folder are never written), it is autosaved within seconds of a
// change into a file of its own (per instance and per session, named after
// the study), a session that was not closed properly is offered back on
// every start, and every path that would drop unsaved changes asks first.
#pragma once

#include <QMainWindow>
#include <QString>
#include <memory>
#include <optional>
#include <vector>

#include "display_units.hpp"
#include "session_store.hpp"
#include "swashtune/analysis.hpp"
#include "swashtune/scenario.hpp"

class QLabel;
class QTimer;
class QMenu;
class QTabWidget;
class QAction;
class QUndoStack;
class QSplitter;
class QDockWidget;

namespace swashtune::ui {

class SessionController;
class TraceView;
class PressureFlowView;
class MarginsView;
class SensitivityView;
class ParameterEditor;
class ControlPanel;
class TroubleshootingPanel;
class CircuitView;
class CompareView;

class MainWindow : public QMainWindow {
  Q_OBJECT
 public:
  struct Options {
    bool interactive = true;  // false: no modal questions (tests, screenshots)
    bool autosave = true;
    QString autosave_directory;  // empty: the application's data folder
  };
  explicit MainWindow(Options options, QWidget* parent = nullptr);
  ~MainWindow() override;

  // The start of the program: offers back sessions that were not closed
  // properly (whatever was asked for), then opens `path`, or `fallback` when
  // no path is given. False when `path` could not be opened and nothing was
  // recovered (the message is in lastError()).
  bool start(const QString& path, const Scenario& fallback);

  // Opens a scenario file without asking (callers ask first); on bad input
  // shows the message and keeps the present study. Returns false then.
  bool openFile(const QString& path);
  // Starts a new session of a study (`path` is where it came from, if anywhere).
  void openStudy(const Scenario& study, const QString& path);
  // File > Save: to the session's own file, or Save as when it has none.
  bool save();
  // File > Save as: asks for a file (refusing ones the program must not write).
  bool saveAs();
  // Writes the session to `path`, unless the program must not write there.
  bool saveTo(const QString& path);
  // The session as it would be saved: its events with the study's whole
  // script, the study's name and settings, an updated description.
  Scenario sessionForSaving() const;
  // The design as it stands: the study with every parameter the person has
  // changed (the keys the study's events drive keep the study's start values).
  Scenario presentDesign() const;
  // Offers back a session that was not closed properly; true when one was taken.
  bool offerRecovery(const QString& path_asked_for);
  bool recover(const AutosaveInfo& orphan);
  AutosaveStore& autosave() { return *autosave_; }

  // A change as a person makes it (an event now, an undo step); false with lastError() when refused.
  bool change(const QString& key, double value, double ramp = 0.0);
  void autosaveNow() { writeAutosave(); }

  // Adds a design to the comparison, as its buttons do: "opened", "present",
  // "recording", or a fault key (the design as edited with that fault).
  bool addToComparison(const QString& what);

  bool exportTracesCsv(const QString& path);
  bool exportCharts(const QString& path);
  bool exportMargins(const QString& path);
  bool exportPressureFlow(const QString& path);
  // Runs the present design on the study's events at once and overlays it.
  bool runStudyToEnd();
  // Brings the views up to date now (normally done by the display timer).
  void refreshNow();

  SessionController* session() const { return session_; }
  TraceView* traces() const { return traces_; }
  MarginsView* margins() const { return margins_; }
  SensitivityView* sensitivityView() const { return sensitivity_; }
  PressureFlowView* pressureFlow() const { return pressure_flow_; }
  ParameterEditor* parameters() const { return editor_; }
  ControlPanel* controls() const { return controls_; }
  TroubleshootingPanel* troubleshooting() const { return troubleshooting_; }
  QSplitter* splitter() const { return splitter_; }
  QTabWidget* sideTabs() const { return side_tabs_; }
  QDockWidget* controlsDock() const { return dock_; }
  QUndoStack* changes() const { return changes_; }
  // The simulated pressure's oscillation over the loaded recording's span:
  // the present design, run at the recording's resolution.
  void compareWithRecording();
  bool warningShown() const;
  QString warningText() const;
  // The loader's warnings about the opened study (implausible values, an
  // empty file), as core words them; empty when there are none.
  QString inputWarningsText() const;
  QString lastError() const { return last_error_; }
  const Scenario& study() const { return study_; }
  QString studyPath() const { return study_path_; }
  QString sessionPath() const { return session_path_; }
  const std::vector<Event>& liveEvents() const { return live_events_; }  // the person's changes this session
  bool isModified() const { return modified_; }
  UnitSystem units() const { return units_; }
  void setUnits(UnitSystem system);
  // Brings a side tab forward by its title ("Loop margins", "Troubleshooting", ...).
  bool showSideTab(const QString& title);
  // Brings a centre view forward: "charts", "circuit" or "compare".
  bool showView(const QString& name);
  CircuitView* circuit() const { return circuit_; }
  CompareView* compare() const { return compare_; }
  QTabWidget* centreTabs() const { return centre_tabs_; }
  double framesPerSecond() const { return fps_; }
  long long framesDrawn() const { return frames_drawn_; }  // display updates with new samples

  static QString aboutText();

 protected:
  void closeEvent(QCloseEvent* event) override;
  void resizeEvent(QResizeEvent* event) override;
  bool eventFilter(QObject* watched, QEvent* event) override;

 private:
  void buildMenus();
  // Shares the width out: the charts keep at least 40 % of the window; the
  // side panel takes what its page needs, less when it has little to show.
  void adjustPanels();
  // A change by the person: becomes an event now and an undo step (unless
  // it is itself an undo or redo, or the editor recorded it).
  void applyChange(const QString& key, double value, double ramp, bool record = true, bool slider = false);
  void resetToPresent(std::optional<std::pair<QString, double>> flag = std::nullopt);
  void onDisplayTick();
  void refreshAnalysis(bool force);
  void setModified(bool modified);
  void updateTitle();
  bool maybeKeepChanges();  // asks before losing unsaved edits; true to go on
  void showError(const QString& message);
  void updateSettingBanner(const ModelParameters& present, const Sample& now);
  void rememberRecent(const QString& path);
  void rebuildRecentMenu();
  void scheduleAutosave();
  void writeAutosave();
  QString askSavePath(const QString& suggested);
  QString suggestedSessionPath() const;
  QString sessionDescription(const Scenario& session) const;
  bool exportPicture(QWidget* widget, const QString& path, const QString& what);

  Options options_;
  std::unique_ptr<AutosaveStore> autosave_;
  SessionController* session_;
  TraceView* traces_;
  PressureFlowView* pressure_flow_;
  MarginsView* margins_;
  SensitivityView* sensitivity_ = nullptr;
  ParameterEditor* editor_;
  ControlPanel* controls_;
  TroubleshootingPanel* troubleshooting_;
  QTabWidget* side_tabs_;
  QTabWidget* centre_tabs_;
  CircuitView* circuit_;
  CompareView* compare_;
  QLabel* warning_;
  QLabel* input_warnings_;
  QLabel* status_time_;
  QLabel* status_rate_;
  QTimer* display_timer_;
  QTimer* autosave_timer_;
  QUndoStack* changes_;
  QSplitter* splitter_ = nullptr;
  QDockWidget* dock_ = nullptr;
  QAction* side_panel_action_ = nullptr;
  std::optional<double> user_side_share_;  // the person dragged the splitter: keep their share
  bool loop_active_ = true;
  bool side_hidden_for_compare_ = false;
  QMenu* recent_menu_ = nullptr;
  QAction* follow_action_ = nullptr;

  Scenario study_;
  QString study_path_;    // where the study was opened from
  QString session_path_;  // the file the person chose for this session
  bool recovered_ = false;
  std::vector<Event> live_events_;  // the person's changes in this session
  bool modified_ = false;
  UnitSystem units_ = UnitSystem::metric;
  QString last_error_;
  std::optional<ModelParameters> analysed_;  // parameters of the shown analysis
  std::optional<ModelParameters> shown_;     // parameters the controls show
  int runs_overlaid_ = 0;
  // The setting-under-flow banner: on while a setting changed under flow is unverified.
  bool banner_on_ = false;
  std::optional<double> banner_setting_;  // the setting when the banner last looked
  // Display-rate measurement.
  int frames_ = 0;
  long long frames_drawn_ = 0;
  qint64 frame_clock_start_ = 0;
  double fps_ = 0.0;
};

}  // namespace swashtune::ui
