#include "main_window.hpp"

#include <QAction>
#include <QActionGroup>
#include <QApplication>
#include <QCloseEvent>
#include <QDateTime>
#include <QDir>
#include <QDockWidget>
#include <QFile>
#include <QFileDialog>
#include <QFileInfo>
#include <QLabel>
#include <QMenuBar>
#include <QMessageBox>
#include <QScrollArea>
#include <QSettings>
#include <QSplitter>
#include <QStandardPaths>
#include <QStatusBar>
#include <QTabWidget>
#include <QTimer>
#include <QUndoStack>
#include <QVBoxLayout>
#include <cmath>
#include <limits>

#include "control_panel.hpp"
#include "margins_view.hpp"
#include "parameter_editor.hpp"
#include "pressure_flow_view.hpp"
#include "session_controller.hpp"
#include "swashtune/atomic_file.hpp"
#include "swashtune/results_io.hpp"
#include "swashtune/safety.hpp"
#include "trace_view.hpp"
#include "troubleshooting_panel.hpp"

namespace swashtune::ui {
namespace {

constexpr int max_recent = 8;
// Above this share of full-stroke flow the setting cannot show on the gauge.
constexpr double setting_under_flow_threshold = 0.03;

QString scenario_filter() { return QObject::tr("Scenario files (*.toml);;All files (*)"); }

bool same_parameters(const ModelParameters& a, const ModelParameters& b) {
  for (const ParameterSpec& spec : parameter_registry())
    if (spec.get(a) != spec.get(b)) return false;
  return true;
}

}  // namespace

MainWindow::MainWindow(Options options, QWidget* parent)
    : QMainWindow(parent),
      options_(options),
      session_(new SessionController(this)),
      traces_(new TraceView),
      pressure_flow_(new PressureFlowView),
      margins_(new MarginsView),
      editor_(new ParameterEditor),
      controls_(new ControlPanel),
      troubleshooting_(new TroubleshootingPanel),
      side_tabs_(new QTabWidget),
      warning_(new QLabel),
      status_time_(new QLabel),
      status_rate_(new QLabel),
      display_timer_(new QTimer(this)),
      autosave_timer_(new QTimer(this)) {
  setObjectName("swashtune-main-window");

  // Centre: the warning banner over the live charts; right: analysis tabs.
  auto* centre = new QWidget;
  auto* centre_layout = new QVBoxLayout(centre);
  centre_layout->setContentsMargins(4, 4, 4, 4);
  warning_->setWordWrap(true);
  warning_->setTextFormat(Qt::RichText);
  warning_->setVisible(false);
  warning_->setAutoFillBackground(true);
  // Amber with black text reads the same on light and dark palettes.
  warning_->setStyleSheet("QLabel { background: #f2c14e; color: #1a1a1a; padding: 8px; border-radius: 4px; }");
  centre_layout->addWidget(warning_);
  auto* splitter = new QSplitter(Qt::Horizontal);
  splitter->addWidget(traces_);
  side_tabs_->addTab(margins_, tr("Loop margins"));
  side_tabs_->addTab(pressure_flow_, tr("Pressure-flow"));
  side_tabs_->addTab(editor_, tr("Parameters"));
  auto* trouble_scroll = new QScrollArea;
  trouble_scroll->setWidget(troubleshooting_);
  trouble_scroll->setWidgetResizable(true);
  side_tabs_->addTab(trouble_scroll, tr("Troubleshooting"));
  splitter->addWidget(side_tabs_);
  splitter->setStretchFactor(0, 3);
  splitter->setStretchFactor(1, 2);
  splitter->setSizes({700, 560});  // the live charts get the larger share
  centre_layout->addWidget(splitter, 1);
  setCentralWidget(centre);

  auto* dock = new QDockWidget(tr("Controls"), this);
  dock->setObjectName("controls-dock");
  dock->setFeatures(QDockWidget::DockWidgetMovable | QDockWidget::DockWidgetFloatable);
  auto* scroll = new QScrollArea;
  scroll->setWidget(controls_);
  scroll->setWidgetResizable(true);
  dock->setWidget(scroll);
  addDockWidget(Qt::LeftDockWidgetArea, dock);

  statusBar()->addWidget(status_time_, 1);
  statusBar()->addPermanentWidget(status_rate_);

  buildMenus();

  connect(controls_, &ControlPanel::changeRequested, this, &MainWindow::applyChange);
  connect(troubleshooting_, &TroubleshootingPanel::changeRequested, this, &MainWindow::applyChange);
  connect(troubleshooting_, &TroubleshootingPanel::recordingLoaded, this, [this] {
    // Recorded pressure (and flow) over the live traces; what was not
    // recorded stays empty (NaN draws nothing).
    const FieldTrace& r = *troubleshooting_->recording();
    std::vector<Sample> samples(r.time.size());
    const double none = std::numeric_limits<double>::quiet_NaN();
    for (std::size_t i = 0; i < r.time.size(); ++i) {
      Sample& s = samples[i];
      s.time = r.time[i];
      s.x = Eigen::VectorXd::Constant(state::core_size, none);
      s.x[state::discharge_pressure] = r.pressure[i];
      s.pump_flow = none;
      s.load_flow = r.flow.empty() ? none : r.flow[i];
    }
    traces_->addOverlay(tr("recorded: %1").arg(QFileInfo(QString::fromStdString(r.source)).fileName()), samples);
    compareWithRecording();
  });
  connect(troubleshooting_, &TroubleshootingPanel::applyFitRequested, this, [this](const Scenario& fitted) {
    openStudy(fitted, QString());
    setModified(true);
    statusBar()->showMessage(tr("The study now uses the fitted values"), 5000);
  });
  connect(controls_, &ControlPanel::runRequested, this,
          [this](bool run) { run ? session_->start() : session_->pause(); });
  connect(controls_, &ControlPanel::stepRequested, this, [this] {
    session_->step();
    refreshNow();
  });
  connect(controls_, &ControlPanel::resetRequested, this, [this] { session_->resetToSteadyState(); });
  connect(controls_, &ControlPanel::timeScaleChanged, this, [this](double scale) { session_->setTimeScale(scale); });
  connect(session_, &SessionController::runningChanged, controls_, &ControlPanel::setRunning);
  connect(session_, &SessionController::sessionStarted, this, [this] {
    traces_->clear();
    session_->takeSamples();
    controls_->showParameters(session_->parametersNow());
    editor_->setValues(session_->parametersNow());
    refreshAnalysis(true);
    refreshNow();
  });
  connect(session_, &SessionController::solverFailed, this,
          [this](const QString& message) { showError(tr("The simulation stopped: %1").arg(message)); });
  connect(editor_, &ParameterEditor::parameterEdited, this, [this](const QString& key, double value) {
    const ParameterSpec* spec = find_parameter(key.toStdString());
    if (spec && spec->is_flag()) {
      // A switch cannot change mid-run: start again with it.
      ModelParameters p = session_->parametersNow();
      spec->set(p, value);
      Scenario s = study_;
      s.parameters = p;
      s.events.clear();
      session_->load(s);
      setModified(true);
      statusBar()->showMessage(tr("%1 changed: the run starts again from the steady state").arg(key), 5000);
      return;
    }
    applyChange(key, value, 0.0);
  });
  connect(editor_, &ParameterEditor::editRejected, this,
          [this](const QString&, const QString& message) { statusBar()->showMessage(message, 8000); });

  display_timer_->setInterval(16);  // ~60 Hz
  connect(display_timer_, &QTimer::timeout, this, &MainWindow::onDisplayTick);
  display_timer_->start();
  autosave_timer_->setInterval(30000);
  connect(autosave_timer_, &QTimer::timeout, this, &MainWindow::writeAutosave);
  if (options_.autosave) autosave_timer_->start();

  QSettings settings;
  setUnits(settings.value("units", "metric").toString() == "us" ? UnitSystem::us : UnitSystem::metric);
  restoreGeometry(settings.value("geometry").toByteArray());
  resize(size().expandedTo(QSize(1280, 800)));
  openStudy(Scenario{}, QString());
}

MainWindow::~MainWindow() = default;

void MainWindow::buildMenus() {
  QMenu* file = menuBar()->addMenu(tr("&File"));
  file->addAction(tr("&New study"), QKeySequence::New, this, [this] {
    if (maybeKeepChanges()) openStudy(Scenario{}, QString());
  });
  file->addAction(tr("&Open..."), QKeySequence::Open, this, [this] {
    if (!maybeKeepChanges()) return;
    const QString path = QFileDialog::getOpenFileName(this, tr("Open scenario"), QString(), scenario_filter());
    if (!path.isEmpty()) openFile(path);
  });
  recent_menu_ = file->addMenu(tr("Open &recent"));
  rebuildRecentMenu();
  file->addAction(tr("&Save"), QKeySequence::Save, this, [this] {
    const QString path = path_.isEmpty() ? QFileDialog::getSaveFileName(this, tr("Save session as scenario"), QString(),
                                                                        scenario_filter())
                                         : path_;
    if (!path.isEmpty()) saveTo(path);
  });
  file->addAction(tr("Save &as..."), QKeySequence::SaveAs, this, [this] {
    const QString path = QFileDialog::getSaveFileName(this, tr("Save session as scenario"), path_, scenario_filter());
    if (!path.isEmpty()) saveTo(path);
  });
  file->addSeparator();
  file->addAction(tr("Export traces as &CSV..."), this, [this] {
    const QString path = QFileDialog::getSaveFileName(this, tr("Export traces"), "trace.csv", tr("CSV (*.csv)"));
    if (!path.isEmpty()) exportTracesCsv(path);
  });
  file->addAction(tr("Export &charts as image..."), this, [this] {
    const QString path = QFileDialog::getSaveFileName(this, tr("Export charts"), "traces.png",
                                                      tr("PNG (*.png);;SVG (*.svg);;PDF (*.pdf)"));
    if (!path.isEmpty()) exportCharts(path);
  });
  file->addSeparator();
  file->addAction(tr("&Quit"), QKeySequence::Quit, this, &QWidget::close);

  QMenu* edit = menuBar()->addMenu(tr("&Edit"));
  QAction* undo = editor_->undoStack()->createUndoAction(this, tr("&Undo"));
  undo->setShortcut(QKeySequence::Undo);
  QAction* redo = editor_->undoStack()->createRedoAction(this, tr("&Redo"));
  redo->setShortcut(QKeySequence::Redo);
  edit->addAction(undo);
  edit->addAction(redo);

  QMenu* run = menuBar()->addMenu(tr("&Run"));
  QAction* toggle =
      run->addAction(tr("Run / &pause"), this, [this] { session_->running() ? session_->pause() : session_->start(); });
  toggle->setShortcut(Qt::Key_Space);
  run->addAction(tr("&Step"), QKeySequence(Qt::CTRL | Qt::Key_Period), this, [this] {
    session_->step();
    refreshNow();
  });
  run->addAction(tr("&Reset to steady state"), QKeySequence(Qt::CTRL | Qt::Key_R), this,
                 [this] { session_->resetToSteadyState(); });
  run->addAction(tr("Restart the &study from its start"), this, [this] { session_->load(study_); });
  run->addSeparator();
  run->addAction(tr("Run the study's events to the end and &overlay"), QKeySequence(Qt::CTRL | Qt::SHIFT | Qt::Key_R),
                 this, [this] { runStudyToEnd(); });
  run->addAction(tr("&Clear overlaid runs"), this, [this] {
    traces_->clearOverlays();
    runs_overlaid_ = 0;
  });

  QMenu* view = menuBar()->addMenu(tr("&View"));
  auto* units = new QActionGroup(this);
  QAction* metric = view->addAction(tr("&Metric units (bar, L/min, mm)"));
  QAction* us = view->addAction(tr("&US units (psi, gpm, in)"));
  for (QAction* a : {metric, us}) {
    a->setCheckable(true);
    units->addAction(a);
  }
  metric->setChecked(true);
  connect(metric, &QAction::triggered, this, [this] { setUnits(UnitSystem::metric); });
  connect(us, &QAction::triggered, this, [this] { setUnits(UnitSystem::us); });
  view->addSeparator();
  follow_action_ = view->addAction(tr("&Follow the run"));
  follow_action_->setCheckable(true);
  follow_action_->setChecked(true);
  connect(follow_action_, &QAction::toggled, traces_, &TraceView::setFollowing);
  connect(traces_, &TraceView::followingChanged, follow_action_, &QAction::setChecked);
  units->setObjectName("units-group");
  metric->setObjectName("units-metric");
  us->setObjectName("units-us");

  QMenu* help = menuBar()->addMenu(tr("&Help"));
  help->addAction(tr("&Safety cautions"), this, [this] {
    QMessageBox::information(this, tr("Safety cautions"), QString::fromUtf8(safety_notice_full));
  });
  help->addAction(tr("Why the setting is made at &no flow"), this, [this] {
    QMessageBox::information(
        this, tr("Why the setting is made at no flow"),
        tr("With the load valve open the pump runs at full stroke and the circuit's resistance sets the "
           "pressure, far below the compensator setting. Turning the adjusting screw then changes nothing "
           "on the gauge, and the real maximum pressure is left unknown until the flow is blocked.\n\n"
           "Make the setting with the outlet blocked by a valve (no flow), a calibrated gauge on the pump "
           "outlet and a relief valve set above it; raise the setting slowly. Try it here: turn the setting "
           "with the valve open, then press Close fast.\n\n%1")
            .arg(QString::fromUtf8(safety_notice_short)));
  });
  help->addAction(tr("&About Swashtune"), this, [this] {
    QMessageBox::about(this, tr("About Swashtune"),
                       tr("Swashtune simulates the control loop of a pressure-compensated piston pump: compensator "
                          "spool, control piston, bias spring, swashplate and the discharge line.\n\n%1")
                           .arg(QString::fromUtf8(safety_notice_short)));
  });
}

void MainWindow::setUnits(UnitSystem system) {
  units_ = system;
  traces_->setUnits(system);
  pressure_flow_->setUnits(system);
  margins_->setUnits(system);
  editor_->setUnits(system);
  controls_->setUnits(system);
  troubleshooting_->setUnits(system);
  QSettings().setValue("units", system == UnitSystem::us ? "us" : "metric");
  if (QAction* a = findChild<QAction*>(system == UnitSystem::us ? "units-us" : "units-metric")) a->setChecked(true);
  refreshAnalysis(true);
}

bool MainWindow::showSideTab(const QString& title) {
  for (int i = 0; i < side_tabs_->count(); ++i)
    if (side_tabs_->tabText(i).compare(title, Qt::CaseInsensitive) == 0) {
      side_tabs_->setCurrentIndex(i);
      return true;
    }
  return false;
}

void MainWindow::openStudy(const Scenario& study, const QString& path) {
  study_ = study;
  path_ = path;
  traces_->clearOverlays();
  runs_overlaid_ = 0;
  session_->load(study);
  session_->setTimeScale(controls_->timeScale());
  editor_->undoStack()->clear();
  setModified(false);
  warning_->setVisible(false);
  updateTitle();
}

bool MainWindow::openFile(const QString& path) {
  try {
    const Scenario study = load_scenario(path.toStdString());
    openStudy(study, path);
    rememberRecent(path);
    last_error_.clear();
    return true;
  } catch (const std::exception& e) {
    showError(
        tr("Could not open the scenario; the present study is kept.\n\n%1").arg(QString::fromStdString(e.what())));
    return false;
  }
}

bool MainWindow::saveTo(const QString& path) {
  try {
    Scenario s = session_->sessionScenario();
    s.name = study_.name;
    s.description = study_.description;
    write_file_atomically(path.toStdString(), scenario_to_toml(s));
    path_ = path;
    rememberRecent(path);
    setModified(false);
    QFile::remove(autosavePath());
    statusBar()->showMessage(tr("Saved %1 (%2 events)").arg(path).arg(s.events.size()), 5000);
    return true;
  } catch (const std::exception& e) {
    showError(tr("Could not save.\n\n%1").arg(QString::fromStdString(e.what())));
    return false;
  }
}

bool MainWindow::exportTracesCsv(const QString& path) {
  try {
    write_file_atomically(path.toStdString(), trace_csv(traces_->liveSamples(), units_));
    statusBar()->showMessage(tr("Exported %1 samples to %2").arg(traces_->sampleCount()).arg(path), 5000);
    return true;
  } catch (const std::exception& e) {
    showError(tr("Could not export the traces.\n\n%1").arg(QString::fromStdString(e.what())));
    return false;
  }
}

bool MainWindow::exportCharts(const QString& path) {
  QString error;
  if (traces_->exportImage(path, &error)) return true;
  showError(tr("Could not export the charts.\n\n%1").arg(error));
  return false;
}

bool MainWindow::runStudyToEnd() {
  try {
    const Scenario& s = study_;
    const RunResult r = run_scenario(s);
    ++runs_overlaid_;
    traces_->addOverlay(tr("run %1: %2").arg(runs_overlaid_).arg(QString::fromStdString(s.name)), r.trace);
    statusBar()->showMessage(
        tr("Ran \"%1\" to %2 s: peak %3 %4")
            .arg(QString::fromStdString(s.name))
            .arg(s.settings.duration)
            .arg(DisplayUnits::make(units_).pressure.to_display(r.peak_discharge_pressure), 0, 'f', 1)
            .arg(DisplayUnits::make(units_).pressure.unit),
        8000);
    return true;
  } catch (const std::exception& e) {
    showError(tr("The scripted run failed.\n\n%1").arg(QString::fromStdString(e.what())));
    return false;
  }
}

void MainWindow::applyChange(const QString& key, double value, double ramp) {
  checkSettingUnderFlow(key, value);
  try {
    session_->change(key.toStdString(), value, ramp);
  } catch (const std::exception& e) {
    showError(QString::fromStdString(e.what()));
    return;
  }
  controls_->showParameters(session_->parametersNow());
  setModified(true);
}

void MainWindow::checkSettingUnderFlow(const QString& key, double value) {
  if (key != "compensator.setting") return;
  const Sample now = session_->latest();
  const ModelParameters p = session_->parametersNow();
  const double full_flow = p.displacement * p.speed / 60.0;
  if (full_flow <= 0.0 || value == p.setting) return;
  const double share = now.load_flow / full_flow;
  if (share <= setting_under_flow_threshold) {
    warning_->setVisible(false);
    return;
  }
  const DisplayUnits u = DisplayUnits::make(units_);
  warning_->setText(
      tr("<b>The compensator setting was changed while the load takes %1 %2 (%3 % of full flow).</b> "
         "With flow open the circuit sets the pressure (now %4 %5), so the gauge does not show the setting: "
         "<b>the true maximum pressure has not been verified.</b> Make the setting at no flow, with the outlet "
         "blocked by a valve and a gauge on the pump outlet. Lock out and relieve pressure before working on "
         "the pump; follow the machine's documentation and local codes.")
          .arg(u.flow.to_display(now.load_flow), 0, 'f', 1)
          .arg(u.flow.unit)
          .arg(100.0 * share, 0, 'f', 0)
          .arg(u.pressure.to_display(now.x[state::discharge_pressure]), 0, 'f', 1)
          .arg(u.pressure.unit));
  warning_->setVisible(true);
}

bool MainWindow::warningShown() const { return warning_->isVisibleTo(this); }
QString MainWindow::warningText() const { return warning_->text(); }

void MainWindow::onDisplayTick() {
  const std::vector<Sample> fresh = session_->takeSamples();
  if (!fresh.empty()) {
    traces_->appendSamples(fresh);
    pressure_flow_->setOperatingPoint(fresh.back().x[state::discharge_pressure], fresh.back().load_flow);
    ++frames_;
    ++frames_drawn_;
  }
  const qint64 now = QDateTime::currentMSecsSinceEpoch();
  if (frame_clock_start_ == 0) frame_clock_start_ = now;
  if (now - frame_clock_start_ >= 1000) {
    fps_ = 1000.0 * frames_ / static_cast<double>(now - frame_clock_start_);
    frames_ = 0;
    frame_clock_start_ = now;
  }
  // Scripted events and ramps move parameters too: keep the controls honest.
  const ModelParameters present = session_->parametersNow();
  if (!shown_ || !same_parameters(*shown_, present)) {
    controls_->showParameters(present);
    troubleshooting_->showParameters(present);
    shown_ = present;
    compareWithRecording();  // a fault may have been switched
  }
  const Sample latest = session_->latest();
  const SolverStats stats = session_->solverStats();
  status_time_->setText(tr("t = %1 s   %2   solver steps %3")
                            .arg(latest.time, 0, 'f', 4)
                            .arg(session_->running() ? tr("running") : tr("held"))
                            .arg(stats.steps));
  status_rate_->setText(tr("%1 frames/s").arg(fps_, 0, 'f', 0));

  refreshAnalysis(false);
}

void MainWindow::compareWithRecording() {
  const auto& recording = troubleshooting_->recording();
  if (!recording) return;
  // The study as scripted, with the faults switched as they are now, run
  // over the recording's time at the recording's resolution: the live trace
  // is sampled for the eye (1 ms at real time) and would hide fast hunting.
  Scenario s = study_;
  const ModelParameters now = session_->parametersNow();
  for (const ParameterSpec& spec : parameter_registry())
    if (spec.key.substr(0, 7) == "faults.") spec.set(s.parameters, spec.get(now));
  const std::vector<double>& t = recording->time;
  s.settings.duration = std::max(s.settings.duration, t.back());
  double finest = s.settings.sample_interval;
  for (std::size_t i = 1; i < t.size(); ++i) finest = std::min(finest, t[i] - t[i - 1]);
  s.settings.sample_interval = std::max(finest, 1e-6);
  try {
    const RunResult run = run_scenario(s);
    std::vector<double> times, pressures;
    for (const Sample& x : run.trace)
      if (x.time >= t.front() && x.time <= t.back()) {
        times.push_back(x.time);
        pressures.push_back(x.x[state::discharge_pressure]);
      }
    troubleshooting_->showSimulatedAnalysis(analyse_oscillation(times, pressures));
  } catch (const std::exception& e) {
    troubleshooting_->showSimulatedAnalysis(OscillationReport{});
    statusBar()->showMessage(tr("Could not compare with the recording: %1").arg(e.what()), 8000);
  }
}

void MainWindow::refreshNow() {
  const std::vector<Sample> fresh = session_->takeSamples();
  if (!fresh.empty()) traces_->appendSamples(fresh);
  const Sample latest = session_->latest();
  pressure_flow_->setOperatingPoint(latest.x[state::discharge_pressure], latest.load_flow);
  refreshAnalysis(false);
}

void MainWindow::refreshAnalysis(bool force) {
  const ModelParameters p = session_->parametersNow();
  if (!force && analysed_ && same_parameters(*analysed_, p)) return;
  analysed_ = p;
  // Both take a few milliseconds: fine on the UI thread, and only when a
  // parameter has actually moved.
  const StabilityReport report = analyse_stability(p, study_.settings);
  margins_->setReport(report);
  pressure_flow_->setCharacteristic(steady_characteristic(p, study_.settings, 41), p.setting);
}

void MainWindow::setModified(bool modified) {
  modified_ = modified;
  setWindowModified(modified);
}

void MainWindow::updateTitle() {
  const QString name = path_.isEmpty() ? QString::fromStdString(study_.name) : QFileInfo(path_).fileName();
  setWindowTitle(tr("%1[*] - Swashtune").arg(name));
}

bool MainWindow::maybeKeepChanges() {
  if (!modified_ || !options_.interactive) return true;
  const auto answer = QMessageBox::question(this, tr("Unsaved session"),
                                            tr("The session has changes that are not saved. Save them first?"),
                                            QMessageBox::Save | QMessageBox::Discard | QMessageBox::Cancel);
  if (answer == QMessageBox::Cancel) return false;
  if (answer == QMessageBox::Discard) return true;
  const QString path =
      path_.isEmpty() ? QFileDialog::getSaveFileName(this, tr("Save session as scenario"), QString(), scenario_filter())
                      : path_;
  return !path.isEmpty() && saveTo(path);
}

void MainWindow::showError(const QString& message) {
  last_error_ = message;
  statusBar()->showMessage(message.section('\n', -1), 10000);
  // Non-modal: the run and the tests go on while it is shown.
  auto* box = new QMessageBox(QMessageBox::Warning, tr("Swashtune"), message, QMessageBox::Ok, this);
  box->setObjectName("error-box");
  box->setAttribute(Qt::WA_DeleteOnClose);
  box->open();
}

void MainWindow::rememberRecent(const QString& path) {
  QSettings settings;
  QStringList recent = settings.value("recentFiles").toStringList();
  recent.removeAll(path);
  recent.prepend(path);
  while (recent.size() > max_recent) recent.removeLast();
  settings.setValue("recentFiles", recent);
  rebuildRecentMenu();
}

void MainWindow::rebuildRecentMenu() {
  recent_menu_->clear();
  const QStringList recent = QSettings().value("recentFiles").toStringList();
  for (const QString& path : recent)
    recent_menu_
        ->addAction(QFileInfo(path).fileName(), this,
                    [this, path] {
                      if (maybeKeepChanges()) openFile(path);
                    })
        ->setToolTip(path);
  recent_menu_->setEnabled(!recent.isEmpty());
}

QString MainWindow::autosavePath() {
  const QString dir = QStandardPaths::writableLocation(QStandardPaths::AppDataLocation);
  QDir().mkpath(dir);
  return dir + "/autosave.toml";
}

void MainWindow::writeAutosave() {
  if (!modified_) return;
  try {
    Scenario s = session_->sessionScenario();
    s.name = study_.name + " (recovered)";
    write_file_atomically(autosavePath().toStdString(), scenario_to_toml(s));
  } catch (const std::exception& e) {
    statusBar()->showMessage(tr("Autosave failed: %1").arg(QString::fromStdString(e.what())), 8000);
  }
}

void MainWindow::closeEvent(QCloseEvent* event) {
  if (!maybeKeepChanges()) {
    event->ignore();
    return;
  }
  QSettings().setValue("geometry", saveGeometry());
  QFile::remove(autosavePath());  // a clean exit leaves nothing to recover
  event->accept();
}

}  // namespace swashtune::ui
