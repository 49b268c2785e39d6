#include "troubleshooting_panel.hpp"

#include <QCheckBox>
#include <QDoubleSpinBox>
#include <QFileDialog>
#include <QFileInfo>
#include <QGridLayout>
#include <QGroupBox>
#include <QHeaderView>
#include <QLabel>
#include <QListWidget>
#include <QProgressBar>
#include <QPushButton>
#include <QTableWidget>
#include <QTimer>
#include <QVBoxLayout>
#include <QtConcurrent/QtConcurrentRun>
#include <algorithm>
#include <cmath>

namespace swashtune::ui {
namespace {

// Parameters a recorded trace can usually tell apart; offered first.
const QStringList suggested_free = {"line.volume", "faults.entrained_air", "compensator.spool_damping",
                                    "compensator.bleed_orifice"};

bool is_fault(const ParameterSpec& spec) { return spec.key.substr(0, 7) == "faults."; }

// Where a fault's severity box starts, so that ticking it shows a fault at
// once (the healthy value would switch nothing on); any value can be typed.
// Example severities for trying the faults, not measured figures.
double example_severity(const ParameterSpec& spec) {
  static const std::pair<const char*, double> examples[] = {
      {"faults.leakage_factor", 4.0},       {"faults.entrained_air", 0.03},     {"faults.bleed_area_factor", 0.0},
      {"faults.bias_spring_strength", 0.6}, {"faults.spool_friction", 20.0},    {"faults.spool_stiction_ratio", 2.5},
      {"faults.setting_drift", 0.1},        {"faults.line_volume_factor", 3.0}, {"faults.case_pressure", 3e5},
  };
  for (const auto& [key, value] : examples)
    if (spec.key == key && spec.range.contains(value)) return value;
  return spec.default_value;
}

QString key_of(const ParameterSpec& spec) {
  return QString::fromUtf8(spec.key.data(), static_cast<int>(spec.key.size()));
}

}  // namespace

QString describe_oscillation(const OscillationReport& r, const DisplayUnits& u) {
  QString text = QString::fromUtf8(to_string(r.kind));
  if (r.kind != OscillationKind::settled)
    text += QObject::tr(" at %1 Hz, %2 %3 peak to peak, damping ratio %4")
                .arg(r.frequency_hz, 0, 'g', 4)
                .arg(u.pressure.to_display(r.peak_to_peak), 0, 'g', 3)
                .arg(u.pressure.unit)
                .arg(r.damping_ratio, 0, 'f', 4);
  return text;
}

TroubleshootingPanel::TroubleshootingPanel(QWidget* parent)
    : QWidget(parent),
      cancel_(std::make_shared<std::atomic<bool>>(false)),
      simulations_(std::make_shared<std::atomic<int>>(0)),
      watcher_(new QFutureWatcher<FitResult>(this)) {
  auto* layout = new QVBoxLayout(this);

  // Faults: a switch and a severity each; switching off returns to healthy.
  auto* faults = new QGroupBox(tr("Fault conditions (act on the running pump)"), this);
  auto* grid = new QGridLayout(faults);
  int row = 0;
  for (const ParameterSpec& spec : parameter_registry()) {
    if (!is_fault(spec)) continue;
    // A short name on the box ("spool friction"), the full meaning as its tooltip.
    const QString name = key_of(spec).mid(7).replace('_', ' ');
    FaultRow f{&spec, new QCheckBox(name, faults), new QDoubleSpinBox(faults), example_severity(spec)};
    f.on->setObjectName(key_of(spec));
    f.on->setToolTip(key_of(spec) + ": " +
                     QString::fromUtf8(spec.meaning.data(), static_cast<int>(spec.meaning.size())));
    f.severity->setDecimals(4);
    f.severity->setKeyboardTracking(false);
    f.severity->setObjectName(key_of(spec) + QStringLiteral(".severity"));
    f.severity->setToolTip(tr("Severity when switched on (an example to start from; type any value)"));
    grid->addWidget(f.on, row, 0);
    grid->addWidget(f.severity, row, 1);
    ++row;
    faults_.push_back(f);
  }
  for (FaultRow& f : faults_) {
    connect(f.on, &QCheckBox::toggled, this, [this, &f](bool) { requestFault(f); });
    connect(f.severity, qOverload<double>(&QDoubleSpinBox::valueChanged), this, [this, &f](double) {
      if (showing_) return;
      f.last_severity = parameter_display(*f.spec, units_.system).to_si(f.severity->value());
      if (f.on->isChecked()) requestFault(f);
    });
  }
  layout->addWidget(faults);

  // A recording from the machine.
  auto* field = new QGroupBox(tr("Recorded trace"), this);
  auto* field_layout = new QGridLayout(field);
  auto* load = new QPushButton(tr("Load recording..."), field);
  recording_label_ = new QLabel(tr("none loaded"), field);
  recording_label_->setWordWrap(true);
  recording_analysis_ = new QLabel(QStringLiteral("-"), field);
  simulated_analysis_ = new QLabel(QStringLiteral("-"), field);
  for (QLabel* l : {recording_analysis_, simulated_analysis_}) {
    l->setWordWrap(true);
    l->setTextInteractionFlags(Qt::TextSelectableByMouse);
  }
  field_layout->addWidget(load, 0, 0);
  field_layout->addWidget(recording_label_, 0, 1);
  field_layout->addWidget(new QLabel(tr("Recorded pressure:"), field), 1, 0);
  field_layout->addWidget(recording_analysis_, 1, 1);
  field_layout->addWidget(new QLabel(tr("Simulated pressure:"), field), 2, 0);
  field_layout->addWidget(simulated_analysis_, 2, 1);
  field_layout->setColumnStretch(1, 1);
  layout->addWidget(field);
  connect(load, &QPushButton::clicked, this, [this] {
    const QString path = QFileDialog::getOpenFileName(this, tr("Load recording"), QString(),
                                                      tr("CSV (*.csv *.txt *.tsv);;All files (*)"));
    if (!path.isEmpty()) loadRecording(path);
  });

  // Fitting parameters to the recording.
  auto* fit = new QGroupBox(tr("Fit parameters to the recording"), this);
  auto* fit_layout = new QGridLayout(fit);
  free_keys_ = new QListWidget(fit);
  free_keys_->setMaximumHeight(110);
  for (const ParameterSpec& spec : parameter_registry()) {
    if (spec.is_flag()) continue;
    auto* item = new QListWidgetItem(key_of(spec), free_keys_);
    item->setToolTip(QString::fromUtf8(spec.meaning.data(), static_cast<int>(spec.meaning.size())));
    item->setCheckState(suggested_free.mid(0, 2).contains(key_of(spec)) ? Qt::Checked : Qt::Unchecked);
  }
  fit_button_ = new QPushButton(tr("Fit"), fit);
  cancel_button_ = new QPushButton(tr("Cancel"), fit);
  apply_button_ = new QPushButton(tr("Use fitted values"), fit);
  cancel_button_->setEnabled(false);
  apply_button_->setEnabled(false);
  fit_button_->setObjectName("fit-button");
  cancel_button_->setObjectName("fit-cancel-button");
  apply_button_->setObjectName("fit-apply-button");
  fit_button_->setToolTip(tr("Fit the ticked parameters of the present design to the recording"));
  progress_ = new QProgressBar(fit);
  progress_->setObjectName("fit-progress");
  progress_->setRange(0, 0);
  progress_->setVisible(false);
  cannot_tell_ = new QLabel(fit);
  cannot_tell_->setObjectName("fit-cannot-tell");
  cannot_tell_->setWordWrap(true);
  fit_table_ = new QTableWidget(0, 4, fit);
  fit_table_->setHorizontalHeaderLabels({tr("parameter"), tr("from"), tr("fitted"), tr("note")});
  fit_table_->horizontalHeader()->setStretchLastSection(true);
  fit_table_->verticalHeader()->setVisible(false);
  fit_table_->setEditTriggers(QAbstractItemView::NoEditTriggers);
  fit_table_->setMaximumHeight(120);
  fit_layout->addWidget(free_keys_, 0, 0, 1, 4);
  fit_layout->addWidget(fit_button_, 1, 0);
  fit_layout->addWidget(cancel_button_, 1, 1);
  fit_layout->addWidget(apply_button_, 1, 2);
  fit_layout->addWidget(progress_, 1, 3);
  fit_layout->addWidget(fit_table_, 2, 0, 1, 4);
  fit_layout->addWidget(cannot_tell_, 3, 0, 1, 4);
  layout->addWidget(fit);
  message_ = new QLabel(this);
  message_->setWordWrap(true);
  layout->addWidget(message_);
  layout->addStretch(1);

  connect(fit_button_, &QPushButton::clicked, this, [this] {
    if (!recording_) {
      message_->setText(tr("Load a recording first: the fit needs a measured pressure to match."));
      return;
    }
    emit fitRequested();  // the owner starts it with the present design
  });
  connect(cancel_button_, &QPushButton::clicked, this, &TroubleshootingPanel::cancelFit);
  connect(apply_button_, &QPushButton::clicked, this, [this] {
    if (fit_result_) emit applyFitRequested(fit_result_->fitted);
  });
  connect(watcher_, &QFutureWatcher<FitResult>::finished, this, [this] {
    fit_button_->setEnabled(true);
    cancel_button_->setEnabled(false);
    progress_->setVisible(false);
    if (fit_error_.isEmpty()) {
      fit_result_ = watcher_->result();
      showFitResult();
    } else {
      message_->setText(fit_error_);
    }
    emit fitFinished();
  });
  setUnits(UnitSystem::metric);
}

TroubleshootingPanel::~TroubleshootingPanel() {
  cancelFit();
  watcher_->waitForFinished();
}

void TroubleshootingPanel::setUnits(UnitSystem system) {
  units_ = DisplayUnits::make(system);
  showing_ = true;
  for (FaultRow& f : faults_) {
    const DisplayQuantity q = parameter_display(*f.spec, system);
    f.severity->setRange(q.to_display(f.spec->range.min), q.to_display(f.spec->range.max));
    f.severity->setSuffix(q.unit.isEmpty() ? QString() : " " + q.unit);
    f.severity->setValue(q.to_display(f.last_severity));
  }
  showing_ = false;
}

void TroubleshootingPanel::showParameters(const ModelParameters& p) {
  showing_ = true;
  for (FaultRow& f : faults_) {
    const double value = f.spec->get(p);
    const bool on = value != f.spec->default_value;
    f.on->setChecked(on);
    if (on) {
      f.last_severity = value;
      f.severity->setValue(parameter_display(*f.spec, units_.system).to_display(value));
    }
  }
  showing_ = false;
}

void TroubleshootingPanel::requestFault(FaultRow& f) {
  if (showing_) return;
  emit changeRequested(key_of(*f.spec), f.on->isChecked() ? f.last_severity : f.spec->default_value, 0.0);
}

QCheckBox* TroubleshootingPanel::faultSwitch(const QString& key) const {
  for (const FaultRow& f : faults_)
    if (key_of(*f.spec) == key) return f.on;
  return nullptr;
}

QDoubleSpinBox* TroubleshootingPanel::faultSeverity(const QString& key) const {
  for (const FaultRow& f : faults_)
    if (key_of(*f.spec) == key) return f.severity;
  return nullptr;
}

double TroubleshootingPanel::severityOf(const QString& key) const {
  for (const FaultRow& f : faults_)
    if (key_of(*f.spec) == key) return f.last_severity;
  return 0.0;
}

bool TroubleshootingPanel::loadRecording(const QString& path) {
  try {
    recording_ = read_field_trace(path.toStdString());
  } catch (const std::exception& e) {
    message_->setText(tr("Could not load the recording (the previous one is kept): %1").arg(e.what()));
    return false;
  }
  const FieldTrace& r = *recording_;
  recording_label_->setText(tr("%1: %2 samples, %3 to %4 s")
                                .arg(QFileInfo(path).fileName())
                                .arg(r.time.size())
                                .arg(r.time.front(), 0, 'g', 6)
                                .arg(r.time.back(), 0, 'g', 6));
  try {
    recording_analysis_->setText(describe_oscillation(analyse_oscillation(r.time, r.pressure), units_));
  } catch (const std::exception& e) {
    recording_analysis_->setText(tr("not analysed: %1").arg(e.what()));
  }
  message_->clear();
  emit recordingLoaded();
  return true;
}

void TroubleshootingPanel::showSimulatedAnalysis(const OscillationReport& report) {
  simulated_analysis_->setText(describe_oscillation(report, units_));
}

QString TroubleshootingPanel::recordingAnalysisText() const { return recording_analysis_->text(); }
QString TroubleshootingPanel::simulatedAnalysisText() const { return simulated_analysis_->text(); }
QString TroubleshootingPanel::lastMessage() const { return message_->text(); }
QString TroubleshootingPanel::cannotTellText() const { return cannot_tell_->text(); }

QStringList TroubleshootingPanel::checkedFreeKeys() const {
  QStringList keys;
  for (int i = 0; i < free_keys_->count(); ++i)
    if (free_keys_->item(i)->checkState() == Qt::Checked) keys << free_keys_->item(i)->text();
  return keys;
}

void TroubleshootingPanel::setFreeKeys(const QStringList& keys) {
  for (int i = 0; i < free_keys_->count(); ++i)
    free_keys_->item(i)->setCheckState(keys.contains(free_keys_->item(i)->text()) ? Qt::Checked : Qt::Unchecked);
}

bool TroubleshootingPanel::startFit(const Scenario& study) {
  if (fitRunning()) return false;
  if (!recording_) {
    message_->setText(tr("Load a recording first: the fit needs a measured pressure to match."));
    return false;
  }
  FitOptions options;
  for (const QString& key : checkedFreeKeys()) options.free_keys.push_back(key.toStdString());
  if (options.free_keys.empty()) {
    message_->setText(tr("Tick at least one parameter to fit."));
    return false;
  }
  cancel_->store(false);
  simulations_->store(0);
  fit_error_.clear();
  fit_result_.reset();
  fit_button_->setEnabled(false);
  cancel_button_->setEnabled(true);
  apply_button_->setEnabled(false);
  cannot_tell_->clear();
  fit_table_->setRowCount(0);
  // Each iteration runs the study once per free parameter and once more; the
  // bar counts simulations against the most the search may take.
  progress_->setRange(0,
                      options.starts * (options.max_iterations + 1) * (static_cast<int>(options.free_keys.size()) + 1));
  progress_->setValue(0);
  progress_->setFormat(tr("%v simulations"));
  progress_->setVisible(true);
  message_->setText(tr("Fitting: each step runs the study once per free parameter..."));
  const FieldTrace trace = *recording_;
  auto cancel = cancel_;
  auto simulations = simulations_;
  watcher_->setFuture(QtConcurrent::run([this, study, trace, options, cancel, simulations]() -> FitResult {
    try {
      return fit_to_trace(study, trace, options, [cancel, simulations](int n, double) {
        simulations->store(n);
        return !cancel->load();
      });
    } catch (const std::exception& e) {
      fit_error_ = tr("The fit could not run: %1").arg(e.what());  // read only after finished()
    } catch (...) {
      fit_error_ = tr("The fit stopped on an unexpected error.");  // nothing may escape into Qt
    }
    return FitResult{};
  }));
  // Progress: the count of simulations so far, polled at display rate.
  auto* poll = new QTimer(this);
  connect(poll, &QTimer::timeout, this, [this, poll] {
    if (!fitRunning()) {
      poll->deleteLater();
      return;
    }
    progress_->setValue(std::min(simulations_->load(), progress_->maximum()));
    message_->setText(tr("Fitting: %1 simulations so far").arg(simulations_->load()));
  });
  poll->start(100);
  return true;
}

void TroubleshootingPanel::cancelFit() { cancel_->store(true); }

bool TroubleshootingPanel::fitRunning() const { return watcher_->isRunning(); }

void TroubleshootingPanel::showFitResult() {
  const FitResult& r = *fit_result_;
  fit_table_->setRowCount(static_cast<int>(r.parameters.size()));
  for (int i = 0; i < static_cast<int>(r.parameters.size()); ++i) {
    const FittedParameter& p = r.parameters[i];
    const DisplayQuantity q = parameter_display(*find_parameter(p.key), units_.system);
    const QString unit = q.unit.isEmpty() ? QString() : " " + q.unit;
    fit_table_->setItem(i, 0, new QTableWidgetItem(QString::fromStdString(p.key)));
    fit_table_->setItem(i, 1, new QTableWidgetItem(QString::number(q.to_display(p.initial), 'g', 5) + unit));
    fit_table_->setItem(i, 2,
                        new QTableWidgetItem(QString("%1 \u00b1 %2%3")
                                                 .arg(q.to_display(p.value), 0, 'g', 5)
                                                 .arg(q.to_display(p.standard_error), 0, 'g', 2)
                                                 .arg(unit)));
    fit_table_->setItem(i, 3, new QTableWidgetItem(QString::fromStdString(p.note)));
  }
  fit_table_->resizeColumnsToContents();
  apply_button_->setEnabled(!r.cancelled);
  // What the recording cannot tell, in plain words.
  QStringList unknown;
  for (const FittedParameter& p : r.parameters)
    if (!p.identifiable)
      unknown << QStringLiteral("%1 (%2)").arg(QString::fromStdString(p.key), QString::fromStdString(p.note));
  if (r.cancelled)
    cannot_tell_->setText(tr("Cancelled: the values are the best found so far and not a fit."));
  else if (!unknown.isEmpty())
    cannot_tell_->setText(tr("The recording cannot tell: %1. Keep those at known values or record an event that "
                             "moves them.")
                              .arg(unknown.join(QStringLiteral("; "))));
  else
    cannot_tell_->setText(tr("The recording tells every fitted parameter (standard errors in the table), over %1 "
                             "recorded samples.")
                              .arg(r.samples));
  // Whether the model fits this machine at all, and whether the starts agree.
  if (!r.cancelled) {
    QString verdict = QString::fromStdString(r.verdict_text);
    if (!verdict.isEmpty()) verdict[0] = verdict[0].toUpper();
    cannot_tell_->setText(
        cannot_tell_->text() + "\n" + verdict + "." +
        (r.starts_note.empty() ? QString() : "\nStarts: " + QString::fromStdString(r.starts_note) + "."));
  }
  message_->setText(tr("%1: rms residual %2 %3 (from %4 %3) after %5 simulations")
                        .arg(QString::fromStdString(r.message))
                        .arg(units_.pressure.to_display(r.rms), 0, 'g', 4)
                        .arg(units_.pressure.unit)
                        .arg(units_.pressure.to_display(r.initial_rms), 0, 'g', 4)
                        .arg(r.simulations));
}

}  // namespace swashtune::ui
