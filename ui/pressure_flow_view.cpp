#include "pressure_flow_view.hpp"

#include <qcustomplot.h>

#include <QEvent>
#include <QVBoxLayout>
#include <algorithm>
#include <cmath>
#include <optional>

#include "plot_style.hpp"

namespace swashtune::ui {
namespace {

const QRgb kCurveColour = 0x1971c2;    // the steady characteristic
const QRgb kPointColour = 0xd9480f;    // the present operating point (the discharge pressure's colour in the traces)
const QRgb kSettingColour = 0x862e9c;  // the compensator setting

}  // namespace

struct PressureFlowView::Impl : QObject {
  PressureFlowView* view;
  DisplayUnits units = DisplayUnits::make(UnitSystem::metric);
  QCustomPlot* plot = nullptr;
  QCPGraph* curve = nullptr;
  QCPGraph* previous = nullptr;  // the characteristic before the last change, faint
  QCPGraph* point = nullptr;
  // With dry friction: the steady states of a slow closing (top edge) and a
  // slow opening (bottom edge), the band between them shaded.
  QCPGraph* bandClosing = nullptr;
  QCPGraph* bandOpening = nullptr;
  QCPItemStraightLine* settingLine = nullptr;
  QCPItemText* settingText = nullptr;

  // What was given, in SI, so a change of units can redraw it.
  std::optional<Characteristic> characteristic;
  std::optional<Characteristic> before;
  QString beforeName;
  double setting_pa = 0.0;
  std::optional<std::pair<double, double>> operating;  // pressure Pa, load flow m^3/s
  QCPRange baseX{0, 1}, baseY{0, 1};

  explicit Impl(PressureFlowView* v) : view(v) {}

  void build();
  void applyStyle();
  void relabel();
  void redrawCharacteristic();
  void placePoint();

  bool eventFilter(QObject* watched, QEvent* event) override {
    if (watched == view && (event->type() == QEvent::PaletteChange || event->type() == QEvent::FontChange))
      applyStyle();
    return false;
  }
};

void PressureFlowView::Impl::build() {
  auto* layout = new QVBoxLayout(view);
  layout->setContentsMargins(4, 4, 4, 4);
  plot = new QCustomPlot(view);
  plot->setObjectName(QStringLiteral("pressure_flow_chart"));
  layout->addWidget(plot);

  plot->xAxis2->setVisible(true);
  plot->yAxis2->setVisible(true);
  for (QCPAxis* a : {plot->xAxis2, plot->yAxis2}) {
    a->setTicks(false);
    a->setTickLabels(false);
  }

  previous = plot->addGraph();
  previous->setVisible(false);
  previous->removeFromLegend();
  bandOpening = plot->addGraph();
  bandOpening->removeFromLegend();
  bandClosing = plot->addGraph();
  bandClosing->setName(QStringLiteral("friction band: closing / opening"));
  bandClosing->setChannelFillGraph(bandOpening);
  bandClosing->removeFromLegend();
  curve = plot->addGraph();
  curve->setName(QStringLiteral("steady characteristic"));
  point = plot->addGraph();
  point->setName(QStringLiteral("present operating point"));
  point->setLineStyle(QCPGraph::lsNone);
  point->setAdaptiveSampling(false);

  settingLine = new QCPItemStraightLine(plot);
  settingLine->setLayer(QStringLiteral("background"));  // under the curve
  settingText = new QCPItemText(plot);
  settingText->position->setTypeX(QCPItemPosition::ptAxisRectRatio);
  settingText->position->setTypeY(QCPItemPosition::ptPlotCoords);
  // Labelled at the right, where the curve has fallen away from the setting.
  settingText->setPositionAlignment(Qt::AlignBottom | Qt::AlignRight);
  settingText->setPadding(QMargins(2, 0, 2, 2));
  settingLine->setVisible(false);
  settingText->setVisible(false);

  plot->legend->setVisible(true);
  // In a row of its own under the chart: it never covers the curve or the point.
  plot->axisRect()->insetLayout()->take(plot->legend);
  plot->plotLayout()->addElement(1, 0, plot->legend);
  plot->plotLayout()->setRowStretchFactor(1, 0.001);
  plot->legend->setFillOrder(QCPLegend::foColumnsFirst);
  plot->legend->setWrap(2);
  view->installEventFilter(this);
  applyStyle();
  relabel();
}

void PressureFlowView::Impl::applyStyle() {
  const QPalette pal = view->palette();
  const QColor text = pal.color(QPalette::WindowText);
  const QColor base = pal.color(QPalette::Base);
  const bool dark = is_dark(pal);
  const QFont font = view->font();
  plot->setBackground(pal.brush(QPalette::Window));
  plot->axisRect()->setBackground(QBrush(base));
  for (QCPAxis* a : plot->axisRect()->axes()) style_axis(a, pal, font);

  const QColor curveColour = for_background(QColor(kCurveColour), dark);
  curve->setPen(QPen(curveColour, 2));
  curve->setScatterStyle(QCPScatterStyle(QCPScatterStyle::ssCircle, curveColour, base, 6));
  const QColor pointColour = for_background(QColor(kPointColour), dark);
  // A filled disc with a ring in the background colour stands clear of the curve it sits on.
  QCPScatterStyle disc(QCPScatterStyle::ssCircle, 13);
  disc.setPen(QPen(base, 2.5));
  disc.setBrush(pointColour);
  point->setScatterStyle(disc);
  point->setPen(QPen(pointColour));

  const QColor edge = blend(curveColour, base, 0.35);
  for (QCPGraph* g : {bandClosing, bandOpening}) {
    g->setPen(QPen(edge, 1.0));
    g->setScatterStyle(QCPScatterStyle::ssNone);
  }
  QColor shade = curveColour;
  shade.setAlpha(dark ? 70 : 45);
  bandClosing->setBrush(QBrush(shade));

  QPen faint(blend(curveColour, base, 0.55), 1.6, Qt::DashLine);
  previous->setPen(faint);
  previous->setScatterStyle(QCPScatterStyle::ssNone);
  const QColor settingColour = for_background(QColor(kSettingColour), dark);
  settingLine->setPen(QPen(settingColour, 1.5, Qt::DashLine));
  settingText->setColor(settingColour);
  settingText->setFont(font);

  plot->legend->setBrush(QBrush(QColor(base.red(), base.green(), base.blue(), 215)));
  plot->legend->setBorderPen(QPen(blend(base, text, 0.25), 1));
  plot->legend->setTextColor(text);
  plot->legend->setFont(font);
  plot->replot(QCustomPlot::rpQueuedReplot);
}

void PressureFlowView::Impl::relabel() {
  plot->xAxis->setLabel(QStringLiteral("load flow [%1]").arg(units.flow.unit));
  plot->yAxis->setLabel(QStringLiteral("discharge pressure [%1]").arg(units.pressure.unit));
}

void PressureFlowView::Impl::redrawCharacteristic() {
  curve->data()->clear();
  previous->data()->clear();
  bandClosing->data()->clear();
  bandOpening->data()->clear();
  if (before) {
    QVector<double> x, y;
    for (const CharacteristicPoint& c : before->points) {
      x.append(units.flow.to_display(c.load_flow));
      y.append(units.pressure.to_display(c.discharge_pressure));
    }
    previous->setData(x, y);
  }
  const bool showBefore = before.has_value() && !before->points.empty();
  if (showBefore != previous->visible()) {
    previous->setVisible(showBefore);
    if (showBefore)
      previous->addToLegend();
    else
      previous->removeFromLegend();
  }
  previous->setName(beforeName);
  if (!characteristic || characteristic->points.empty()) {
    settingLine->setVisible(false);
    settingText->setVisible(false);
    return;
  }
  QVector<double> x, y;
  double maxFlow = 0.0, maxPressure = 0.0;
  for (const CharacteristicPoint& c : characteristic->points) {
    x.append(units.flow.to_display(c.load_flow));
    y.append(units.pressure.to_display(c.discharge_pressure));
    maxFlow = std::max(maxFlow, x.back());
    maxPressure = std::max(maxPressure, y.back());
  }
  curve->setData(x, y);  // sorted by load flow, which rises with the opening anyway
  const bool band = characteristic->rising.size() == characteristic->points.size() &&
                    characteristic->falling.size() == characteristic->points.size();
  if (band) {
    // Both edges on the middle curve's flows, so the shading pairs them
    // point by point (the flows of the edges differ a little).
    QVector<double> closing, opening;
    for (std::size_t i = 0; i < characteristic->points.size(); ++i) {
      closing.append(units.pressure.to_display(characteristic->rising[i].discharge_pressure));
      opening.append(units.pressure.to_display(characteristic->falling[i].discharge_pressure));
      maxPressure = std::max(maxPressure, closing.back());
    }
    bandClosing->setData(x, closing);
    bandOpening->setData(x, opening);
  }
  if (band != bandClosing->visible() || (band && !plot->legend->hasItemWithPlottable(bandClosing))) {
    bandClosing->setVisible(band);
    bandOpening->setVisible(band);
    if (band)
      bandClosing->addToLegend();
    else
      bandClosing->removeFromLegend();
  }

  const double setting = units.pressure.to_display(setting_pa);
  settingLine->point1->setCoords(0, setting);
  settingLine->point2->setCoords(1, setting);
  settingText->position->setCoords(0.98, setting);
  settingText->setText(
      QStringLiteral("setting %1 %2")
          .arg(QString::number(setting, 'f', units.system == UnitSystem::us ? 0 : 1), units.pressure.unit));
  settingLine->setVisible(setting_pa > 0.0);
  settingText->setVisible(setting_pa > 0.0);

  // A little room below zero keeps markers at no flow or no pressure whole;
  // headroom above the setting leaves space for the overshoot of a transient.
  const double right = maxFlow > 0 ? maxFlow : 1.0;
  const double top = std::max(maxPressure, setting) > 0 ? std::max(maxPressure, setting) : 1.0;
  baseX = QCPRange(-0.02 * right, 1.08 * right);
  baseY = QCPRange(-0.02 * top, 1.3 * top);
  plot->xAxis->setRange(baseX);
  plot->yAxis->setRange(baseY);
}

void PressureFlowView::Impl::placePoint() {
  if (!operating) {
    point->data()->clear();
    return;
  }
  const double x = units.flow.to_display(operating->second);
  const double y = units.pressure.to_display(operating->first);
  // One point, replaced in place: cheap enough for every display frame.
  if (point->data()->size() == 1) {
    auto it = point->data()->begin();
    it->key = x;
    it->value = y;
  } else {
    point->data()->clear();
    point->addData(x, y);
  }
  // A transient can leave the steady curve's frame; widen it, never narrower than the curve's.
  auto widen = [](QCPAxis* axis, const QCPRange& base, double v) {
    const QCPRange now = axis->range();
    if (v >= now.lower && v <= now.upper) return;
    axis->setRange(std::min(base.lower, v < now.lower ? v - 0.05 * base.size() : now.lower),
                   std::max(base.upper, v > now.upper ? v + 0.08 * base.size() : now.upper));
  };
  widen(plot->xAxis, baseX, x);
  widen(plot->yAxis, baseY, y);
}

// ---- PressureFlowView ----

PressureFlowView::PressureFlowView(QWidget* parent) : QWidget(parent), d(new Impl(this)) { d->build(); }

PressureFlowView::~PressureFlowView() { delete d; }

void PressureFlowView::setUnits(UnitSystem system) {
  d->units = DisplayUnits::make(system);
  d->relabel();
  d->redrawCharacteristic();
  d->placePoint();
  d->plot->replot(QCustomPlot::rpQueuedReplot);
}

namespace {

bool same_curve(const Characteristic& a, const Characteristic& b) {
  if (a.points.size() != b.points.size()) return false;
  for (std::size_t i = 0; i < a.points.size(); ++i) {
    const double dp = std::abs(a.points[i].discharge_pressure - b.points[i].discharge_pressure);
    const double dq = std::abs(a.points[i].load_flow - b.points[i].load_flow);
    // Below what the chart can show: 0.01 % of the pressure, 0.01 % of the flow.
    if (dp > 1e-4 * std::max(std::abs(a.points[i].discharge_pressure), 1e5) ||
        dq > 1e-4 * std::max(std::abs(a.points[i].load_flow), 1e-6))
      return false;
  }
  return true;
}

}  // namespace

void PressureFlowView::setCharacteristic(const Characteristic& characteristic, double setting_pa,
                                         const QString& before) {
  if (d->characteristic && !same_curve(*d->characteristic, characteristic)) {
    d->before = d->characteristic;  // what it was, to see what the change did
    d->beforeName = before.isEmpty() ? QStringLiteral("before the last change") : before;
  }
  d->characteristic = characteristic;
  d->setting_pa = setting_pa;
  d->redrawCharacteristic();
  d->placePoint();
  d->plot->replot(QCustomPlot::rpQueuedReplot);
}

void PressureFlowView::setOperatingPoint(double pressure_pa, double load_flow_m3_s) {
  d->operating = std::make_pair(pressure_pa, load_flow_m3_s);
  d->placePoint();
  d->plot->replot(QCustomPlot::rpQueuedReplot);
}

QCustomPlot* PressureFlowView::plot() const { return d->plot; }

void PressureFlowView::clearPrevious() {
  d->before.reset();
  d->characteristic.reset();  // the next one starts afresh
  d->beforeName.clear();
  d->redrawCharacteristic();
  d->placePoint();
  d->plot->replot(QCustomPlot::rpQueuedReplot);
}

QString PressureFlowView::previousName() const { return d->before ? d->beforeName : QString(); }
int PressureFlowView::previousPoints() const { return d->previous->visible() ? d->previous->dataCount() : 0; }
int PressureFlowView::frictionBandPoints() const { return d->bandClosing->visible() ? d->bandClosing->dataCount() : 0; }
std::optional<std::pair<double, double>> PressureFlowView::frictionBandAtNoFlow() const {
  if (!d->bandClosing->visible() || d->bandClosing->data()->isEmpty()) return std::nullopt;
  return std::make_pair(d->bandClosing->data()->constBegin()->value, d->bandOpening->data()->constBegin()->value);
}

std::optional<std::pair<double, double>> PressureFlowView::operatingPoint() const {
  if (d->point->data()->isEmpty()) return std::nullopt;
  const auto it = d->point->data()->constBegin();
  return std::make_pair(it->key, it->value);
}

}  // namespace swashtune::ui
