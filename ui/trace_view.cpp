#include "trace_view.hpp"

#include <qcustomplot.h>

#include <QEvent>
#include <QGridLayout>
#include <QLabel>
#include <QMouseEvent>
#include <QTextDocument>
#include <QVBoxLayout>
#include <QWheelEvent>
#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <optional>

#include "plot_style.hpp"
#include "trace_columns.hpp"

namespace swashtune::ui {
namespace {

enum class Quantity { pressure, flow, angle, length };

struct TraceSpec {
  const char* legend;   // in the legend and the cursor read-out
  const char* readout;  // in the row of present values (the unit says which quantity)
  int chart;
  Quantity quantity;
  const char* column;  // core's trace column
  QRgb colour;         // as drawn on a light background; lifted on a dark one
  bool reference;      // a set value drawn as a thin dashed line (the compensator setting)
};

// Pressures warm, flows cool, the two mechanical positions in their own hues,
// so that a read-out's swatch finds its trace at a glance.
const TraceSpec kTraces[] = {
    {"discharge", "discharge", 0, Quantity::pressure, "discharge_pressure", 0xd9480f, false},
    {"control", "control", 0, Quantity::pressure, "control_pressure", 0x7048e8, false},
    {"setting", "setting", 0, Quantity::pressure, "compensator_setting", 0x5c5f66, true},
    {"pump", "pump flow", 1, Quantity::flow, "pump_flow", 0x1971c2, false},
    {"load", "load flow", 1, Quantity::flow, "load_flow", 0x2f9e44, false},
    {"swash angle", "swash angle", 2, Quantity::angle, "swash_angle", 0xc2255c, false},
    {"spool position", "spool", 3, Quantity::length, "spool_position", 0x0c8599, false},
    // Shown only for a distributed line (setValveEndShown).
    {"valve end", "valve end", 0, Quantity::pressure, "valve_end_pressure", 0xe67700, false},
};
constexpr int kValveEndTrace = 7;
constexpr int kTraceCount = static_cast<int>(std::size(kTraces));

struct ChartSpec {
  const char* axis_name;  // short: the label has to fit a short chart
  Quantity quantity;
  double min_span_si;  // the smallest value span shown, so a flat trace is not blown up into noise
  double widest_si;    // a generous largest magnitude, to size the read-outs
};
const ChartSpec kCharts[] = {
    {"pressure", Quantity::pressure, 2e5, 500e5},
    {"flow", Quantity::flow, 2.0 / 60000.0, 500.0 / 60000.0},
    {"swash", Quantity::angle, 0.5 * 3.14159265358979 / 180.0, 30.0 * 3.14159265358979 / 180.0},
    {"spool", Quantity::length, 2e-5, 10e-3},
};
constexpr int kChartCount = static_cast<int>(std::size(kCharts));

constexpr std::size_t kMaxSamples = 200000;
constexpr double kWallWindow = 5.0;  // s of wall time in view while following

const QString kFollowingText = QStringLiteral("following the run");
const QString kHeldText = QStringLiteral("held: double-click to follow");

QString format_shown(double shown, const QString& unit) {
  // Enough digits for each unit's usual magnitude; SI falls back to %.4g.
  int decimals = -1;
  if (unit == QLatin1String("bar"))
    decimals = 2;
  else if (unit == QLatin1String("psi"))
    decimals = 1;
  else if (unit == QLatin1String("L/min"))
    decimals = 2;
  else if (unit == QLatin1String("gpm"))
    decimals = 3;
  else if (unit == QLatin1String("deg"))
    decimals = 3;
  else if (unit == QLatin1String("mm"))
    decimals = 4;
  else if (unit == QLatin1String("in"))
    decimals = 5;
  if (decimals < 0) return QString::asprintf("%.4g", shown);
  return QString::number(shown, 'f', decimals);
}

QVector<qreal> overlay_dashes(int index) {
  static const QVector<qreal> patterns[] = {{6, 3}, {2, 2}, {8, 3, 2, 3}, {3, 3, 1, 3}};
  return patterns[index % 4];
}

}  // namespace

// Impl is a QObject so that every connection and event filter made with it as
// context dies with it, before the child plots are torn down.
struct TraceView::Impl : QObject {
  struct Overlay {
    QString name;
    std::vector<double> time;
    std::array<std::vector<double>, kTraceCount> si;  // stored units; NaN where not known
    std::array<QCPGraph*, kTraceCount> graphs{};      // nullptr: not drawn
  };

  TraceView* view;
  DisplayUnits units = DisplayUnits::make(UnitSystem::metric);
  std::array<SampleReader, kTraceCount> readers{};
  std::vector<Sample> samples;  // retained live samples are [head, end)
  std::size_t head = 0;
  double window = kWallWindow;
  double history = 60.0;
  bool following = true;
  int programmatic = 0;  // > 0 while this code sets ranges, so they are not taken for the user's
  std::optional<Sample> present;

  QWidget* readoutRow = nullptr;
  QGridLayout* readoutGrid = nullptr;
  int readoutColumns = 0;  // read-outs per line, whatever fits the width
  std::array<QLabel*, kTraceCount> readouts{};
  QLabel* status = nullptr;
  QList<QCustomPlot*> plots;
  std::array<QCPGraph*, kTraceCount> live{};
  std::vector<Overlay> overlays;
  std::array<QCPItemStraightLine*, kChartCount> cursorLine{};
  std::array<QCPItemText*, kChartCount> cursorText{};
  std::optional<double> cursorTime;
  int leftMargin = 0;  // shared by the charts so their value axes line up
  bool legendShown = false;
  bool valveEndShown = false;

  explicit Impl(TraceView* v) : view(v) {
    for (int k = 0; k < kTraceCount; ++k) readers[k] = column_reader(kTraces[k].column);
  }

  std::size_t liveCount() const { return samples.size() - head; }
  std::vector<Sample>::const_iterator liveBegin() const { return samples.begin() + static_cast<long>(head); }

  const DisplayQuantity& quantity(Quantity q) const {
    switch (q) {
      case Quantity::pressure:
        return units.pressure;
      case Quantity::flow:
        return units.flow;
      case Quantity::angle:
        return units.angle;
      case Quantity::length:
        return units.length;
    }
    return units.pressure;
  }
  double si(int trace, const Sample& s) const {
    return readers[trace] ? readers[trace](s) : std::numeric_limits<double>::quiet_NaN();
  }
  double shown(int trace, const Sample& s) const { return quantity(kTraces[trace].quantity).to_display(si(trace, s)); }
  QColor traceColour(int trace) const {
    return for_background(QColor(kTraces[trace].colour), is_dark(view->palette()));
  }
  QColor overlayColour(int trace) const {
    const QPalette pal = view->palette();
    return blend(traceColour(trace), pal.color(QPalette::Base), is_dark(pal) ? 0.35 : 0.45);
  }
  QPen livePen(int trace) const {
    if (!kTraces[trace].reference) return QPen(traceColour(trace), 1.7);
    QPen pen(traceColour(trace), 1.3, Qt::DashLine);
    pen.setDashPattern({5, 4});
    return pen;
  }

  void build();
  void applyStyle();
  void relabel();
  void fillGraphs(const std::array<QCPGraph*, kTraceCount>& graphs, std::vector<Sample>::const_iterator first,
                  std::vector<Sample>::const_iterator last) const;
  void fillOverlay(const Overlay& o) const;
  void rebuildGraphs();
  void prune();
  void compact();
  void setTimeRange(const QCPRange& range);
  QCPRange allowed(QCPRange range) const;
  void applyFollowRange();
  void fitValueAxes(bool refit = false);
  void updateLegend();
  void updateReadouts();
  void updateStatus();
  void arrangeReadouts(bool force = false);
  std::optional<double> valueAt(int trace, double t) const;
  void showCursor(double t);
  void hideCursor();
  void replotCursor();
  void replotAll();
  void setLeftMargin(int pixels);
  void equaliseLeftMargins();
  void zoomAt(QCustomPlot* plot, QWheelEvent* event);
  void userRange(QCustomPlot* source, const QCPRange& range);
  void addOverlay(Overlay o);

  bool eventFilter(QObject* watched, QEvent* event) override {
    if (event->type() == QEvent::Leave && watched != view) hideCursor();
    if (event->type() == QEvent::Resize && watched == view) arrangeReadouts();
    if (event->type() == QEvent::Resize && watched != view) {
      // Tick counts follow the size so that small charts do not crowd.
      auto* plot = static_cast<QCustomPlot*>(watched);
      plot->yAxis->ticker()->setTickCount(std::clamp(plot->height() / 45, 2, 6));
      plot->xAxis->ticker()->setTickCount(std::clamp(plot->width() / 110, 2, 8));
    }
    if (watched == view && event->type() == QEvent::PaletteChange) applyStyle();
    if (watched == view && event->type() == QEvent::FontChange) {
      applyStyle();
      relabel();  // the read-outs' widths depend on the font
    }
    return false;
  }
};

void TraceView::Impl::build() {
  auto* layout = new QVBoxLayout(view);
  layout->setContentsMargins(4, 4, 4, 4);
  layout->setSpacing(0);

  readoutRow = new QWidget(view);
  // The row takes the width it is given and wraps to fit it (arrangeReadouts),
  // so it never forces a minimum width on the window.
  readoutRow->setSizePolicy(QSizePolicy::Ignored, QSizePolicy::Preferred);
  readoutGrid = new QGridLayout(readoutRow);
  readoutGrid->setContentsMargins(6, 2, 6, 6);
  readoutGrid->setHorizontalSpacing(14);
  readoutGrid->setVerticalSpacing(2);
  for (int k = 0; k < kTraceCount; ++k) {
    readouts[k] = new QLabel(readoutRow);
    readouts[k]->setTextFormat(Qt::RichText);
    readouts[k]->setObjectName(QStringLiteral("readout_%1").arg(k));
    readouts[k]->setToolTip(QStringLiteral("%1 now").arg(QString::fromUtf8(kTraces[k].legend)));
  }
  status = new QLabel(readoutRow);
  status->setAlignment(Qt::AlignRight | Qt::AlignVCenter);
  status->setToolTip(
      QStringLiteral("The wheel over a chart zooms the time axis at the cursor, dragging pans it; "
                     "either holds the view still. Double-click to follow the run again."));
  layout->addWidget(readoutRow);

  for (int c = 0; c < kChartCount; ++c) {
    auto* plot = new QCustomPlot(view);
    plot->setObjectName(QStringLiteral("trace_chart_%1").arg(c));
    plot->setMouseTracking(true);
    plot->setMinimumHeight(80);
    plot->setNoAntialiasingOnDrag(true);
    // Drag pans the time axis; the wheel is handled here, anchored at the cursor.
    plot->setInteractions(QCP::iRangeDrag);
    plot->axisRect()->setRangeDrag(Qt::Horizontal);  // time only; the value axis fits the data
    plot->addLayer(QStringLiteral("runs"), plot->layer(QStringLiteral("main")), QCustomPlot::limBelow);
    plot->xAxis2->setVisible(true);
    plot->yAxis2->setVisible(true);
    for (QCPAxis* a : {plot->xAxis2, plot->yAxis2}) {
      a->setTicks(false);
      a->setTickLabels(false);
    }
    plot->yAxis->ticker()->setTickCount(4);
    plot->xAxis->setTickLabels(c == kChartCount - 1);  // one shared time scale, labelled once
    plot->legend->setVisible(false);

    // The cursor lives on the buffered "overlay" layer so moving it redraws only that layer.
    auto* line = new QCPItemStraightLine(plot);
    line->setLayer(QStringLiteral("overlay"));
    for (QCPItemPosition* pos : {line->point1, line->point2}) {
      pos->setTypeX(QCPItemPosition::ptPlotCoords);
      pos->setTypeY(QCPItemPosition::ptAxisRectRatio);
    }
    line->point1->setCoords(0, 0);
    line->point2->setCoords(0, 1);
    line->setVisible(false);
    cursorLine[c] = line;
    auto* text = new QCPItemText(plot);
    text->setLayer(QStringLiteral("overlay"));
    text->position->setParentAnchor(line->point1);  // pixels from the top of the line
    text->position->setType(QCPItemPosition::ptAbsolute);
    text->setPadding(QMargins(5, 2, 5, 2));
    text->setVisible(false);
    cursorText[c] = text;

    layout->addWidget(plot, c == kChartCount - 1 ? 6 : 5);  // the last also carries the time labels
    plots.append(plot);
    plot->installEventFilter(this);

    connect(plot->xAxis, qOverload<const QCPRange&>(&QCPAxis::rangeChanged), this, [this, plot](const QCPRange& r) {
      if (programmatic > 0) return;
      userRange(plot, r);
    });
    connect(plot, &QCustomPlot::mouseWheel, this, [this, plot](QWheelEvent* e) { zoomAt(plot, e); });
    connect(plot, &QCustomPlot::mouseMove, this, [this, plot](QMouseEvent* e) {
      const QRect r = plot->axisRect()->rect();
      const double x = e->position().x();
      if (x < r.left() || x > r.right()) {
        hideCursor();
        return;
      }
      showCursor(plot->xAxis->pixelToCoord(x));
    });
    connect(plot, &QCustomPlot::mouseDoubleClick, this, [this](QMouseEvent*) { view->setFollowing(true); });
    connect(plot, &QCustomPlot::afterReplot, this, [this] { equaliseLeftMargins(); });
  }

  // The legend names the runs laid over the live traces. It sits in a row of
  // its own above the first chart, so it never covers ticks or data.
  QCustomPlot* first = plots.front();
  first->axisRect()->insetLayout()->take(first->legend);
  first->legend->setFillOrder(QCPLegend::foColumnsFirst);
  first->legend->setWrap(4);
  first->legend->setRowSpacing(0);
  first->legend->setColumnSpacing(12);
  first->legend->setMargins(QMargins(4, 2, 4, 2));

  for (int k = 0; k < kTraceCount; ++k) {
    QCustomPlot* plot = plots[kTraces[k].chart];
    live[k] = plot->addGraph();
    live[k]->setName(QString::fromUtf8(kTraces[k].legend));
    live[k]->setVisible(readers[k] != nullptr);
    if (kTraces[k].chart != 0 || kTraces[k].reference) live[k]->removeFromLegend();
  }
  live[kValveEndTrace]->setVisible(false);
  live[kValveEndTrace]->removeFromLegend();
  readouts[kValveEndTrace]->setVisible(false);
  view->installEventFilter(this);
  applyStyle();
  relabel();
  updateReadouts();
  updateStatus();
  applyFollowRange();
}

void TraceView::Impl::applyStyle() {
  const QPalette pal = view->palette();
  const QColor text = pal.color(QPalette::WindowText);
  const QColor base = pal.color(QPalette::Base);
  const QFont font = view->font();
  const QFontMetrics fm(font);
  for (QCustomPlot* plot : std::as_const(plots)) {
    plot->setBackground(pal.brush(QPalette::Window));
    plot->axisRect()->setBackground(QBrush(base));
    for (QCPAxis* a : plot->axisRect()->axes()) style_axis(a, pal, font);
    plot->legend->setBrush(Qt::NoBrush);
    plot->legend->setBorderPen(Qt::NoPen);
    plot->legend->setTextColor(text);
    plot->legend->setFont(font);
    plot->legend->setIconSize(22, fm.height() / 2 + 2);
  }
  setLeftMargin(fm.horizontalAdvance(QStringLiteral("-000.0")) + 2 * fm.height());  // refined after a replot
  for (int k = 0; k < kTraceCount; ++k) live[k]->setPen(livePen(k));
  for (std::size_t i = 0; i < overlays.size(); ++i) {
    for (int k = 0; k < kTraceCount; ++k) {
      if (!overlays[i].graphs[k]) continue;
      QPen pen(overlayColour(k), 1.5);
      pen.setDashPattern(overlay_dashes(static_cast<int>(i)));
      overlays[i].graphs[k]->setPen(pen);
    }
  }
  const QColor cursorColour = blend(text, base, 0.25);
  for (int c = 0; c < kChartCount; ++c) {
    cursorLine[c]->setPen(QPen(cursorColour, 1, Qt::DashLine));
    cursorText[c]->setColor(text);
    cursorText[c]->setFont(font);
    cursorText[c]->setBrush(QBrush(QColor(base.red(), base.green(), base.blue(), 225)));
    cursorText[c]->setPen(QPen(blend(base, text, 0.3), 1));
  }
  QPalette statusPal = status->palette();
  statusPal.setColor(QPalette::WindowText, blend(text, pal.color(QPalette::Window), 0.35));
  status->setPalette(statusPal);
  updateReadouts();
  replotAll();
}

void TraceView::Impl::relabel() {
  for (int c = 0; c < kChartCount; ++c) {
    plots[c]->yAxis->setLabel(
        QStringLiteral("%1 [%2]").arg(QString::fromUtf8(kCharts[c].axis_name), quantity(kCharts[c].quantity).unit));
  }
  plots.last()->xAxis->setLabel(QStringLiteral("time [s]"));
  // Keep each read-out as wide as its widest likely text so the row does not jitter.
  const QFontMetrics fm(view->font());
  for (int k = 0; k < kTraceCount; ++k) {
    const DisplayQuantity& q = quantity(kTraces[k].quantity);
    const QString widest = QStringLiteral("\u25a0 %1 %2 %3")
                               .arg(QString::fromUtf8(kTraces[k].readout),
                                    format_shown(-q.to_display(kCharts[kTraces[k].chart].widest_si), q.unit), q.unit);
    readouts[k]->setMinimumWidth(fm.horizontalAdvance(widest));
  }
  status->setMinimumWidth(std::max(fm.horizontalAdvance(kFollowingText), fm.horizontalAdvance(kHeldText)));
  arrangeReadouts(true);
}

void TraceView::Impl::fillGraphs(const std::array<QCPGraph*, kTraceCount>& graphs,
                                 std::vector<Sample>::const_iterator first,
                                 std::vector<Sample>::const_iterator last) const {
  const auto n = static_cast<int>(last - first);
  if (n <= 0) return;
  QVector<QCPGraphData> data(n);
  for (int k = 0; k < kTraceCount; ++k) {
    if (!graphs[k] || !readers[k]) continue;
    int i = 0;
    for (auto s = first; s != last; ++s, ++i) data[i] = QCPGraphData(s->time, shown(k, *s));
    graphs[k]->data()->add(data, true);  // sorted and after what is held: appended in place
  }
}

void TraceView::Impl::fillOverlay(const Overlay& o) const {
  for (int k = 0; k < kTraceCount; ++k) {
    QCPGraph* g = o.graphs[k];
    if (!g) continue;
    g->data()->clear();
    const DisplayQuantity& q = quantity(kTraces[k].quantity);
    QVector<QCPGraphData> data;
    data.reserve(static_cast<int>(o.time.size()));
    for (std::size_t i = 0; i < o.time.size(); ++i)
      if (std::isfinite(o.si[k][i])) data.append(QCPGraphData(o.time[i], q.to_display(o.si[k][i])));
    g->data()->add(data, true);
  }
}

void TraceView::Impl::rebuildGraphs() {
  for (QCPGraph* g : live) g->data()->clear();
  fillGraphs(live, liveBegin(), samples.cend());
  for (const Overlay& o : overlays) fillOverlay(o);
}

void TraceView::Impl::prune() {
  if (liveCount() == 0) return;
  const double keep_from = samples.back().time - history;
  auto first =
      std::lower_bound(liveBegin(), samples.cend(), keep_from, [](const Sample& s, double t) { return s.time < t; });
  std::size_t new_head = static_cast<std::size_t>(first - samples.cbegin());
  if (samples.size() - new_head > kMaxSamples) new_head = samples.size() - kMaxSamples;
  if (new_head == head) return;
  head = new_head;
  for (QCPGraph* g : live) g->data()->removeBefore(samples[head].time);
  // Dropping from the front of a vector is linear; do it only once half is stale.
  if (head > 4096 && 2 * head > samples.size()) compact();
}

void TraceView::Impl::compact() {
  if (head == 0) return;
  samples.erase(samples.begin(), samples.begin() + static_cast<long>(head));
  head = 0;
}

void TraceView::Impl::setTimeRange(const QCPRange& range) {
  ++programmatic;
  for (QCustomPlot* plot : std::as_const(plots)) plot->xAxis->setRange(range);
  --programmatic;
}

// No time before the start of the run, and no wider than the history kept
// (nor narrower than a microsecond).
QCPRange TraceView::Impl::allowed(QCPRange r) const {
  const double span = std::clamp(r.size(), 1e-6, std::max(history, window));
  if (r.size() != span) r = QCPRange(r.center() - span / 2, r.center() + span / 2);
  if (r.lower < 0.0) r = QCPRange(0.0, span);
  return r;
}

void TraceView::Impl::userRange(QCustomPlot* source, const QCPRange& range) {
  // The person zoomed or dragged this chart: hold still and bring the others along.
  view->setFollowing(false);
  const QCPRange r = allowed(range);
  ++programmatic;
  for (QCustomPlot* plot : std::as_const(plots))
    if (plot != source || r != range) plot->xAxis->setRange(r);
  --programmatic;
  fitValueAxes();
  replotCursor();
  replotAll();
}

void TraceView::Impl::zoomAt(QCustomPlot* plot, QWheelEvent* event) {
  const QRect rect = plot->axisRect()->rect();
  const double x = std::clamp(event->position().x(), double(rect.left()), double(rect.right()));
  const double steps = event->angleDelta().y() / 120.0;
  if (steps == 0.0) return;
  event->accept();
  // The time under the cursor stays under the cursor.
  const double anchor = plot->xAxis->pixelToCoord(x);
  const double factor = std::pow(0.85, steps);
  const QCPRange now = plot->xAxis->range();
  view->setFollowing(false);
  const QCPRange target =
      allowed(QCPRange(anchor + (now.lower - anchor) * factor, anchor + (now.upper - anchor) * factor));
  setTimeRange(target);
  fitValueAxes();
  if (cursorTime) showCursor(anchor);
  replotAll();
}

void TraceView::Impl::applyFollowRange() {
  // Until a window's worth has run the run starts at the left edge; after that
  // the newest sample sits at the right edge.
  const double first = liveCount() ? liveBegin()->time : 0.0;
  const double last = liveCount() ? samples.back().time : 0.0;
  const double upper = std::max(last, first + window);
  setTimeRange(QCPRange(std::max(0.0, upper - window), upper));
  fitValueAxes();
}

void TraceView::Impl::fitValueAxes(bool refit) {
  for (int c = 0; c < kChartCount; ++c) {
    QCustomPlot* plot = plots[c];
    const QCPRange keys = plot->xAxis->range();
    QCPRange data;
    bool any = false;
    for (int g = 0; g < plot->graphCount(); ++g) {
      if (!plot->graph(g)->visible()) continue;
      bool found = false;
      const QCPRange r = plot->graph(g)->getValueRange(found, QCP::sdBoth, keys);
      if (!found) continue;
      if (any)
        data.expand(r);
      else
        data = r;
      any = true;
    }
    if (!any) continue;  // nothing in view: keep the scale
    const double min_span = quantity(kCharts[c].quantity).to_display(kCharts[c].min_span_si);
    const double span = std::max(data.size(), min_span);
    const double pad = 0.08 * span;
    const QCPRange target(data.center() - span / 2 - pad, data.center() + span / 2 + pad);
    // Hold the present range while it still frames the data well, so the axis
    // does not twitch with every refresh.
    const QCPRange now = plot->yAxis->range();
    if (!refit && now.lower <= data.lower && now.upper >= data.upper && now.size() <= 1.6 * target.size()) continue;
    plot->yAxis->setRange(target);
  }
}

void TraceView::Impl::updateLegend() {
  // Shown only when there is something to tell apart: runs laid over the live ones.
  const bool wanted = !overlays.empty();
  QCustomPlot* first = plots.front();
  if (wanted == legendShown) return;
  legendShown = wanted;
  if (wanted) {
    first->plotLayout()->insertRow(0);
    first->plotLayout()->addElement(0, 0, first->legend);
    first->plotLayout()->setRowStretchFactor(0, 0.001);
    first->legend->setVisible(true);
  } else {
    first->legend->setVisible(false);
    first->plotLayout()->take(first->legend);
    first->plotLayout()->simplify();
  }
}

void TraceView::Impl::updateReadouts() {
  const Sample* now = present ? &*present : liveCount() ? &samples.back() : nullptr;
  for (int k = 0; k < kTraceCount; ++k) {
    const QString unit = quantity(kTraces[k].quantity).unit;
    const double v = now ? shown(k, *now) : std::numeric_limits<double>::quiet_NaN();
    const QString value = std::isfinite(v) ? format_shown(v, unit) : QStringLiteral("\u2013");
    readouts[k]->setText(QStringLiteral("<span style=\"color:%1\">\u25a0</span>&nbsp;%2&nbsp;<b>%3</b>&nbsp;%4")
                             .arg(traceColour(k).name(), QString::fromUtf8(kTraces[k].readout), value, unit));
  }
}

void TraceView::Impl::arrangeReadouts(bool force) {
  const int spacing = readoutGrid->horizontalSpacing();
  const QMargins m = readoutGrid->contentsMargins();
  auto needed = [&](int columns) {
    int width = m.left() + m.right();
    for (int c = 0; c < columns; ++c) {
      int widest = 0;
      for (int k = c; k < kTraceCount; k += columns) widest = std::max(widest, readouts[k]->minimumWidth());
      width += widest + spacing;
    }
    return width;
  };
  int columns = 1;
  for (int candidate : {kTraceCount, 4, 3, 2}) {
    if (needed(candidate) <= view->width()) {
      columns = candidate;
      break;
    }
  }
  if (columns == readoutColumns && !force) return;
  for (QLabel* l : readouts) readoutGrid->removeWidget(l);
  readoutGrid->removeWidget(status);
  for (int c = 0; c <= kTraceCount + 1; ++c) readoutGrid->setColumnStretch(c, 0);
  for (int k = 0; k < kTraceCount; ++k) readoutGrid->addWidget(readouts[k], k / columns, k % columns);
  readoutGrid->setColumnStretch(columns - 1, 1);
  // The follow/held note at the right end of the last line of read-outs.
  const int lastRow = (kTraceCount - 1) / columns;
  const int freeColumns = columns - 1 - (kTraceCount - 1) % columns;
  if (freeColumns > 0)
    readoutGrid->addWidget(status, lastRow, columns - freeColumns, 1, freeColumns);
  else
    readoutGrid->addWidget(status, lastRow + 1, 0, 1, columns);
  readoutColumns = columns;
}

void TraceView::Impl::updateStatus() { status->setText(following ? kFollowingText : kHeldText); }

std::optional<double> TraceView::Impl::valueAt(int trace, double t) const {
  if (liveCount() == 0 || t < liveBegin()->time || t > samples.back().time || !readers[trace]) return std::nullopt;
  auto after = std::lower_bound(liveBegin(), samples.cend(), t, [](const Sample& s, double x) { return s.time < x; });
  if (after == liveBegin()) return shown(trace, *after);
  const auto before = after - 1;
  const double dt = after->time - before->time;
  const double f = dt > 0.0 ? (t - before->time) / dt : 0.0;
  return shown(trace, *before) + f * (shown(trace, *after) - shown(trace, *before));
}

void TraceView::Impl::showCursor(double t) {
  cursorTime = t;
  for (int c = 0; c < kChartCount; ++c) {
    QStringList parts;
    if (c == 0) parts << QStringLiteral("t = %1 s").arg(QString::number(t, 'f', 4));
    for (int k = 0; k < kTraceCount; ++k) {
      if (kTraces[k].chart != c || !readers[k]) continue;
      const auto v = valueAt(k, t);
      const QString unit = quantity(kTraces[k].quantity).unit;
      parts << QStringLiteral("%1 %2 %3")
                   .arg(QString::fromUtf8(kTraces[k].legend), v ? format_shown(*v, unit) : QStringLiteral("\u2013"),
                        unit);
    }
    QCustomPlot* plot = plots[c];
    cursorLine[c]->point1->setCoords(t, 0);
    cursorLine[c]->point2->setCoords(t, 1);
    // The label sits beside the line, on whichever side has room.
    const double px = plot->xAxis->coordToPixel(t);
    const QRect r = plot->axisRect()->rect();
    const bool rightSide = px < r.left() + 0.6 * r.width();
    cursorText[c]->setText(parts.join(QStringLiteral("   ")));
    cursorText[c]->position->setCoords(rightSide ? 6 : -6, 6);
    cursorText[c]->setPositionAlignment(Qt::AlignTop | (rightSide ? Qt::AlignLeft : Qt::AlignRight));
    cursorLine[c]->setVisible(true);
    cursorText[c]->setVisible(true);
  }
  replotCursor();
}

void TraceView::Impl::hideCursor() {
  if (!cursorTime) return;
  cursorTime.reset();
  for (int c = 0; c < kChartCount; ++c) {
    cursorLine[c]->setVisible(false);
    cursorText[c]->setVisible(false);
  }
  replotCursor();
}

void TraceView::Impl::replotCursor() {
  for (QCustomPlot* plot : std::as_const(plots)) plot->layer(QStringLiteral("overlay"))->replot();
}

void TraceView::Impl::replotAll() {
  for (QCustomPlot* plot : std::as_const(plots)) plot->replot(QCustomPlot::rpQueuedReplot);
}

void TraceView::Impl::setLeftMargin(int pixels) {
  leftMargin = pixels;
  for (QCustomPlot* plot : std::as_const(plots)) {
    plot->axisRect()->setAutoMargins(QCP::msTop | QCP::msBottom);
    plot->axisRect()->setMargins(QMargins(pixels, 0, 18, 0));
  }
}

// Each chart is its own widget, so QCPMarginGroup cannot align them: after a
// replot, measure the widest value-axis labels of all four and give every
// chart that margin (one more queued replot when it changed).
void TraceView::Impl::equaliseLeftMargins() {
  int needed = 0;
  for (QCustomPlot* plot : std::as_const(plots)) {
    const QCPAxis* y = plot->yAxis;
    const QFontMetrics tickFm(y->tickLabelFont());
    int widest = 0;
    for (const QString& label : y->tickVectorLabels()) widest = std::max(widest, tickFm.horizontalAdvance(label));
    needed = std::max(needed, widest + y->tickLengthOut() + y->tickLabelPadding() + y->labelPadding() +
                                  QFontMetrics(y->labelFont()).height() + y->padding() + 6);
  }
  if (needed == leftMargin) return;
  setLeftMargin(needed);
  replotAll();
}

void TraceView::Impl::addOverlay(Overlay o) {
  const int index = static_cast<int>(overlays.size());
  bool named = false;
  for (int k = 0; k < kTraceCount; ++k) {
    if (kTraces[k].reference) continue;  // the live setting line is enough
    if (std::none_of(o.si[k].begin(), o.si[k].end(), [](double v) { return std::isfinite(v); })) continue;
    QCustomPlot* plot = plots[kTraces[k].chart];
    QCPGraph* g = plot->addGraph();
    g->setLayer(QStringLiteral("runs"));  // under the live traces
    QPen pen(overlayColour(k), 1.5);
    pen.setDashPattern(overlay_dashes(index));
    g->setPen(pen);
    g->setName(o.name);
    // One legend entry per run (on the pressure chart) names it.
    if (kTraces[k].chart != 0 || named) g->removeFromLegend();
    if (kTraces[k].chart == 0) named = true;
    o.graphs[k] = g;
  }
  fillOverlay(o);
  overlays.push_back(std::move(o));
  updateLegend();
  fitValueAxes();
  replotAll();
}

// ---- TraceView ----

TraceView::TraceView(QWidget* parent) : QWidget(parent), d(new Impl(this)) { d->build(); }

TraceView::~TraceView() { delete d; }

void TraceView::setUnits(UnitSystem system) {
  d->units = DisplayUnits::make(system);
  d->relabel();
  d->rebuildGraphs();
  d->fitValueAxes(true);  // the values changed scale: the old range means nothing now
  d->updateReadouts();
  if (d->cursorTime) d->showCursor(*d->cursorTime);
  d->replotAll();
}

void TraceView::appendSamples(const std::vector<Sample>& samples) {
  if (samples.empty()) return;
  const std::size_t first_new = d->samples.size();
  for (const Sample& s : samples) {
    // Callers clear() before a new run; a sample older than the newest would
    // break the time order the charts and the cursor's search rely on. One
    // at the newest time again (the start row, then the first step's) is the same row.
    if (d->samples.size() > d->head && s.time <= d->samples.back().time) continue;
    d->samples.push_back(s);
  }
  d->fillGraphs(d->live, d->samples.cbegin() + static_cast<long>(first_new), d->samples.cend());
  d->prune();
  d->present.reset();
  d->updateReadouts();
  if (d->following)
    d->applyFollowRange();
  else
    d->fitValueAxes();
  if (d->cursorTime) d->showCursor(*d->cursorTime);
  d->replotAll();
}

void TraceView::showPresent(const Sample& present) {
  d->present = present;
  d->updateReadouts();
}

void TraceView::setValveEndShown(bool shown) {
  if (d->valveEndShown == shown) return;
  d->valveEndShown = shown;
  QCPGraph* g = d->live[kValveEndTrace];
  g->setVisible(shown);
  if (shown)
    g->addToLegend();
  else
    g->removeFromLegend();
  d->readouts[kValveEndTrace]->setVisible(shown);
  d->replotAll();
}

bool TraceView::valveEndShown() const { return d->valveEndShown; }

void TraceView::clear() {
  d->samples.clear();
  d->head = 0;
  d->present.reset();
  for (QCPGraph* g : d->live) g->data()->clear();
  d->hideCursor();
  d->updateReadouts();
  if (d->following)
    d->applyFollowRange();
  else
    d->fitValueAxes();
  d->replotAll();
}

void TraceView::setWindowSeconds(double seconds) {
  if (!(seconds > 0.0)) return;
  d->window = seconds;
  if (d->following) {
    d->applyFollowRange();
    d->replotAll();
  }
}

void TraceView::setTimeScale(double scale) {
  if (scale > 0.0) setWindowSeconds(kWallWindow * scale);
}

double TraceView::windowSeconds() const { return d->window; }

void TraceView::setHistorySeconds(double seconds) {
  if (!(seconds > 0.0)) return;
  d->history = seconds;
  d->prune();
  d->replotAll();
}

void TraceView::setFollowing(bool following) {
  if (following == d->following) return;
  d->following = following;
  d->updateStatus();
  if (following) {
    d->applyFollowRange();
    d->replotAll();
  }
  emit followingChanged(following);
}

bool TraceView::following() const { return d->following; }

std::pair<double, double> TraceView::timeRange() const {
  const QCPRange r = d->plots.front()->xAxis->range();
  return {r.lower, r.upper};
}

void TraceView::addOverlay(const QString& name, const std::vector<Sample>& trace) {
  Impl::Overlay o;
  o.name = name;
  o.time.reserve(trace.size());
  for (const Sample& s : trace) o.time.push_back(s.time);
  for (int k = 0; k < kTraceCount; ++k) {
    if (k == kValveEndTrace && !d->valveEndShown) continue;  // the discharge pressure again
    o.si[k].reserve(trace.size());
    for (const Sample& s : trace) o.si[k].push_back(d->si(k, s));
  }
  d->addOverlay(std::move(o));
}

void TraceView::addMeasuredOverlay(const QString& name, const std::vector<double>& time,
                                   const std::vector<std::pair<std::string, std::vector<double>>>& series) {
  Impl::Overlay o;
  o.name = name;
  o.time = time;
  for (int k = 0; k < kTraceCount; ++k) {
    o.si[k].assign(time.size(), std::numeric_limits<double>::quiet_NaN());
    for (const auto& [column, values] : series)
      if (column == kTraces[k].column && values.size() == time.size()) o.si[k] = values;
  }
  d->addOverlay(std::move(o));
}

void TraceView::clearOverlays() {
  for (const Impl::Overlay& o : d->overlays)
    for (QCPGraph* g : o.graphs)
      if (g) g->parentPlot()->removeGraph(g);
  d->overlays.clear();
  d->updateLegend();
  d->fitValueAxes();
  d->replotAll();
}

int TraceView::overlayCount() const { return static_cast<int>(d->overlays.size()); }

QStringList TraceView::legendNames() const {
  QStringList names;
  if (!d->legendShown) return names;
  QCPLegend* legend = d->plots.front()->legend;
  for (int i = 0; i < legend->itemCount(); ++i)
    if (auto* item = qobject_cast<QCPPlottableLegendItem*>(legend->item(i))) names << item->plottable()->name();
  return names;
}

int TraceView::sampleCount() const { return static_cast<int>(d->liveCount()); }

double TraceView::lastTime() const { return d->liveCount() ? d->samples.back().time : 0.0; }

const std::vector<Sample>& TraceView::liveSamples() const {
  d->compact();  // the stale front is dropped lazily; callers see only retained samples
  return d->samples;
}

QString TraceView::readoutText(int index) const {
  if (index < 0 || index >= kTraceCount) return QString();
  QTextDocument doc;
  doc.setHtml(d->readouts[index]->text());
  return doc.toPlainText().replace(QChar(0xa0), QLatin1Char(' '));
}

QList<QCustomPlot*> TraceView::plots() const { return d->plots; }

}  // namespace swashtune::ui
