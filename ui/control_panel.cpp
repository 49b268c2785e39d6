#include "control_panel.hpp"

#include <QComboBox>
#include <QDoubleSpinBox>
#include <QFormLayout>
#include <QGridLayout>
#include <QGroupBox>
#include <QHBoxLayout>
#include <QLabel>
#include <QPushButton>
#include <QSignalBlocker>
#include <QSlider>
#include <QSpinBox>
#include <QVBoxLayout>
#include <cmath>

namespace swashtune::ui {
namespace {

constexpr int slider_steps = 1000;  // coarse control: 0.1 % of full opening

const ParameterSpec& spec(const char* key) { return *find_parameter(key); }

}  // namespace

ControlPanel::ControlPanel(QWidget* parent) : QWidget(parent) {
  auto* layout = new QVBoxLayout(this);

  // Load restriction: the needle valve.
  auto* load = new QGroupBox(tr("Load needle valve"), this);
  auto* load_form = new QFormLayout(load);
  load_form->setRowWrapPolicy(QFormLayout::WrapLongRows);  // a narrow dock puts labels above their fields
  opening_slider_ = new QSlider(Qt::Horizontal, load);
  opening_slider_->setRange(0, slider_steps);
  opening_slider_->setToolTip(tr("Coarse: drag to open or close the load valve"));
  opening_fine_ = new QDoubleSpinBox(load);
  opening_fine_->setRange(0.0, 100.0);
  opening_fine_->setDecimals(2);
  opening_fine_->setSingleStep(0.05);
  opening_fine_->setSuffix(tr(" % open"));
  opening_fine_->setToolTip(tr("Fine: type or step the opening"));
  load_form->addRow(tr("Opening"), opening_slider_);
  load_form->addRow(tr("Fine"), opening_fine_);
  ramp_ms_ = new QDoubleSpinBox(load);
  ramp_ms_->setRange(0.0, 10000.0);
  ramp_ms_->setDecimals(1);
  ramp_ms_->setValue(5.0);
  ramp_ms_->setSuffix(tr(" ms"));
  ramp_ms_->setToolTip(tr("How long a fast close or open takes"));
  load_form->addRow(tr("Fast ramp"), ramp_ms_);
  auto* fast = new QHBoxLayout;
  close_fast_ = new QPushButton(tr("Close fast"), load);
  open_fast_ = new QPushButton(tr("Open fast"), load);
  close_fast_->setToolTip(tr("Shut the load valve over the fast ramp (a slammed valve)"));
  open_fast_->setToolTip(tr("Open the load valve fully over the fast ramp"));
  fast->addWidget(close_fast_);
  fast->addWidget(open_fast_);
  load_form->addRow(fast);
  layout->addWidget(load);

  // Pump and compensator.
  auto* pump = new QGroupBox(tr("Pump and compensator"), this);
  auto* pump_form = new QFormLayout(pump);
  pump_form->setRowWrapPolicy(QFormLayout::WrapLongRows);
  auto* setting_row = new QHBoxLayout;
  setting_ = new QDoubleSpinBox(pump);
  setting_->setDecimals(1);
  setting_->setKeyboardTracking(false);  // act on Enter or focus change, not every keystroke
  setting_->setToolTip(tr("Compensator setting. Set it at no flow, with a gauge on the outlet."));
  setting_unit_ = new QLabel(pump);
  setting_row->addWidget(setting_, 1);
  setting_row->addWidget(setting_unit_);
  pump_form->addRow(tr("Setting"), setting_row);
  setting_->setObjectName("compensator-setting");
  speed_ = new QSpinBox(pump);
  speed_->setRange(0, static_cast<int>(spec("pump.speed").range.max));
  speed_->setSingleStep(50);
  speed_->setSuffix(tr(" rev/min"));
  speed_->setKeyboardTracking(false);
  pump_form->addRow(tr("Shaft speed"), speed_);
  layout->addWidget(pump);

  // Time and run control.
  auto* run = new QGroupBox(tr("Run"), this);
  auto* run_layout = new QVBoxLayout(run);
  time_scale_ = new QComboBox(run);
  for (int divisor : {1, 2, 5, 10, 20, 50, 100, 200, 500, 1000})
    time_scale_->addItem(divisor == 1 ? tr("real time") : tr("1/%1 slow motion").arg(divisor), 1.0 / divisor);
  time_scale_->setToolTip(tr("Simulated time per wall-clock time: the transients last milliseconds"));
  run_layout->addWidget(time_scale_);
  auto* buttons = new QGridLayout;
  run_ = new QPushButton(tr("Run"), run);
  run_->setCheckable(true);
  run_->setObjectName("run-button");
  step_ = new QPushButton(tr("Step"), run);
  step_->setToolTip(tr("Advance a short slice of simulated time, then hold"));
  reset_ = new QPushButton(tr("Reset"), run);
  reset_->setObjectName("reset-button");
  reset_->setToolTip(tr("Start again from the steady state at the present settings; the study's events play again"));
  buttons->addWidget(run_, 0, 0, 1, 2);  // the one pressed most, full width
  buttons->addWidget(step_, 1, 0);
  buttons->addWidget(reset_, 1, 1);
  run_layout->addLayout(buttons);
  layout->addWidget(run);
  layout->addStretch(1);

  connect(opening_slider_, &QSlider::valueChanged, this, [this](int v) {
    if (showing_) return;
    const QSignalBlocker block(opening_fine_);
    opening_fine_->setValue(100.0 * v / slider_steps);
    emit sliderMoved("load.opening", static_cast<double>(v) / slider_steps);
  });
  connect(opening_fine_, qOverload<double>(&QDoubleSpinBox::valueChanged), this, [this](double percent) {
    if (showing_) return;
    const QSignalBlocker block(opening_slider_);
    opening_slider_->setValue(static_cast<int>(std::lround(percent / 100.0 * slider_steps)));
    requestOpening(percent / 100.0, 0.0);
  });
  // ms / 1000: the double nearest the decimal (5 ms is 0.005 s, not 0.005000000000000001).
  connect(close_fast_, &QPushButton::clicked, this, [this] { requestOpening(0.0, ramp_ms_->value() / 1000.0); });
  connect(open_fast_, &QPushButton::clicked, this, [this] { requestOpening(1.0, ramp_ms_->value() / 1000.0); });
  connect(setting_, qOverload<double>(&QDoubleSpinBox::valueChanged), this, [this](double shown) {
    if (!showing_) emit changeRequested("compensator.setting", units_.pressure.to_si(shown), 0.0);
  });
  connect(speed_, qOverload<int>(&QSpinBox::valueChanged), this, [this](int rpm) {
    if (!showing_) emit changeRequested("pump.speed", rpm, 0.0);
  });
  connect(time_scale_, qOverload<int>(&QComboBox::currentIndexChanged), this,
          [this](int) { emit timeScaleChanged(timeScale()); });
  connect(run_, &QPushButton::toggled, this, [this](bool on) {
    run_->setText(on ? tr("Pause") : tr("Run"));
    if (!showing_) emit runRequested(on);
  });
  connect(step_, &QPushButton::clicked, this, &ControlPanel::stepRequested);
  connect(reset_, &QPushButton::clicked, this, &ControlPanel::resetRequested);

  setUnits(UnitSystem::metric);
  showParameters(default_parameters());
}

void ControlPanel::requestOpening(double opening, double ramp) {
  if (showing_) return;
  emit changeRequested("load.opening", opening, ramp);
}

void ControlPanel::setUnits(UnitSystem system) {
  const double setting_si = units_.pressure.to_si(setting_->value());
  units_ = DisplayUnits::make(system);
  showing_ = true;
  const Range& range = spec("compensator.setting").range;
  setting_->setRange(units_.pressure.to_display(range.min), units_.pressure.to_display(range.max));
  setting_->setSingleStep(system == UnitSystem::us ? 50.0 : 5.0);
  setting_->setValue(units_.pressure.to_display(setting_si));
  setting_unit_->setText(units_.pressure.unit);
  showing_ = false;
}

void ControlPanel::showParameters(const ModelParameters& p) {
  showing_ = true;
  opening_slider_->setValue(static_cast<int>(std::lround(p.opening * slider_steps)));
  opening_fine_->setValue(100.0 * p.opening);
  setting_->setValue(units_.pressure.to_display(p.setting));
  speed_->setValue(static_cast<int>(std::lround(p.speed)));
  showing_ = false;
}

void ControlPanel::setRunning(bool running) {
  showing_ = true;
  run_->setChecked(running);
  run_->setText(running ? tr("Pause") : tr("Run"));
  showing_ = false;
}

double ControlPanel::timeScale() const { return time_scale_->currentData().toDouble(); }

}  // namespace swashtune::ui
