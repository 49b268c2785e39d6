#include "main_window.hpp"

#include <QAction>
#include <QActionGroup>
#include <QApplication>
#include <QCloseEvent>
#include <QDateTime>
#include <QDir>
#include <QDockWidget>
#include <QElapsedTimer>
#include <QFile>
#include <QFileDialog>
#include <QFileInfo>
#include <QLabel>
#include <QMenuBar>
#include <QMessageBox>
#include <QPushButton>
#include <QRegularExpression>
#include <QResizeEvent>
#include <QScrollArea>
#include <QScrollBar>
#include <QSettings>
#include <QSplitter>
#include <QStandardPaths>
#include <QStatusBar>
#include <QTabWidget>
#include <QTimer>
#include <QUndoCommand>
#include <QUndoStack>
#include <QVBoxLayout>
#include <cmath>
#include <limits>

#include "circuit_view.hpp"
#include "compare_view.hpp"
#include "control_panel.hpp"
#include "margins_view.hpp"
#include "parameter_editor.hpp"
#include "picture_export.hpp"
#include "pressure_flow_view.hpp"
#include "qt_text.hpp"
#include "sensitivity_view.hpp"
#include "session_controller.hpp"
#include "swashtune/atomic_file.hpp"
#include "swashtune/model.hpp"
#include "swashtune/results_io.hpp"
#include "swashtune/safety.hpp"
#include "swashtune/version.hpp"
#include "trace_columns.hpp"
#include "trace_view.hpp"
#include "troubleshooting_panel.hpp"

namespace swashtune::ui {
namespace {

constexpr int max_recent = 8;
// Above this share of full-stroke flow the setting cannot show on the gauge.
constexpr double setting_under_flow_threshold = 0.03;
// A burst of changes is autosaved this long after its first change.
constexpr int autosave_delay_ms = 1500;
// A recovered session is replayed to where it was, up to this much simulated time.
constexpr double longest_replay_s = 600.0;

QString scenario_filter() { return QObject::tr("Scenario files (*.toml);;All files (*)"); }

bool same_parameters(const ModelParameters& a, const ModelParameters& b) {
  for (const ParameterSpec& spec : parameter_registry())
    if (spec.get(a) != spec.get(b)) return false;
  return true;
}

// A stored value as a person reads it: "150 bar", "5 %", "1800 rev/min".
QString shown_value(const ParameterSpec& spec, double stored, UnitSystem units) {
  if (spec.is_flag()) return stored != 0.0 ? QStringLiteral("on") : QStringLiteral("off");
  const DisplayQuantity d = parameter_display(spec, units);
  const QString number = QString::number(d.to_display(stored), 'g', 6);
  return d.unit.isEmpty() ? number : number + QLatin1Char(' ') + d.unit;
}

QString seconds_text(double t) { return QString::number(t, 'f', t < 10 ? 4 : 2) + QStringLiteral(" s"); }

// One change by the person, undone and redone as new changes at the present
// time (a live run cannot go back). Consecutive moves of one slider merge.
class LiveChangeCommand : public QUndoCommand {
 public:
  using Apply = std::function<void(const QString& key, double value, double ramp)>;
  LiveChangeCommand(Apply apply, QString key, double before, double after, double ramp, bool slider,
                    const QString& text)
      : apply_(std::move(apply)), key_(std::move(key)), before_(before), after_(after), ramp_(ramp), slider_(slider) {
    setText(text);
    clock_.start();
  }
  void undo() override { apply_(key_, before_, 0.0); }
  void redo() override {
    if (first_) {  // pushed after the change was made
      first_ = false;
      return;
    }
    apply_(key_, after_, ramp_);
  }
  int id() const override { return slider_ ? 0x5111de : -1; }
  bool mergeWith(const QUndoCommand* other) override {
    const auto* o = static_cast<const LiveChangeCommand*>(other);
    if (!o->slider_ || o->key_ != key_ || clock_.elapsed() > 3000) return false;
    after_ = o->after_;
    clock_.restart();
    return true;
  }

 private:
  Apply apply_;
  QString key_;
  double before_, after_, ramp_;
  bool slider_;
  bool first_ = true;
  QElapsedTimer clock_;
};

// Finds the answer the person gave in a question box with custom buttons.
QMessageBox::ButtonRole role_of(const QMessageBox& box) {
  return box.clickedButton() ? box.buttonRole(box.clickedButton()) : QMessageBox::RejectRole;
}

}  // namespace

MainWindow::MainWindow(Options options, QWidget* parent)
    : QMainWindow(parent),
      options_(options),
      autosave_(std::make_unique<AutosaveStore>(options.autosave_directory)),
      session_(new SessionController(this)),
      traces_(new TraceView),
      pressure_flow_(new PressureFlowView),
      margins_(new MarginsView),
      editor_(new ParameterEditor),
      controls_(new ControlPanel),
      troubleshooting_(new TroubleshootingPanel),
      side_tabs_(new QTabWidget),
      centre_tabs_(new QTabWidget),
      circuit_(new CircuitView),
      compare_(new CompareView),
      warning_(new QLabel),
      input_warnings_(new QLabel),
      status_time_(new QLabel),
      status_rate_(new QLabel),
      display_timer_(new QTimer(this)),
      autosave_timer_(new QTimer(this)),
      changes_(new QUndoStack(this)) {
  setObjectName("swashtune-main-window");
  editor_->setUndoStack(changes_);  // one history for every live change

  // Centre: the warning banner over the live charts; right: analysis tabs.
  auto* centre = new QWidget;
  auto* centre_layout = new QVBoxLayout(centre);
  centre_layout->setContentsMargins(4, 4, 4, 4);
  warning_->setObjectName("setting-banner");
  warning_->setWordWrap(true);
  warning_->setTextFormat(Qt::RichText);
  warning_->setVisible(false);
  warning_->setAutoFillBackground(true);
  // Amber with black text reads the same on light and dark palettes.
  warning_->setStyleSheet("QLabel { background: #f2c14e; color: #1a1a1a; padding: 8px; border-radius: 4px; }");
  centre_layout->addWidget(warning_);
  // The loader's warnings about the opened file, in core's words.
  input_warnings_->setObjectName("input-warnings");
  input_warnings_->setWordWrap(true);
  input_warnings_->setTextFormat(Qt::PlainText);
  input_warnings_->setTextInteractionFlags(Qt::TextSelectableByMouse);
  input_warnings_->setVisible(false);
  input_warnings_->setStyleSheet("QLabel { background: #f2c14e; color: #1a1a1a; padding: 8px; border-radius: 4px; }");
  centre_layout->addWidget(input_warnings_);
  splitter_ = new QSplitter(Qt::Horizontal);
  splitter_->setObjectName("main-splitter");
  centre_tabs_->setObjectName("centre-tabs");
  centre_tabs_->setDocumentMode(true);
  centre_tabs_->addTab(traces_, tr("Strip charts"));
  centre_tabs_->addTab(circuit_, tr("Circuit"));
  centre_tabs_->setTabToolTip(1, tr("The machine as a circuit diagram, lines coloured by pressure: a view for the room"));
  centre_tabs_->addTab(compare_, tr("Compare"));
  centre_tabs_->setTabToolTip(2, tr("Designs side by side on the study's events, with a table of their figures"));
  connect(compare_, &CompareView::designRequested, this, [this](CompareView::Source source, const QString& key) {
    addToComparison(source == CompareView::Source::opened      ? QStringLiteral("opened")
                    : source == CompareView::Source::present   ? QStringLiteral("present")
                    : source == CompareView::Source::recording ? QStringLiteral("recording")
                                                               : key);
  });
  connect(centre_tabs_, &QTabWidget::currentChanged, this, [this] {
    // The comparison carries its own margins: the side panel steps aside for
    // its table, and comes back when the comparison is left.
    const bool comparing = centre_tabs_->currentWidget() == compare_;
    if (comparing && side_panel_action_->isChecked()) {
      side_hidden_for_compare_ = true;
      side_panel_action_->setChecked(false);
    } else if (!comparing && side_hidden_for_compare_) {
      side_hidden_for_compare_ = false;
      side_panel_action_->setChecked(true);
    }
    user_side_share_.reset();
    adjustPanels();
    refreshNow();  // the circuit draws the present state at once
  });
  splitter_->addWidget(centre_tabs_);
  side_tabs_->setObjectName("side-tabs");
  side_tabs_->addTab(margins_, tr("Loop margins"));
  side_tabs_->addTab(pressure_flow_, tr("Pressure-flow"));
  sensitivity_ = new SensitivityView;
  side_tabs_->addTab(sensitivity_, tr("Sensitivity"));
  side_tabs_->setTabToolTip(side_tabs_->indexOf(sensitivity_),
                            tr("Which design change moves which figure, ranked: first-order effects of 10 % changes"));
  connect(sensitivity_, &SensitivityView::computeRequested, this, [this] { sensitivity_->compute(presentDesign()); });
  connect(sensitivity_, &SensitivityView::remediesRequested, this,
          [this] { sensitivity_->findRemedies(presentDesign()); });
  connect(sensitivity_, &SensitivityView::remedyToCompare, this, [this](const QString& name, const Scenario& design) {
    if (!compare_->addDesign(name, design, CompareView::Source::present) && !compare_->lastMessage().isEmpty())
      showError(compare_->lastMessage());
  });
  side_tabs_->addTab(editor_, tr("Parameters"));
  auto* trouble_scroll = new QScrollArea;
  trouble_scroll->setWidget(troubleshooting_);
  trouble_scroll->setWidgetResizable(true);
  trouble_scroll->setMinimumWidth(300);
  side_tabs_->addTab(trouble_scroll, tr("Troubleshooting"));
  splitter_->addWidget(side_tabs_);
  splitter_->installEventFilter(this);
  splitter_->setCollapsible(0, false);  // the live charts never vanish
  splitter_->setCollapsible(1, true);
  splitter_->setStretchFactor(0, 1);
  splitter_->setStretchFactor(1, 0);
  centre_layout->addWidget(splitter_, 1);
  connect(splitter_, &QSplitter::splitterMoved, this, [this] {
    const QList<int> sizes = splitter_->sizes();
    if (sizes.size() == 2 && sizes[0] + sizes[1] > 0) user_side_share_ = double(sizes[1]) / (sizes[0] + sizes[1]);
  });
  connect(side_tabs_, &QTabWidget::currentChanged, this, [this] {
    user_side_share_.reset();
    adjustPanels();
  });
  setCentralWidget(centre);

  dock_ = new QDockWidget(tr("Controls"), this);
  dock_->setObjectName("controls-dock");
  dock_->setFeatures(QDockWidget::DockWidgetMovable | QDockWidget::DockWidgetFloatable |
                     QDockWidget::DockWidgetClosable);
  auto* scroll = new QScrollArea;
  scroll->setWidget(controls_);
  scroll->setWidgetResizable(true);
  scroll->setHorizontalScrollBarPolicy(Qt::ScrollBarAlwaysOff);
  scroll->setMinimumWidth(controls_->minimumSizeHint().width() + scroll->verticalScrollBar()->sizeHint().width() + 4);
  dock_->setWidget(scroll);
  addDockWidget(Qt::LeftDockWidgetArea, dock_);

  statusBar()->addWidget(status_time_, 1);
  statusBar()->addPermanentWidget(status_rate_);

  buildMenus();

  connect(controls_, &ControlPanel::changeRequested, this,
          [this](const QString& key, double value, double ramp) { applyChange(key, value, ramp); });
  connect(controls_, &ControlPanel::sliderMoved, this,
          [this](const QString& key, double value) { applyChange(key, value, 0.0, true, true); });
  connect(troubleshooting_, &TroubleshootingPanel::changeRequested, this,
          [this](const QString& key, double value, double ramp) { applyChange(key, value, ramp); });
  connect(troubleshooting_, &TroubleshootingPanel::recordingLoaded, this, [this] {
    // Recorded pressure (and flow) over the live traces; what was not
    // recorded stays empty.
    const FieldTrace& r = *troubleshooting_->recording();
    std::vector<std::pair<std::string, std::vector<double>>> series{{"discharge_pressure", r.pressure}};
    if (!r.flow.empty()) series.emplace_back("load_flow", r.flow);
    traces_->addMeasuredOverlay(tr("recorded: %1").arg(QFileInfo(QString::fromStdString(r.source)).fileName()), r.time,
                                series);
    compare_->setRecordingAvailable(true);
    compareWithRecording();
  });
  connect(troubleshooting_, &TroubleshootingPanel::fitFinished, this, [this] {
    // The fitted scenario's pressure over the recording, so the eye judges
    // the match and where it fails; a cancelled fit draws nothing.
    const std::optional<FitResult>& f = troubleshooting_->fitResult();
    if (!f || f->cancelled || f->simulated.empty()) return;
    traces_->addMeasuredOverlay(tr("fitted (%1)").arg(QString::fromUtf8(to_string(f->verdict))), f->times,
                                {{"discharge_pressure", f->simulated}});
  });
  connect(troubleshooting_, &TroubleshootingPanel::fitRequested, this,
          [this] { troubleshooting_->startFit(presentDesign()); });
  connect(troubleshooting_, &TroubleshootingPanel::applyFitRequested, this, [this](const Scenario& fitted) {
    if (!maybeKeepChanges()) return;
    Scenario s = fitted;
    s.name = study_.name + " (fitted)";
    openStudy(s, QString());
    setModified(true);
    statusBar()->showMessage(tr("The study now uses the fitted values"), 5000);
  });
  connect(controls_, &ControlPanel::runRequested, this,
          [this](bool run) { run ? session_->start() : session_->pause(); });
  connect(controls_, &ControlPanel::stepRequested, this, [this] {
    session_->step();
    refreshNow();
  });
  connect(controls_, &ControlPanel::resetRequested, this, [this] { resetToPresent(); });
  connect(controls_, &ControlPanel::timeScaleChanged, this, [this](double scale) {
    session_->setTimeScale(scale);
    traces_->setTimeScale(scale);
  });
  connect(session_, &SessionController::runningChanged, controls_, &ControlPanel::setRunning);
  connect(session_, &SessionController::changed, this, [this](const Event& e) {
    live_events_.push_back(e);
    scheduleAutosave();
  });
  connect(session_, &SessionController::sessionStarted, this, [this] {
    traces_->clear();
    const ModelParameters present = session_->parametersNow();
    traces_->setValveEndShown(has_distributed_line(present));
    controls_->showParameters(present);
    editor_->setValues(present);
    troubleshooting_->showParameters(present);
    shown_ = present;
    banner_on_ = false;
    banner_setting_.reset();
    warning_->setVisible(false);
    refreshAnalysis(true);
    refreshNow();
  });
  connect(session_, &SessionController::solverFailed, this,
          [this](const QString& message) { showError(tr("The simulation stopped: %1").arg(message)); });
  connect(editor_, &ParameterEditor::parameterEdited, this,
          [this](const QString& key, double value) { applyChange(key, value, 0.0); });
  connect(editor_, &ParameterEditor::editRejected, this,
          [this](const QString&, const QString& message) { statusBar()->showMessage(message, 8000); });

  display_timer_->setInterval(16);  // ~60 Hz
  connect(display_timer_, &QTimer::timeout, this, &MainWindow::onDisplayTick);
  display_timer_->start();
  autosave_timer_->setSingleShot(true);
  autosave_timer_->setInterval(autosave_delay_ms);
  connect(autosave_timer_, &QTimer::timeout, this, &MainWindow::writeAutosave);

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
    QFileDialog dialog(this, tr("Open scenario"), QString(), scenario_filter());
    dialog.setObjectName("open-dialog");
    dialog.setOption(QFileDialog::DontUseNativeDialog);
    dialog.setFileMode(QFileDialog::ExistingFile);
    if (!study_path_.isEmpty()) dialog.setDirectory(QFileInfo(study_path_).absolutePath());
    if (dialog.exec() == QDialog::Accepted && !dialog.selectedFiles().isEmpty())
      openFile(dialog.selectedFiles().constFirst());
  });
  recent_menu_ = file->addMenu(tr("Open &recent"));
  rebuildRecentMenu();
  file->addAction(tr("&Save"), QKeySequence::Save, this, [this] { save(); });
  file->addAction(tr("Save &as..."), QKeySequence(Qt::CTRL | Qt::SHIFT | Qt::Key_S), this, [this] { saveAs(); });
  file->addSeparator();
  auto ask_export = [this](const QString& title, const QString& name, const QString& filter) {
    QFileDialog dialog(this, title, QString(), filter);
    dialog.setObjectName("export-dialog");
    dialog.setOption(QFileDialog::DontUseNativeDialog);
    dialog.setAcceptMode(QFileDialog::AcceptSave);
    dialog.selectFile(name);
    return dialog.exec() == QDialog::Accepted && !dialog.selectedFiles().isEmpty() ? dialog.selectedFiles().first()
                                                                                   : QString();
  };
  const QString pictures = tr("PNG (*.png);;SVG (*.svg);;PDF (*.pdf)");
  file->addAction(tr("Export traces as &CSV..."), this, [this, ask_export] {
    const QString path = ask_export(tr("Export traces"), "trace.csv", tr("CSV (*.csv)"));
    if (!path.isEmpty()) exportTracesCsv(path);
  });
  file->addAction(tr("Export &charts as picture..."), this, [this, ask_export, pictures] {
    const QString path = ask_export(tr("Export charts"), "traces.png", pictures);
    if (!path.isEmpty()) exportCharts(path);
  });
  file->addAction(tr("Export loop &margins as picture..."), this, [this, ask_export, pictures] {
    const QString path = ask_export(tr("Export loop margins"), "margins.png", pictures);
    if (!path.isEmpty()) exportMargins(path);
  });
  file->addAction(tr("Export &pressure-flow as picture..."), this, [this, ask_export, pictures] {
    const QString path = ask_export(tr("Export pressure-flow"), "pressure-flow.png", pictures);
    if (!path.isEmpty()) exportPressureFlow(path);
  });
  file->addSeparator();
  file->addAction(tr("&Quit"), QKeySequence(Qt::CTRL | Qt::Key_Q), this, &QWidget::close);

  QMenu* edit = menuBar()->addMenu(tr("&Edit"));
  QAction* undo = changes_->createUndoAction(this, tr("&Undo"));
  // Spelled out: the platform's standard bindings differ (some have no Ctrl+Shift+Z).
  undo->setShortcut(QKeySequence(Qt::CTRL | Qt::Key_Z));
  undo->setObjectName("undo-action");
  QAction* redo = changes_->createRedoAction(this, tr("&Redo"));
  redo->setShortcuts({QKeySequence(Qt::CTRL | Qt::SHIFT | Qt::Key_Z), QKeySequence(Qt::CTRL | Qt::Key_Y)});
  redo->setObjectName("redo-action");
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
  run->addAction(tr("&Reset to steady state"), QKeySequence(Qt::CTRL | Qt::Key_R), this, [this] { resetToPresent(); });
  run->addAction(tr("Restart the &study from its start"), this,
                 [this] {
                   if (maybeKeepChanges()) openStudy(study_, study_path_);
                 })
      ->setObjectName("restart-study-action");
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
  view->addAction(tr("&Strip charts"), QKeySequence(Qt::Key_F6), this, [this] { showView("charts"); });
  view->addAction(tr("C&ircuit"), QKeySequence(Qt::Key_F7), this, [this] { showView("circuit"); });
  QAction* room_view = view->addAction(tr("&Room view"), QKeySequence(Qt::Key_F10), this, [this] {
    // The circuit beside the controls, the side panel out of the way: for a trainer's screen or projector.
    const bool on = side_panel_action_->isChecked();
    side_panel_action_->setChecked(!on);
    if (on) showView("circuit");
  });
  room_view->setObjectName("room-view-action");
  room_view->setToolTip(tr("The circuit with the controls, the side panel hidden (F10 again brings it back)"));
  QAction* room = view->addAction(tr("Full &screen"), QKeySequence(Qt::Key_F11), this,
                                  [this] { isFullScreen() ? showNormal() : showFullScreen(); });
  room->setToolTip(tr("For the room: the window over the whole screen (F9 hides the side panel, F8 the controls)"));
  view->addSeparator();
  side_panel_action_ = view->addAction(tr("&Side panel"));
  side_panel_action_->setObjectName("side-panel-action");
  side_panel_action_->setCheckable(true);
  side_panel_action_->setChecked(true);
  side_panel_action_->setShortcut(QKeySequence(Qt::Key_F9));
  connect(side_panel_action_, &QAction::toggled, this, [this](bool on) {
    side_tabs_->setVisible(on);
    user_side_share_.reset();
    adjustPanels();
  });
  QAction* controls_action = dock_->toggleViewAction();
  controls_action->setText(tr("&Controls"));
  controls_action->setShortcut(QKeySequence(Qt::Key_F8));
  view->addAction(controls_action);
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
  help->addAction(tr("&About Swashtune"), this,
                  [this] { QMessageBox::about(this, tr("About Swashtune"), aboutText()); });
}

QString MainWindow::aboutText() {
  return tr("Swashtune %1\n\nSwashtune simulates the control loop of a pressure-compensated piston pump: compensator "
            "spool, control piston, bias spring, swashplate and the discharge line.\n\n%2")
      .arg(QString::fromLatin1(version), QString::fromUtf8(safety_notice_short));
}

void MainWindow::resizeEvent(QResizeEvent* event) {
  QMainWindow::resizeEvent(event);
  // The controls dock: what its widgets need, at most a fifth of the window.
  const int dock_width = std::max(controls_->minimumSizeHint().width() + 24, std::min(width() / 5, 300));
  resizeDocks({dock_}, {dock_width}, Qt::Horizontal);
  adjustPanels();
}

bool MainWindow::eventFilter(QObject* watched, QEvent* event) {
  // The splitter's own width is what is shared out: follow it (it is only
  // known once the window is laid out).
  if (watched == splitter_ && event->type() == QEvent::Resize) adjustPanels();
  return QMainWindow::eventFilter(watched, event);
}

void MainWindow::adjustPanels() {
  const int total = splitter_->width();
  if (total < 100 || !splitter_->isVisible()) return;
  if (!side_tabs_->isVisibleTo(this)) {
    splitter_->setSizes({total, 0});
    return;
  }
  const int charts_at_least = std::max(static_cast<int>(0.4 * width() + 0.5), 360);
  double share = 0.45;
  const QWidget* page = side_tabs_->currentWidget();
  if (page == margins_) share = loop_active_ ? 0.5 : 0.34;  // "loop inactive" needs little room
  if (page == pressure_flow_) share = 0.4;
  if (centre_tabs_->currentWidget() != traces_) share = std::min(share, 0.34);  // the diagram and the table want the room
  if (user_side_share_) share = *user_side_share_;
  int side = static_cast<int>(share * total + 0.5);
  int page_needs = std::max(page ? page->minimumWidth() : 0, 240) + 8;
  if (page == margins_ && loop_active_) page_needs = std::max(page_needs, 500);  // its figures stay legible
  side = std::max(side, page_needs);
  side = std::min(side, total - charts_at_least);
  splitter_->setSizes({total - std::max(side, 0), std::max(side, 0)});
}

void MainWindow::setUnits(UnitSystem system) {
  units_ = system;
  traces_->setUnits(system);
  circuit_->setUnits(system);
  compare_->setUnits(system);
  pressure_flow_->setUnits(system);
  margins_->setUnits(system);
  if (sensitivity_) sensitivity_->setUnits(system);
  editor_->setUnits(system);
  controls_->setUnits(system);
  troubleshooting_->setUnits(system);
  // Written only when it changes: a write takes the settings file's lock,
  // and an empty lock left by a killed instance stalls the next writer 30 s.
  const QString unit_name = system == UnitSystem::us ? "us" : "metric";
  QSettings settings;
  if (settings.value("units").toString() != unit_name) settings.setValue("units", unit_name);
  if (QAction* a = findChild<QAction*>(system == UnitSystem::us ? "units-us" : "units-metric")) a->setChecked(true);
  refreshAnalysis(true);
}

bool MainWindow::showView(const QString& name) {
  const QString n = name.toLower();
  if (n == "room") {  // the circuit with the controls, no side panel
    side_panel_action_->setChecked(false);
    return showView("circuit");
  }
  QWidget* page = n == "charts"    ? static_cast<QWidget*>(traces_)
                 : n == "circuit" ? static_cast<QWidget*>(circuit_)
                 : n == "compare" ? static_cast<QWidget*>(compare_)
                                  : nullptr;
  for (int i = 0; i < centre_tabs_->count(); ++i)
    if (centre_tabs_->widget(i) == page || centre_tabs_->tabText(i).compare(name, Qt::CaseInsensitive) == 0) {
      centre_tabs_->setCurrentIndex(i);
      return true;
    }
  return false;
}

bool MainWindow::showSideTab(const QString& title) {
  for (int i = 0; i < side_tabs_->count(); ++i)
    if (side_tabs_->tabText(i).compare(title, Qt::CaseInsensitive) == 0) {
      side_tabs_->setCurrentIndex(i);
      return true;
    }
  return false;
}

// ---- sessions -------------------------------------------------------------------

bool MainWindow::start(const QString& path, const Scenario& fallback) {
  if (options_.interactive && offerRecovery(path)) return true;
  if (!path.isEmpty()) return openFile(path);
  openStudy(fallback, QString());
  return true;
}

void MainWindow::openStudy(const Scenario& study, const QString& path) {
  study_ = study;
  study_path_ = path;
  session_path_.clear();
  recovered_ = false;
  live_events_.clear();
  autosave_timer_->stop();
  autosave_->beginSession(QString::fromStdString(study.name));
  traces_->clearOverlays();
  runs_overlaid_ = 0;
  pressure_flow_->clearPrevious();
  analysed_.reset();
  compare_->setStudy(study);
  session_->load(study);
  session_->setTimeScale(controls_->timeScale());
  live_events_.clear();
  changes_->clear();
  setModified(false);
  QStringList warnings;
  for (const std::string& w : study.warnings) warnings << tr("Warning: %1").arg(QString::fromStdString(w));
  input_warnings_->setText(warnings.join(QLatin1Char('\n')));
  input_warnings_->setVisible(!warnings.isEmpty());
  updateTitle();
}

bool MainWindow::openFile(const QString& path) {
  try {
    const Scenario study = load_scenario(path.toStdString());
    openStudy(study, QFileInfo(path).absoluteFilePath());
    rememberRecent(QFileInfo(path).absoluteFilePath());
    last_error_.clear();
    return true;
  } catch (const std::exception& e) {
    showError(
        tr("Could not open the scenario; the present study is kept.\n\n%1").arg(QString::fromStdString(e.what())));
    return false;
  }
}

void MainWindow::resetToPresent(std::optional<std::pair<QString, double>> flag) {
  // Again from the steady state at the present values, with the study's
  // script playing again from t = 0.
  Scenario s = study_;
  s.parameters = session_->parametersNow();
  if (flag) find_parameter(flag->first.toStdString())->set(s.parameters, flag->second);
  s.events = study_.events;
  live_events_.clear();
  session_->load(s);
  session_->setTimeScale(controls_->timeScale());
  if (!same_parameters(s.parameters, study_.parameters)) setModified(true);
  scheduleAutosave();
}

Scenario MainWindow::sessionForSaving() const {
  Scenario s = session_->sessionScenario();
  s.name = study_.name;
  // The live sampling follows the time scale for the display; the file keeps the study's.
  s.settings.sample_interval = study_.settings.sample_interval;
  s.description = sessionDescription(s).toStdString();
  return s;
}

Scenario MainWindow::presentDesign() const {
  Scenario design = study_;
  const ModelParameters present = session_->parametersNow();
  for (const ParameterSpec& spec : parameter_registry()) {
    const bool scripted =
        std::any_of(study_.events.begin(), study_.events.end(), [&](const Event& e) { return e.target == spec.key; });
    if (!scripted) spec.set(design.parameters, spec.get(present));
  }
  return design;
}

QString MainWindow::sessionDescription(const Scenario& session) const {
  QString text = QString::fromStdString(study_.description).trimmed();
  QStringList parts;
  QString origin = tr("Live session saved %1 from the study \"%2\"")
                       .arg(QDateTime::currentDateTime().toString("yyyy-MM-dd HH:mm"), qs(study_.name));
  if (!study_path_.isEmpty()) origin += tr(" (%1)").arg(QFileInfo(study_path_).fileName());
  if (recovered_) origin += tr(", recovered after the program stopped");
  parts << origin + QLatin1Char('.');
  QStringList initial;
  for (const ParameterSpec& spec : parameter_registry()) {
    const double now = spec.get(session.parameters), before = spec.get(study_.parameters);
    if (now != before)
      initial << tr("%1 %2 (the study: %3)")
                     .arg(qs(spec.key), shown_value(spec, now, units_), shown_value(spec, before, units_));
  }
  if (!initial.isEmpty())
    parts << tr("It starts from the steady state with %1.").arg(initial.join(QStringLiteral(", ")));
  if (!live_events_.empty()) {
    QStringList changes;
    const std::size_t listed = std::min<std::size_t>(live_events_.size(), 12);
    for (std::size_t i = 0; i < listed; ++i) {
      const Event& e = live_events_[i];
      const ParameterSpec* spec = find_parameter(e.target);
      QString change =
          tr("at %1 %2 to %3")
              .arg(seconds_text(e.at), qs(e.target), spec ? shown_value(*spec, e.to, units_) : QString::number(e.to));
      if (e.ramp > 0.0) change += tr(" over %1 ms").arg(e.ramp * 1e3, 0, 'g', 4);
      changes << change;
    }
    if (live_events_.size() > listed) changes << tr("and %1 more").arg(live_events_.size() - listed);
    parts << tr("Changes made live: %1.").arg(changes.join(QStringLiteral("; ")));
  }
  if (!study_.events.empty()) parts << tr("The study's %1 scripted events are kept.").arg(study_.events.size());
  parts << tr("Run for %1.").arg(seconds_text(session_->simulatedTime()));
  return (text.isEmpty() ? QString() : text + QStringLiteral("\n\n")) + parts.join(QLatin1Char(' '));
}

QString MainWindow::suggestedSessionPath() const {
  QString dir;
  if (!study_path_.isEmpty() && !is_shipped_example(study_path_) &&
      QFileInfo(QFileInfo(study_path_).absolutePath()).isWritable())
    dir = QFileInfo(study_path_).absolutePath();
  if (dir.isEmpty()) dir = QStandardPaths::writableLocation(QStandardPaths::DocumentsLocation);
  if (dir.isEmpty()) dir = QDir::homePath();
  QString stem = !study_path_.isEmpty() ? QFileInfo(study_path_).completeBaseName() : QString::fromStdString(study_.name);
  // A name any file system takes: letters, digits, dots, dashes.
  stem.replace(QRegularExpression(QStringLiteral("[^A-Za-z0-9._-]+")), QStringLiteral("-"));
  stem.remove(QRegularExpression(QStringLiteral("^[-.]+|[-.]+$")));
  if (stem.isEmpty()) stem = QStringLiteral("study");
  QString candidate = dir + QLatin1Char('/') + stem + QStringLiteral("-session.toml");
  for (int n = 2; QFileInfo::exists(candidate) && n < 1000; ++n)
    candidate = dir + QLatin1Char('/') + stem + QStringLiteral("-session-%1.toml").arg(n);
  return candidate;
}

QString MainWindow::askSavePath(const QString& suggested) {
  QFileDialog dialog(this, tr("Save the session as a scenario"), QFileInfo(suggested).absolutePath(),
                     scenario_filter());
  dialog.setObjectName("save-session-dialog");
  dialog.setOption(QFileDialog::DontUseNativeDialog);
  dialog.setAcceptMode(QFileDialog::AcceptSave);
  dialog.setDefaultSuffix("toml");
  dialog.selectFile(QFileInfo(suggested).fileName());
  if (dialog.exec() != QDialog::Accepted || dialog.selectedFiles().isEmpty()) return QString();
  return dialog.selectedFiles().constFirst();
}

bool MainWindow::save() { return session_path_.isEmpty() ? saveAs() : saveTo(session_path_); }

bool MainWindow::saveAs() {
  if (!options_.interactive) {
    last_error_ = tr("No file chosen for the session");
    return false;
  }
  QString suggested = session_path_.isEmpty() ? suggestedSessionPath() : session_path_;
  for (;;) {
    const QString path = askSavePath(suggested);
    if (path.isEmpty()) return false;
    if (const auto why = refusal_to_write(path, autosave_->directory())) {
      QMessageBox box(QMessageBox::Warning, tr("Choose another file"), *why, QMessageBox::Ok, this);
      box.setObjectName("refused-box");
      box.exec();
      suggested = suggestedSessionPath();
      continue;
    }
    return saveTo(path);
  }
}

bool MainWindow::saveTo(const QString& path) {
  if (const auto why = refusal_to_write(path, autosave_->directory())) {
    showError(tr("The session was not saved.\n\n%1").arg(*why));
    return false;
  }
  try {
    const Scenario s = sessionForSaving();
    write_file_atomically(path.toStdString(), scenario_to_toml(s));
    const QString absolute = QFileInfo(path).absoluteFilePath();
    session_path_ = absolute;
    recovered_ = false;
    rememberRecent(absolute);
    setModified(false);
    autosave_timer_->stop();
    autosave_->discard();  // this session's autosave; never the file just written (refused above)
    updateTitle();
    statusBar()->showMessage(tr("Saved %1: %2 events, %3 of the study's script")
                                 .arg(QFileInfo(path).fileName())
                                 .arg(s.events.size())
                                 .arg(study_.events.size()),
                             5000);
    last_error_.clear();
    return true;
  } catch (const std::exception& e) {
    showError(tr("Could not save; the session is kept.\n\n%1").arg(QString::fromStdString(e.what())));
    return false;
  }
}

bool MainWindow::offerRecovery(const QString& path_asked_for) {
  for (const AutosaveInfo& orphan : autosave_->orphans()) {
    const QString from =
        orphan.study_path.isEmpty() ? QString() : tr(" (from %1)").arg(QFileInfo(orphan.study_path).fileName());
    const qint64 minutes = orphan.saved_at.secsTo(QDateTime::currentDateTime()) / 60;
    QString text = tr("A session of \"%1\"%2 was not closed properly. Its autosave holds %3 change(s) and %4 of "
                      "simulated time, saved %5 (%6 ago).")
                       .arg(orphan.study_name, from)
                       .arg(orphan.changes)
                       .arg(seconds_text(orphan.simulated_time))
                       .arg(orphan.saved_at.toString("yyyy-MM-dd HH:mm:ss"))
                       .arg(minutes < 1 ? tr("less than a minute") : tr("%1 min").arg(minutes));
    if (!path_asked_for.isEmpty())
      text += tr("\n\nRecovering opens it instead of %1 (which you can open afterwards).")
                  .arg(QFileInfo(path_asked_for).fileName());
    QMessageBox box(QMessageBox::Question, tr("Recover a session?"), text, QMessageBox::NoButton, this);
    box.setObjectName("recovery-box");
    QPushButton* take = box.addButton(tr("Recover"), QMessageBox::AcceptRole);
    box.addButton(tr("Keep it for later"), QMessageBox::RejectRole);
    box.addButton(tr("Discard it"), QMessageBox::DestructiveRole);
    box.setDefaultButton(take);
    box.exec();
    const QMessageBox::ButtonRole role = role_of(box);
    if (role == QMessageBox::AcceptRole && recover(orphan)) return true;
    if (role == QMessageBox::DestructiveRole) autosave_->removeOrphan(orphan.file);
  }
  return false;
}

bool MainWindow::recover(const AutosaveInfo& orphan) {
  Scenario s;
  try {
    s = AutosaveStore::readSession(orphan.file);
  } catch (const std::exception& e) {
    showError(tr("Could not recover the session; its autosave is kept at %1.\n\n%2")
                  .arg(orphan.file, QString::fromStdString(e.what())));
    return false;
  }
  Scenario study = s;
  study.name = orphan.study_name.isEmpty() ? s.name : orphan.study_name.toStdString();
  study.description = orphan.study_description.toStdString();
  openStudy(study, orphan.study_path);
  // Continue in the same autosave file, so that there is always one copy.
  if (!autosave_->adopt(orphan.file)) autosave_->beginSession(orphan.study_name);
  session_path_ = orphan.session_path;
  if (!session_path_.isEmpty() && refusal_to_write(session_path_, autosave_->directory())) session_path_.clear();
  recovered_ = true;
  // Back to where it was: the events replay to the autosaved time.
  if (orphan.simulated_time > 0.0 && orphan.simulated_time <= longest_replay_s) {
    QString error;
    if (!session_->advanceNow(orphan.simulated_time, &error)) showError(tr("The simulation stopped: %1").arg(error));
    refreshNow();
  }
  setModified(true);
  updateTitle();
  statusBar()->showMessage(tr("Recovered the session of \"%1\" autosaved %2")
                               .arg(orphan.study_name, orphan.saved_at.toString("yyyy-MM-dd HH:mm:ss")),
                           8000);
  return true;
}

void MainWindow::scheduleAutosave() {
  if (!options_.autosave) return;
  if (!autosave_timer_->isActive()) autosave_timer_->start();  // not restarted: a burst waits at most the delay
}

void MainWindow::writeAutosave() {
  if (!modified_ || !options_.autosave) return;
  AutosaveInfo info;
  info.study_name = QString::fromStdString(study_.name);
  info.study_path = study_path_;
  info.session_path = session_path_;
  info.study_description = QString::fromStdString(study_.description);
  info.changes = static_cast<int>(live_events_.size());
  info.simulated_time = session_->simulatedTime();
  QString error;
  if (!autosave_->write(sessionForSaving(), info, &error))
    statusBar()->showMessage(tr("Autosave failed: %1").arg(error), 8000);
}

bool MainWindow::maybeKeepChanges() {
  if (!modified_ || !options_.interactive) return true;
  QMessageBox box(QMessageBox::Warning, tr("Unsaved session"),
                  tr("The session of \"%1\" has changes that are not saved. Save them first?").arg(qs(study_.name)),
                  QMessageBox::Save | QMessageBox::Discard | QMessageBox::Cancel, this);
  box.setObjectName("unsaved-box");
  box.setDefaultButton(QMessageBox::Save);
  const int answer = box.exec();
  if (answer == QMessageBox::Cancel) return false;
  if (answer == QMessageBox::Discard) return true;
  return save();
}

void MainWindow::closeEvent(QCloseEvent* event) {
  if (!maybeKeepChanges()) {
    event->ignore();
    return;
  }
  QSettings().setValue("geometry", saveGeometry());
  autosave_timer_->stop();
  autosave_->discard();  // saved or discarded: nothing left to recover
  event->accept();
}

void MainWindow::setModified(bool modified) {
  modified_ = modified;
  setWindowModified(modified);
  if (modified) scheduleAutosave();
}

void MainWindow::updateTitle() {
  QString where;
  if (!session_path_.isEmpty())
    where = QFileInfo(session_path_).fileName();
  else if (recovered_)
    where = tr("recovered, not saved yet");
  else if (!study_path_.isEmpty())
    where = tr("from %1").arg(QFileInfo(study_path_).fileName());
  else
    where = tr("not saved yet");
  setWindowTitle(tr("%1 (%2)[*] - Swashtune").arg(qs(study_.name), where));
}

// ---- changes ---------------------------------------------------------------------

bool MainWindow::change(const QString& key, double value, double ramp) {
  last_error_.clear();
  applyChange(key, value, ramp);
  return last_error_.isEmpty();
}

void MainWindow::applyChange(const QString& key, double value, double ramp, bool record, bool slider) {
  const ParameterSpec* spec = find_parameter(key.toStdString());
  if (!spec) {
    showError(tr("%1: no such parameter").arg(key));
    return;
  }
  const double before = spec->get(session_->parametersNow());
  if (spec->is_flag() || fixed_during_a_run(session_->parametersNow(), key.toStdString(), value)) {
    // A switch, the line's shape or a part added or removed cannot change
    // mid-run: start again with it.
    resetToPresent(std::make_pair(key, value));
    statusBar()->showMessage(tr("%1 changed: the run starts again from the steady state").arg(key), 5000);
  } else {
    try {
      session_->change(key.toStdString(), value, ramp);
    } catch (const std::exception& e) {
      showError(QString::fromStdString(e.what()));
      controls_->showParameters(session_->parametersNow());
      return;
    }
  }
  if (record && before != value) {
    const QString text =
        tr("%1 %2 to %3").arg(key, shown_value(*spec, before, units_), shown_value(*spec, value, units_));
    changes_->push(new LiveChangeCommand([this](const QString& k, double v, double r) { applyChange(k, v, r, false); },
                                         key, before, value, ramp, slider, text));
  }
  const ModelParameters present = session_->parametersNow();
  controls_->showParameters(present);
  editor_->setValues(present);
  setModified(true);
  refreshNow();
}

void MainWindow::updateSettingBanner(const ModelParameters& p, const Sample& now) {
  const double full_flow = p.displacement * p.speed / 60.0;
  const double load_flow = column_value(now, "load_flow");
  const double pressure = column_value(now, "discharge_pressure");
  const double share = full_flow > 0.0 ? load_flow / full_flow : 0.0;
  const bool under_flow = share > setting_under_flow_threshold;
  // A setting that moved (by a control, an undo or the study's script) while
  // flow is open cannot be seen on the gauge.
  if (banner_setting_ && p.setting != *banner_setting_ && under_flow) banner_on_ = true;
  banner_setting_ = p.setting;
  if (banner_on_ && !under_flow) {
    banner_on_ = false;  // at no flow the gauge shows the setting: it can be verified now
    statusBar()->showMessage(tr("No flow now: the gauge shows the setting, %1 %2; verify it on the machine with a "
                                "calibrated gauge.")
                                 .arg(DisplayUnits::make(units_).pressure.to_display(pressure), 0, 'f', 1)
                                 .arg(DisplayUnits::make(units_).pressure.unit),
                             10000);
  }
  if (!banner_on_) {
    warning_->setVisible(false);
    return;
  }
  const DisplayUnits u = DisplayUnits::make(units_);
  warning_->setText(
      tr("<b>The compensator setting (now %6 %5) was changed while the load takes flow: %1 %2, %3 % of full flow.</b> "
         "With flow open the circuit sets the pressure (now %4 %5), so the gauge does not show the setting: "
         "<b>the true maximum pressure has not been verified.</b> Make the setting at no flow, with the outlet "
         "blocked by a valve and a gauge on the pump outlet. Lock out and relieve pressure before working on "
         "the pump; follow the machine's documentation and local codes.")
          .arg(u.flow.to_display(load_flow), 0, 'f', 1)
          .arg(u.flow.unit)
          .arg(100.0 * share, 0, 'f', 0)
          .arg(u.pressure.to_display(pressure), 0, 'f', 1)
          .arg(u.pressure.unit)
          .arg(u.pressure.to_display(p.setting), 0, 'f', 1));
  warning_->setVisible(true);
}

bool MainWindow::warningShown() const { return warning_->isVisibleTo(this); }
QString MainWindow::warningText() const { return warning_->text(); }
QString MainWindow::inputWarningsText() const {
  return input_warnings_->isVisibleTo(this) ? input_warnings_->text() : QString();
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

// ---- exports -----------------------------------------------------------------------

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

bool MainWindow::exportPicture(QWidget* widget, const QString& path, const QString& what) {
  PictureTitle title;
  title.title = tr("%1: %2").arg(qs(study_.name), what);
  const QString file = !session_path_.isEmpty() ? QFileInfo(session_path_).fileName()
                       : !study_path_.isEmpty() ? QFileInfo(study_path_).fileName()
                                                : tr("built-in study");
  title.subtitle =
      tr("%1, t = %2, %3 units, Swashtune %4, exported %5")
          .arg(file, seconds_text(session_->simulatedTime()), units_ == UnitSystem::us ? tr("US") : tr("metric"),
               QString::fromLatin1(version), QDateTime::currentDateTime().toString("yyyy-MM-dd HH:mm"));
  QString error;
  if (export_picture(widget, path, title, &error)) {
    statusBar()->showMessage(tr("Exported %1").arg(path), 5000);
    return true;
  }
  showError(tr("Could not export the picture.\n\n%1").arg(error));
  return false;
}

bool MainWindow::exportCharts(const QString& path) { return exportPicture(traces_, path, tr("live traces")); }
bool MainWindow::exportMargins(const QString& path) { return exportPicture(margins_, path, tr("loop margins")); }
bool MainWindow::exportPressureFlow(const QString& path) {
  return exportPicture(pressure_flow_, path, tr("steady pressure-flow characteristic"));
}

bool MainWindow::addToComparison(const QString& what) {
  bool added = false;
  if (what == "opened") {
    added = compare_->addDesign(tr("as opened"), study_, CompareView::Source::opened);
  } else if (what == "present") {
    added = compare_->addDesign(tr("as edited at t = %1").arg(seconds_text(session_->simulatedTime())), presentDesign(),
                                CompareView::Source::present);
  } else if (what == "recording") {
    const auto& r = troubleshooting_->recording();
    if (!r) {
      statusBar()->showMessage(tr("Load a recording in the Troubleshooting tab first"), 6000);
      return false;
    }
    added = compare_->addRecording(tr("recorded: %1").arg(QFileInfo(QString::fromStdString(r->source)).fileName()), *r);
  } else if (const ParameterSpec* spec = find_parameter(what.toStdString())) {
    Scenario design = presentDesign();
    const double severity = troubleshooting_->severityOf(what);
    spec->set(design.parameters, severity);
    added = compare_->addDesign(tr("%1 %2").arg(what.mid(what.startsWith("faults.") ? 7 : 0).replace('_', ' '),
                                              shown_value(*spec, severity, units_)),
                                design, CompareView::Source::fault);
  }
  if (!added && !compare_->lastMessage().isEmpty()) showError(compare_->lastMessage());
  return added;
}

bool MainWindow::runStudyToEnd() {
  try {
    const Scenario s = presentDesign();
    const RunResult r = run_scenario(s);
    ++runs_overlaid_;
    traces_->addOverlay(tr("run %1: %2 as edited").arg(runs_overlaid_).arg(qs(s.name)), r.trace);
    statusBar()->showMessage(
        tr("Ran \"%1\" (present design) to %2 s: peak %3 %4")
            .arg(qs(s.name))
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

// ---- display ---------------------------------------------------------------------

void MainWindow::onDisplayTick() {
  const std::vector<Sample> fresh = session_->takeSamples();
  if (!fresh.empty()) {
    traces_->appendSamples(fresh);
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
    editor_->setValues(present);
    shown_ = present;
    compareWithRecording();  // a fault may have been switched
  }
  // The present state, also while held (at t = 0 after a change the load
  // flow follows the valve at once).
  const Sample latest = session_->latest();
  traces_->showPresent(latest);
  if (circuit_->isVisible()) circuit_->setState(latest, present);
  pressure_flow_->setOperatingPoint(column_value(latest, "discharge_pressure"), column_value(latest, "load_flow"));
  updateSettingBanner(present, latest);
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
  // The present design (every parameter as it is now, the study's events)
  // over the recording's time at the recording's resolution: the live trace
  // is sampled for the eye (1 ms at real time) and would hide fast hunting.
  Scenario s = presentDesign();
  const std::vector<double>& t = recording->time;
  s.settings.duration = std::max(s.settings.duration, t.back());
  double finest = s.settings.sample_interval;
  for (std::size_t i = 1; i < t.size(); ++i) finest = std::min(finest, t[i] - t[i - 1]);
  s.settings.sample_interval = std::max(finest, 1e-6);
  const SampleReader pressure = column_reader("discharge_pressure");
  try {
    const RunResult run = run_scenario(s);
    std::vector<double> times, pressures;
    for (const Sample& x : run.trace)
      if (x.time >= t.front() && x.time <= t.back()) {
        times.push_back(x.time);
        pressures.push_back(pressure(x));
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
  traces_->showPresent(latest);
  circuit_->setState(latest, session_->parametersNow());
  pressure_flow_->setOperatingPoint(column_value(latest, "discharge_pressure"), column_value(latest, "load_flow"));
  updateSettingBanner(session_->parametersNow(), latest);
  refreshAnalysis(false);
}

void MainWindow::refreshAnalysis(bool force) {
  const ModelParameters p = session_->parametersNow();
  if (!force && analysed_ && same_parameters(*analysed_, p)) return;
  // What changed, to name the characteristic it replaces.
  QString before;
  if (analysed_)
    for (const ParameterSpec& spec : parameter_registry())
      if (spec.get(*analysed_) != spec.get(p) && spec.key != "load.opening") {
        before = tr("before: %1 %2").arg(qs(spec.key), shown_value(spec, spec.get(*analysed_), units_));
        break;
      }
  analysed_ = p;
  // Both take a few milliseconds: fine on the UI thread, and only when a
  // parameter has actually moved.
  const StabilityReport report = analyse_stability(p, study_.settings);
  margins_->setReport(report);
  if (report.model.loop_active != loop_active_) {
    loop_active_ = report.model.loop_active;
    // With the loop inactive the margins view says so and shows the modes: it may be narrow.
    margins_->setMinimumWidth(loop_active_ ? 480 : 420);
    adjustPanels();
  }
  pressure_flow_->setCharacteristic(steady_characteristic(p, study_.settings, 41), p.setting, before);
}

}  // namespace swashtune::ui
