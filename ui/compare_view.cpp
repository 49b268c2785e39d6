#include "compare_view.hpp"

#include <qcustomplot.h>

#include <QApplication>
#include <QComboBox>
#include <QHBoxLayout>
#include <QHeaderView>
#include <QLabel>
#include <QListWidget>
#include <QMenu>
#include <QPushButton>
#include <QSplitter>
#include <QTableWidget>
#include <QToolButton>
#include <QVBoxLayout>
#include <algorithm>
#include <deque>
#include <cmath>
#include <limits>

#include "plot_style.hpp"
#include "qt_text.hpp"
#include "trace_columns.hpp"

namespace swashtune::ui {
namespace {

// The designs' colours, in the order they are added (ours; the baseline is drawn thicker).
const QRgb kDesignColours[] = {0x1f5f8b, 0xc2410c, 0x2a9d8f, 0x7b3fa0, 0xb58a12, 0x9e2a2b, 0x3a7d44, 0x5c677d};

const double nan_value = std::numeric_limits<double>::quiet_NaN();

// One row of the table: a figure for every design, or texts where a figure is not a number.
struct Row {
  QString label;
  QString unit;      // of the shown numbers ("bar", "ms", "%", "dB", ...)
  int decimals = 1;  // shown
  bool heading = false;
  std::vector<double> values;  // NaN: none
  std::vector<QString> texts;  // overrides the number when not empty
  std::vector<QString> tips;
};

}  // namespace

CompareView::CompareView(QWidget* parent) : QWidget(parent) {
  setObjectName("compare-view");
  auto* layout = new QVBoxLayout(this);
  layout->setContentsMargins(4, 4, 4, 4);

  auto* bar = new QHBoxLayout;
  add_opened_ = new QPushButton(tr("+ As opened"), this);
  add_opened_->setToolTip(tr("The study with the parameters of its file"));
  add_present_ = new QPushButton(tr("+ As edited"), this);
  add_present_->setToolTip(tr("The study with every parameter as it is set now"));
  add_fault_ = new QToolButton(this);
  add_fault_->setText(tr("+ Fault"));
  add_fault_->setToolTip(tr("The design as edited with one fault, at the severity of its box in the Troubleshooting tab"));
  add_fault_->setPopupMode(QToolButton::InstantPopup);
  auto* faults = new QMenu(add_fault_);
  for (const ParameterSpec& spec : parameter_registry()) {
    if (spec.key.substr(0, 7) != "faults.") continue;
    const QString key = qs(spec.key);
    QAction* a = faults->addAction(key.mid(7).replace('_', ' '));
    a->setToolTip(qs(spec.meaning));
    a->setObjectName(key);
    connect(a, &QAction::triggered, this, [this, key] { emit designRequested(Source::fault, key); });
  }
  add_fault_->setMenu(faults);
  add_recording_ = new QPushButton(tr("+ Recording"), this);
  add_recording_->setToolTip(tr("The recording loaded in the Troubleshooting tab"));
  add_recording_->setEnabled(false);
  remove_ = new QPushButton(tr("Remove"), this);
  remove_->setToolTip(tr("Remove the design selected in the list"));
  baseline_box_ = new QComboBox(this);
  baseline_box_->setObjectName("baseline-box");
  baseline_box_->setToolTip(tr("The design the others are compared with"));
  baseline_box_->setSizeAdjustPolicy(QComboBox::AdjustToMinimumContentsLengthWithIcon);
  baseline_box_->setMinimumContentsLength(8);
  for (QWidget* w : std::initializer_list<QWidget*>{add_opened_, add_present_, add_fault_, add_recording_, remove_})
    bar->addWidget(w);
  bar->addStretch(1);
  layout->addLayout(bar);
  connect(add_opened_, &QPushButton::clicked, this, [this] { emit designRequested(Source::opened, QString()); });
  connect(add_present_, &QPushButton::clicked, this, [this] { emit designRequested(Source::present, QString()); });
  connect(add_recording_, &QPushButton::clicked, this, [this] { emit designRequested(Source::recording, QString()); });
  connect(remove_, &QPushButton::clicked, this, [this] {
    if (list_->currentRow() >= 0) removeDesign(list_->currentRow());
  });
  connect(baseline_box_, qOverload<int>(&QComboBox::activated), this, [this](int i) { setBaseline(i); });

  auto* split = new QSplitter(Qt::Vertical, this);
  auto* top = new QSplitter(Qt::Horizontal, split);
  auto* side = new QWidget(top);
  auto* side_layout = new QVBoxLayout(side);
  side_layout->setContentsMargins(0, 0, 0, 0);
  list_ = new QListWidget(side);
  list_->setObjectName("design-list");
  list_->setToolTip(tr("Untick a design to hide its curves; double-click to rename it"));
  list_->setMinimumWidth(120);
  side_layout->addWidget(list_, 1);
  side_layout->addWidget(new QLabel(tr("Baseline:"), side));
  side_layout->addWidget(baseline_box_);
  auto* charts = new QWidget(top);
  auto* charts_layout = new QVBoxLayout(charts);
  charts_layout->setContentsMargins(0, 0, 0, 0);
  pressure_plot_ = new QCustomPlot(charts);
  swash_plot_ = new QCustomPlot(charts);
  pressure_plot_->setObjectName("compare-pressure");
  swash_plot_->setObjectName("compare-swash");
  for (QCustomPlot* p : {pressure_plot_, swash_plot_}) {
    p->setMinimumHeight(90);
    p->setInteractions(QCP::iRangeDrag | QCP::iRangeZoom);
    p->axisRect()->setRangeZoom(Qt::Horizontal);
    p->axisRect()->setRangeDrag(Qt::Horizontal);
    charts_layout->addWidget(p, 1);
    connect(p->xAxis, qOverload<const QCPRange&>(&QCPAxis::rangeChanged), this, [this, p](const QCPRange& r) {
      QCustomPlot* other = p == pressure_plot_ ? swash_plot_ : pressure_plot_;
      if (other->xAxis->range() != r) {
        other->xAxis->setRange(r);
        other->replot(QCustomPlot::rpQueuedReplot);
      }
    });
  }
  // The legend names the designs, in a row of its own above the charts.
  pressure_plot_->axisRect()->insetLayout()->take(pressure_plot_->legend);
  pressure_plot_->plotLayout()->insertRow(0);
  pressure_plot_->plotLayout()->addElement(0, 0, pressure_plot_->legend);
  pressure_plot_->plotLayout()->setRowStretchFactor(0, 0.001);
  pressure_plot_->legend->setFillOrder(QCPLegend::foColumnsFirst);
  pressure_plot_->legend->setWrap(2);
  pressure_plot_->legend->setVisible(true);
  pressure_plot_->legend->setBorderPen(Qt::NoPen);
  pressure_plot_->legend->setBrush(Qt::NoBrush);
  swash_plot_->legend->setVisible(false);
  pressure_plot_->installEventFilter(this);
  top->addWidget(charts);
  top->setStretchFactor(0, 0);
  top->setStretchFactor(1, 1);
  top->setSizes({170, 700});
  auto* bottom = new QWidget(split);
  auto* bottom_layout = new QVBoxLayout(bottom);
  bottom_layout->setContentsMargins(0, 0, 0, 0);
  table_ = new QTableWidget(bottom);
  table_->setObjectName("compare-table");
  table_->setEditTriggers(QAbstractItemView::NoEditTriggers);
  table_->setSelectionMode(QAbstractItemView::NoSelection);
  table_->verticalHeader()->setDefaultSectionSize(table_->fontMetrics().height() + 6);
  table_->horizontalHeader()->setSectionResizeMode(QHeaderView::ResizeToContents);
  table_->verticalHeader()->setSectionResizeMode(QHeaderView::Fixed);
  note_ = new QLabel(bottom);
  note_->setWordWrap(true);
  note_->setObjectName("compare-note");
  bottom_layout->addWidget(table_, 1);
  bottom_layout->addWidget(note_);
  split->addWidget(top);
  split->addWidget(bottom);
  split->setStretchFactor(0, 1);
  split->setStretchFactor(1, 1);
  layout->addWidget(split, 1);

  connect(list_, &QListWidget::itemChanged, this, [this](QListWidgetItem* item) {
    const int i = list_->row(item);
    if (i < 0 || i >= static_cast<int>(designs_.size())) return;
    if (item->text() != designs_[i].name && !item->text().trimmed().isEmpty()) {
      designs_[i].name = item->text().trimmed();
      refillBaselines();
      refillTable();
    }
    redrawCharts();
  });
  setUnits(UnitSystem::metric);
  rebuild();
}

CompareView::~CompareView() = default;

bool CompareView::eventFilter(QObject* watched, QEvent* event) {
  // As many legend entries on a line as the chart's width takes.
  if (watched == pressure_plot_ && event->type() == QEvent::Resize) {
    const int wrap = std::clamp(pressure_plot_->width() / 240, 1, 6);
    if (pressure_plot_->legend->wrap() != wrap) {
      pressure_plot_->legend->setWrap(wrap);
      pressure_plot_->replot(QCustomPlot::rpQueuedReplot);
    }
  }
  return QWidget::eventFilter(watched, event);
}

void CompareView::setUnits(UnitSystem system) {
  units_ = DisplayUnits::make(system);
  pressure_plot_->yAxis->setLabel(tr("pressure [%1]").arg(units_.pressure.unit));
  swash_plot_->yAxis->setLabel(tr("swash [%1]").arg(units_.angle.unit));
  swash_plot_->xAxis->setLabel(tr("time [s]"));
  const QPalette pal = palette();
  for (QCustomPlot* p : {pressure_plot_, swash_plot_}) {
    p->setBackground(pal.brush(QPalette::Window));
    p->axisRect()->setBackground(pal.brush(QPalette::Base));
    for (QCPAxis* a : p->axisRect()->axes()) style_axis(a, pal, font());
  }
  pressure_plot_->legend->setTextColor(pal.color(QPalette::WindowText));
  pressure_plot_->legend->setFont(font());
  redrawCharts();
  refillTable();
}

void CompareView::setStudy(const Scenario& study) {
  study_ = study;
  clear();
}

QColor CompareView::nextColour() const {
  return QColor(kDesignColours[designs_.size() % std::size(kDesignColours)]);
}

bool CompareView::addDesign(const QString& name, const Scenario& design, Source source) {
  Design d;
  d.name = name;
  d.source = source;
  d.scenario = study_;
  d.scenario.parameters = design.parameters;  // the same events and settings for every design
  d.colour = nextColour();
  QApplication::setOverrideCursor(Qt::WaitCursor);
  try {
    d.run = run_scenario(d.scenario);
    d.metrics = event_metrics(d.scenario, *d.run);
    ModelParameters no_flow = d.scenario.parameters;
    no_flow.opening = 0.0;
    d.no_flow = analyse_stability(no_flow, d.scenario.settings);
  } catch (const std::exception& e) {
    QApplication::restoreOverrideCursor();
    message_ = tr("%1 could not be run: %2").arg(name, QString::fromUtf8(e.what()));
    note_->setText(message_);
    return false;
  }
  QApplication::restoreOverrideCursor();
  designs_.push_back(std::move(d));
  message_.clear();
  rebuild();
  return true;
}

bool CompareView::addRecording(const QString& name, const FieldTrace& recording) {
  Design d;
  d.name = name;
  d.source = Source::recording;
  d.scenario = study_;
  d.recording = recording;
  d.colour = nextColour();
  designs_.push_back(std::move(d));
  rebuild();
  return true;
}

void CompareView::removeDesign(int index) {
  if (index < 0 || index >= static_cast<int>(designs_.size())) return;
  designs_.erase(designs_.begin() + index);
  if (baseline_ >= static_cast<int>(designs_.size())) baseline_ = 0;
  else if (index < baseline_) --baseline_;
  rebuild();
}

void CompareView::clear() {
  designs_.clear();
  baseline_ = 0;
  rebuild();
}

void CompareView::setBaseline(int index) {
  if (index < 0 || index >= static_cast<int>(designs_.size())) return;
  baseline_ = index;
  refillBaselines();
  redrawCharts();
  refillTable();
}

void CompareView::setRecordingAvailable(bool available) { add_recording_->setEnabled(available); }

int CompareView::designCount() const { return static_cast<int>(designs_.size()); }
QString CompareView::designName(int index) const { return designs_.at(index).name; }
int CompareView::baseline() const { return baseline_; }
QString CompareView::lastMessage() const { return message_; }
QList<QCustomPlot*> CompareView::plots() const { return {pressure_plot_, swash_plot_}; }

void CompareView::rebuild() {
  const QSignalBlocker block(list_);
  list_->clear();
  for (const Design& d : designs_) {
    auto* item = new QListWidgetItem(d.name, list_);
    item->setFlags(item->flags() | Qt::ItemIsUserCheckable | Qt::ItemIsEditable);
    item->setCheckState(Qt::Checked);
    QPixmap swatch(12, 12);
    swatch.fill(d.colour);
    item->setIcon(QIcon(swatch));
  }
  remove_->setEnabled(!designs_.empty());
  refillBaselines();
  redrawCharts();
  refillTable();
}

void CompareView::refillBaselines() {
  const QSignalBlocker block(baseline_box_);
  baseline_box_->clear();
  for (const Design& d : designs_) baseline_box_->addItem(d.name);
  baseline_box_->setCurrentIndex(designs_.empty() ? -1 : baseline_);
  baseline_box_->setEnabled(designs_.size() > 1);
}

void CompareView::redrawCharts() {
  for (QCustomPlot* p : {pressure_plot_, swash_plot_}) p->clearGraphs();
  const SampleReader pressure = column_reader("discharge_pressure");
  const SampleReader swash = column_reader("swash_angle");
  for (std::size_t i = 0; i < designs_.size(); ++i) {
    const Design& d = designs_[i];
    const bool shown = i < static_cast<std::size_t>(list_->count()) && list_->item(static_cast<int>(i))->checkState() == Qt::Checked;
    QPen pen(d.colour, static_cast<int>(i) == baseline_ ? 2.6 : 1.6);
    if (d.source == Source::recording) pen.setStyle(Qt::DotLine);
    QCPGraph* gp = pressure_plot_->addGraph();
    gp->setPen(pen);
    gp->setName(static_cast<int>(i) == baseline_ ? d.name + tr(" (baseline)") : d.name);
    gp->setVisible(shown);
    if (!shown) gp->removeFromLegend();
    if (d.run) {
      QCPGraph* gs = swash_plot_->addGraph();
      gs->setPen(pen);
      gs->setVisible(shown);
      gs->removeFromLegend();
      QVector<QCPGraphData> p, a;
      for (const Sample& s : d.run->trace) {
        p.append({s.time, units_.pressure.to_display(pressure(s))});
        a.append({s.time, units_.angle.to_display(swash(s))});
      }
      gp->data()->set(p, true);
      gs->data()->set(a, true);
    } else if (d.recording) {
      QVector<QCPGraphData> p;
      for (std::size_t k = 0; k < d.recording->time.size(); ++k)
        p.append({d.recording->time[k], units_.pressure.to_display(d.recording->pressure[k])});
      gp->data()->set(p, true);
    }
  }
  for (QCustomPlot* p : {pressure_plot_, swash_plot_}) {
    p->rescaleAxes(true);
    p->xAxis->setRange(0.0, std::max(study_.settings.duration, 1e-3));
    const QCPRange y = p->yAxis->range();
    p->yAxis->setRange(y.lower - 0.06 * y.size() - 1e-9, y.upper + 0.06 * y.size() + 1e-9);
    p->replot(QCustomPlot::rpQueuedReplot);
  }
}

void CompareView::refillTable() {
  const int n = static_cast<int>(designs_.size());
  std::deque<Row> rows;  // a deque: the references to rows stay valid while more are added
  auto row = [&](const QString& label, const QString& unit, int decimals) -> Row& {
    rows.push_back(Row{label, unit, decimals, false, std::vector<double>(n, nan_value), std::vector<QString>(n),
                       std::vector<QString>(n)});
    return rows.back();
  };
  const double ms = 1e3;
  const int events = static_cast<int>(study_.events.size());
  // The direction the swash takes in each window (by the first design run): off or on stroke.
  std::vector<int> direction(events, 0);
  for (const Design& d : designs_)
    if (d.run) {
      for (int e = 0; e < events && e < static_cast<int>(d.run->windows.size()); ++e) {
        const double change = d.run->windows[e].final_angle() - d.run->windows[e].initial_angle();
        direction[e] = change < 0 ? -1 : change > 0 ? 1 : 0;
      }
      break;
    }
  Row& peak = row(tr("peak pressure over the run"), units_.pressure.unit, 1);
  for (int i = 0; i < n; ++i) {
    const Design& d = designs_[i];
    if (d.run) peak.values[i] = units_.pressure.to_display(d.run->peak_discharge_pressure);
    if (d.recording) peak.values[i] = units_.pressure.to_display(*std::max_element(d.recording->pressure.begin(), d.recording->pressure.end()));
  }
  for (int e = 0; e < events; ++e) {
    const Event& ev = study_.events[e];
    const ParameterSpec* spec = find_parameter(ev.target);
    const DisplayQuantity q = spec ? parameter_display(*spec, units_.system) : DisplayQuantity{QString(), 1.0};
    Row& head = row(tr("event %1 at %2 s: %3 to %4%5").arg(e + 1).arg(ev.at).arg(qs(ev.target))
                        .arg(q.to_display(ev.to), 0, 'g', 4).arg(q.unit.isEmpty() ? QString() : " " + q.unit),
                    QString(), 0);
    head.heading = true;
    Row& wpeak = row(tr("  peak"), units_.pressure.unit, 1);
    Row& over = row(tr("  overshoot"), QStringLiteral("%"), 1);
    Row& under = row(tr("  undershoot"), QStringLiteral("%"), 1);
    Row& settle = row(tr("  settling"), QStringLiteral("ms"), 1);
    Row& stroke = row(direction[e] < 0 ? tr("  off-stroke time (90 %)") : direction[e] > 0 ? tr("  on-stroke time (90 %)")
                                                                                         : tr("  swash response (90 %)"),
                      QStringLiteral("ms"), 1);
    Row& travel = row(tr("  swash travel (10-90 %)"), QStringLiteral("ms"), 1);
    Row& osc = row(tr("  oscillation"), QStringLiteral("Hz"), 0);
    for (int i = 0; i < n; ++i) {
      const Design& d = designs_[i];
      if (d.run && e < static_cast<int>(d.metrics.size())) {
        const EventMetrics& m = d.metrics[e];
        wpeak.values[i] = units_.pressure.to_display(m.peak_discharge_pressure);
        // A rise has an overshoot, a fall an undershoot (interfaces.md, event metrics v2).
        if (m.overshoot_percent) over.values[i] = *m.overshoot_percent;
        if (m.undershoot_percent) under.values[i] = *m.undershoot_percent;
        over.tips[i] = tr("the swing past the new level, %% of the step");
        under.tips[i] = tr("the swing below the new level, %% of the step");
        if (!m.overshoot_percent && !m.undershoot_percent && !m.note.empty())
          over.texts[i] = under.texts[i] = QString::fromUtf8(m.note.c_str());
        if (m.settling_time) settle.values[i] = *m.settling_time * ms;
        else settle.texts[i] = QString::fromUtf8(m.note.empty() ? "\u2013" : m.note.c_str());
        if (m.swash_response_time) stroke.values[i] = *m.swash_response_time * ms;
        if (m.swash_travel_time) travel.values[i] = *m.swash_travel_time * ms;
        const OscillationReport& o = m.oscillation;
        osc.texts[i] = QString::fromUtf8(to_string(o.kind));
        if (o.kind != OscillationKind::settled) {
          osc.values[i] = o.frequency_hz;
          osc.texts[i] += tr(" at %1 Hz").arg(o.frequency_hz, 0, 'g', 4);
        }
      } else if (d.recording) {
        // What a pressure recording can tell: the peak and the oscillation in the window.
        const double from = ev.at, to = e + 1 < events ? study_.events[e + 1].at : study_.settings.duration;
        const auto& t = d.recording->time;
        double highest = -std::numeric_limits<double>::infinity();
        int inside = 0;
        for (std::size_t k = 0; k < t.size(); ++k)
          if (t[k] >= from && t[k] <= to) {
            highest = std::max(highest, d.recording->pressure[k]);
            ++inside;
          }
        if (inside > 0) wpeak.values[i] = units_.pressure.to_display(highest);
        for (Row* r : {&over, &under, &settle, &stroke, &travel}) r->texts[i] = tr("not recorded");
        if (inside >= 16) {
          try {
            const OscillationReport o = analyse_oscillation(t, d.recording->pressure, from, to);
            osc.texts[i] = QString::fromUtf8(to_string(o.kind));
            if (o.kind != OscillationKind::settled) {
              osc.values[i] = o.frequency_hz;
              osc.texts[i] += tr(" at %1 Hz").arg(o.frequency_hz, 0, 'g', 4);
            }
          } catch (const std::exception&) {
            osc.texts[i] = tr("too few samples");
          }
        } else {
          osc.texts[i] = inside ? tr("too few samples") : tr("not recorded");
        }
      }
    }
  }
  Row& margins_head = row(tr("the loop at no flow (outlet blocked)"), QString(), 0);
  margins_head.heading = true;
  Row& gm = row(tr("  gain margin"), QStringLiteral("dB"), 2);
  Row& pm = row(tr("  phase margin"), QStringLiteral("deg"), 1);
  Row& mm = row(tr("  modulus margin"), QString(), 3);
  Row& dom = row(tr("  dominant mode"), QStringLiteral("Hz"), 1);
  for (int i = 0; i < n; ++i) {
    const Design& d = designs_[i];
    if (!d.no_flow) {
      for (Row* r : {&gm, &pm, &mm, &dom}) r->texts[i] = tr("not a model");
      continue;
    }
    const StabilityReport& s = *d.no_flow;
    if (s.margins.gain_margin_db) gm.values[i] = *s.margins.gain_margin_db;
    if (s.margins.phase_margin_deg) pm.values[i] = *s.margins.phase_margin_deg;
    if (s.margins.modulus_margin) mm.values[i] = *s.margins.modulus_margin;
    if (s.dominant) {
      dom.values[i] = s.dominant->damped_frequency_hz;
      dom.tips[i] = tr("damping ratio %1").arg(s.dominant->damping_ratio, 0, 'f', 4);
    }
    if (!s.margins_apply)
      for (Row* r : {&gm, &pm, &mm}) r->tips[i] = tr("does not apply: %1").arg(QString::fromStdString(s.note));
  }

  // Into the table: numbers with the difference to the baseline.
  table_->clear();
  table_->setRowCount(static_cast<int>(rows.size()));
  table_->setColumnCount(n);
  QStringList headers;
  for (int i = 0; i < n; ++i) headers << (i == baseline_ ? designs_[i].name + tr("\n(baseline)") : designs_[i].name);
  table_->setHorizontalHeaderLabels(headers);
  QStringList labels;
  for (const Row& r : rows) labels << (r.unit.isEmpty() || r.heading ? r.label : QStringLiteral("%1 [%2]").arg(r.label, r.unit));
  table_->setVerticalHeaderLabels(labels);
  const QColor caution = for_background(QColor(0xb35c00), is_dark(palette()));
  for (int r = 0; r < static_cast<int>(rows.size()); ++r) {
    const Row& row_data = rows[r];
    if (row_data.heading) {
      // With no design there is no cell to hold the item: QTableWidget would
      // not take it, and it would leak.
      if (n == 0) continue;
      if (n > 1) table_->setSpan(r, 0, 1, n);
      auto* item = new QTableWidgetItem();
      item->setBackground(palette().brush(QPalette::AlternateBase));
      table_->setItem(r, 0, item);
      QFont f = table_->verticalHeader()->font();
      f.setBold(true);
      if (auto* header = table_->verticalHeaderItem(r)) header->setFont(f);
      continue;
    }
    const double base = n > 0 ? row_data.values[baseline_] : nan_value;
    for (int i = 0; i < n; ++i) {
      const double v = row_data.values[i];
      QString text = row_data.texts[i];
      if (text.isEmpty()) text = std::isfinite(v) ? QString::number(v, 'f', row_data.decimals) : QStringLiteral("\u2013");
      if (i != baseline_ && std::isfinite(v) && std::isfinite(base) && row_data.texts[i].isEmpty()) {
        const double diff = v - base;
        text += QStringLiteral("  (%1%2)").arg(diff >= 0 ? "+" : "\u2212").arg(std::abs(diff), 0, 'f', row_data.decimals);
      }
      auto* item = new QTableWidgetItem(text);
      item->setTextAlignment(Qt::AlignRight | Qt::AlignVCenter);
      if (!row_data.tips[i].isEmpty()) item->setToolTip(row_data.tips[i]);
      if (row_data.tips[i].startsWith(tr("does not apply"))) item->setForeground(caution);
      if (i == baseline_) {
        QFont f = item->font();
        f.setBold(true);
        item->setFont(f);
      }
      table_->setItem(r, i, item);
    }
  }
  const bool any_not_applying = std::any_of(designs_.begin(), designs_.end(), [](const Design& d) {
    return d.no_flow && !d.no_flow->margins_apply;
  });
  if (message_.isEmpty())
    note_->setText(designs_.empty()
                       ? tr("Add designs to compare them on the study's events: the study as opened, the design as "
                            "edited now, fault variants, a recording.")
                       : tr("Every design runs the study's %1 events. Differences in brackets are to the baseline. "
                            "Margins are of the loop at no flow%2.")
                             .arg(events)
                             .arg(any_not_applying ? tr("; figures in amber do not apply as stability margins "
                                                        "(the tooltip says why)")
                                                   : QString()));
}

int CompareView::rowOf(const QString& label, int occurrence) const {
  for (int r = 0; r < table_->rowCount(); ++r)
    if (auto* h = table_->verticalHeaderItem(r); h && h->text().trimmed().startsWith(label) && occurrence-- == 0)
      return r;
  return -1;
}

QString CompareView::cell(const QString& row_label, int design, int occurrence) const {
  const int r = rowOf(row_label, occurrence);
  if (r < 0 || design < 0 || design >= table_->columnCount()) return QString();
  const QTableWidgetItem* item = table_->item(r, design);
  return item ? item->text() : QString();
}

}  // namespace swashtune::ui
