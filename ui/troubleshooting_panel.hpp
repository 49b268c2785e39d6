// Troubleshooting: switch fault conditions on and off while the pump runs,
// load a pressure trace recorded on the machine and compare its oscillation
// with the simulation's, and fit parameters to it (with progress and cancel).
// The panel only asks; MainWindow turns requests into events and studies.
#pragma once

#include <QFutureWatcher>
#include <QWidget>
#include <atomic>
#include <memory>
#include <optional>

#include "display_units.hpp"
#include "swashtune/field_trace.hpp"
#include "swashtune/fit.hpp"
#include "swashtune/oscillation.hpp"

class QCheckBox;
class QDoubleSpinBox;
class QLabel;
class QListWidget;
class QProgressBar;
class QPushButton;
class QTableWidget;

namespace swashtune::ui {

class TroubleshootingPanel : public QWidget {
  Q_OBJECT
 public:
  explicit TroubleshootingPanel(QWidget* parent = nullptr);
  ~TroubleshootingPanel() override;

  void setUnits(UnitSystem system);
  // Shows the present fault values without asking for changes.
  void showParameters(const ModelParameters& p);

  // Loads a recording (header-detected columns and units). On failure shows
  // the message and keeps the previous recording; returns false.
  bool loadRecording(const QString& path);
  const std::optional<FieldTrace>& recording() const { return recording_; }
  // The simulated pressure's oscillation over the recording's time span.
  void showSimulatedAnalysis(const OscillationReport& report);
  QString recordingAnalysisText() const;
  QString simulatedAnalysisText() const;
  QString lastMessage() const;

  // Starts a fit of `study` to the recording in the background.
  bool startFit(const Scenario& study);
  void cancelFit();
  bool fitRunning() const;
  const std::optional<FitResult>& fitResult() const { return fit_result_; }
  QStringList checkedFreeKeys() const;
  QString cannotTellText() const;
  QPushButton* fitButton() const { return fit_button_; }
  QPushButton* cancelButton() const { return cancel_button_; }
  QPushButton* applyButton() const { return apply_button_; }
  QTableWidget* fitTable() const { return fit_table_; }
  QListWidget* freeKeyList() const { return free_keys_; }
  void setFreeKeys(const QStringList& keys);

  // For tests: the on/off box and severity box of a fault key.
  QCheckBox* faultSwitch(const QString& key) const;
  QDoubleSpinBox* faultSeverity(const QString& key) const;
  // The severity a fault is switched on with (stored units; the box's value).
  double severityOf(const QString& key) const;

 signals:
  void changeRequested(const QString& key, double stored_value, double ramp_seconds);
  void recordingLoaded();  // show it over the live traces
  void fitFinished();      // fitResult() holds the outcome
  void fitRequested();     // the Fit button: the owner calls startFit() with the present design
  void applyFitRequested(const Scenario& fitted);

 private:
  struct FaultRow {
    const ParameterSpec* spec;
    QCheckBox* on;
    QDoubleSpinBox* severity;
    double last_severity;  // stored units, remembered while switched off
  };
  void requestFault(FaultRow& row);
  void showFitResult();

  DisplayUnits units_ = DisplayUnits::make(UnitSystem::metric);
  std::vector<FaultRow> faults_;
  bool showing_ = false;
  std::optional<FieldTrace> recording_;
  QLabel* recording_label_;
  QLabel* recording_analysis_;
  QLabel* simulated_analysis_;
  QLabel* message_;
  QListWidget* free_keys_;
  QPushButton* fit_button_;
  QPushButton* cancel_button_;
  QPushButton* apply_button_;
  QProgressBar* progress_;
  QTableWidget* fit_table_;
  QLabel* cannot_tell_;
  std::shared_ptr<std::atomic<bool>> cancel_;
  std::shared_ptr<std::atomic<int>> simulations_;
  QFutureWatcher<FitResult>* watcher_;
  std::optional<FitResult> fit_result_;
  QString fit_error_;
};

// "sustained oscillation at 470.9 Hz, 1.29 bar peak to peak, damping ratio -0.0001"
QString describe_oscillation(const OscillationReport& report, const DisplayUnits& units);

}  // namespace swashtune::ui
