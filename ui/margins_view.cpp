#include "margins_view.hpp"

#include <qcustomplot.h>

#include <QBoxLayout>
#include <QEvent>
#include <QFrame>
#include <QGridLayout>
#include <QScrollArea>
#include <QHBoxLayout>
#include <QLabel>
#include <QVBoxLayout>
#include <algorithm>
#include <cmath>

#include "plot_style.hpp"

namespace swashtune::ui {

QString format_margin_db(const std::optional<double>& v) {
  return v ? QString::asprintf("%.2f dB", *v) : QStringLiteral("none");
}

QString format_margin_deg(const std::optional<double>& v) {
  return v ? QString::asprintf("%.1f deg", *v) : QStringLiteral("none");
}

QString format_frequency(const std::optional<double>& v) {
  return v ? QString::asprintf("%.4g Hz", *v) : QStringLiteral("none");
}

QString format_modulus(const std::optional<double>& v) {
  return v ? QString::asprintf("%.3f", *v) : QStringLiteral("none");
}

namespace {

constexpr int kBodePoints = 601;  // 100 a decade over the margin search span

const QRgb kCurveColour = 0x1971c2;     // L(jw), and the stable eigenvalues
const QRgb kUnstableColour = 0xe03131;  // eigenvalues with Re >= 0, negative margins, the UNSTABLE verdict
const QRgb kMarginColour = 0x2b8a3e;    // margins that apply to a stable loop, the stable verdict
const QRgb kCautionColour = 0xb35c00;   // margins that do not apply, the reason why
const QRgb kDominantColour = 0xe8590c;  // the least damped oscillatory pair

// Frequency labels as an engineer reads them: 0.1, 1, 10, 100, 1k, 10k, 100k.
class HzTicker : public QCPAxisTickerLog {
 protected:
  QString getTickLabel(double tick, const QLocale& locale, QChar formatChar, int precision) override {
    if (tick >= 1e3 && tick < 1e6)
      return QCPAxisTickerLog::getTickLabel(tick / 1e3, locale, formatChar, precision) + 'k';
    if (tick >= 1e6) return QCPAxisTickerLog::getTickLabel(tick / 1e6, locale, formatChar, precision) + 'M';
    return QCPAxisTickerLog::getTickLabel(tick, locale, formatChar, precision);
  }
};

// A straight line at a fixed key or value, spanning its axis rect.
QCPItemStraightLine* reference_line(QCustomPlot* plot, QCPAxisRect* rect, bool vertical) {
  auto* line = new QCPItemStraightLine(plot);
  line->setClipAxisRect(rect);
  for (QCPItemPosition* pos : {line->point1, line->point2}) {
    pos->setAxes(rect->axis(QCPAxis::atBottom), rect->axis(QCPAxis::atLeft));
    pos->setAxisRect(rect);
    if (vertical)
      pos->setTypeY(QCPItemPosition::ptAxisRectRatio);
    else
      pos->setTypeX(QCPItemPosition::ptAxisRectRatio);
  }
  return line;
}

void place_reference(QCPItemStraightLine* line, bool vertical, double at) {
  if (vertical) {
    line->point1->setCoords(at, 0);
    line->point2->setCoords(at, 1);
  } else {
    line->point1->setCoords(0, at);
    line->point2->setCoords(1, at);
  }
}

QCPItemText* rect_text(QCustomPlot* plot, QCPAxisRect* rect) {
  auto* text = new QCPItemText(plot);
  text->setClipAxisRect(rect);
  text->position->setAxes(rect->axis(QCPAxis::atBottom), rect->axis(QCPAxis::atLeft));
  text->position->setAxisRect(rect);
  text->setPadding(QMargins(4, 1, 4, 1));
  return text;
}

}  // namespace

struct MarginsView::Impl : QObject {
  MarginsView* view;
  DisplayUnits units = DisplayUnits::make(UnitSystem::metric);
  std::optional<StabilityReport> report;

  // Eigenvalues.
  QCustomPlot* eigen = nullptr;
  QCPTextElement* eigenTitle = nullptr;
  QCPItemRect* unstableHalf = nullptr;
  QCPGraph* stablePoints = nullptr;
  QCPGraph* unstablePoints = nullptr;
  QCPGraph* dominantRing = nullptr;
  QCPItemText* dominantLabel = nullptr;
  QCPRange eigenX{-1, 1}, eigenY{-1, 1};  // the fitted view, restored by a double-click

  // Bode plot of L(jw).
  QCustomPlot* bode = nullptr;
  QCPTextElement* bodeTitle = nullptr;
  QCPAxisRect* magRect = nullptr;
  QCPAxisRect* phaseRect = nullptr;
  QCPGraph* magnitude = nullptr;
  QCPGraph* phase = nullptr;
  QCPItemStraightLine* zeroDb = nullptr;
  QCPItemStraightLine* minus180 = nullptr;
  QCPItemStraightLine* furtherOdd[3]{};   // -540, -900, -1260 deg: L is on the negative real axis there too
  QCPGraph* gainCrossDots = nullptr;      // on the 0 dB line at every gain crossover
  QCPGraph* phaseCrossDots = nullptr;     // on the phase curve at every phase crossover
  QList<QCPAbstractItem*> crossingItems;  // one vertical line per chart and a label per crossing, rebuilt per report
  int crossingMarks = 0;
  QCPItemText* notApplyText = nullptr;
  QCPItemLine* gainBracket = nullptr;
  QCPItemText* gainText = nullptr;
  QCPItemLine* phaseBracket = nullptr;
  QCPItemText* phaseText = nullptr;
  QCPItemText* inactiveText = nullptr;

  // The figures.
  QLabel* operatingLabel = nullptr;
  QLabel* angleLabel = nullptr;
  QLabel* stopsLabel = nullptr;
  QLabel* dominantLabelText = nullptr;
  QLabel* gainLabel = nullptr;
  QLabel* phaseLabel = nullptr;
  QLabel* modulusLabel = nullptr;
  QLabel* crossoverLabel = nullptr;
  QLabel* phaseCrossoverLabel = nullptr;
  QLabel* verdictLabel = nullptr;
  QLabel* explanationLabel = nullptr;
  QList<QLabel*> names;

  explicit Impl(MarginsView* v) : view(v) {}

  void build();
  void buildEigen();
  void buildBode();
  void buildPanel(QVBoxLayout* layout);
  void applyStyle();
  void showEigenvalues();
  void showBode();
  void hideBodeMarks();  // the crossover lines, margin brackets and their labels
  void clearCrossings();
  void addCrossing(double hz, bool gain, const QString& label, int row);
  void showFigures();
  void styleVerdict();
  void styleMarginItems();
  void styleFigures();
  // Green only for a margin that applies to a stable loop; red for one that
  // applies and is negative (or belongs to an unstable loop); a margin that
  // does not apply is drawn in the caution colour, never as good news.
  QColor marginColour(const std::optional<double>& value) const;
  bool marginsApply() const { return report && report->margins_apply; }

  // The two charts side by side, or one above the other in a narrow panel.
  QBoxLayout* charts = nullptr;
  static constexpr int stack_below_width = 900;  // px

  bool eventFilter(QObject* watched, QEvent* event) override {
    if (watched == view && (event->type() == QEvent::PaletteChange || event->type() == QEvent::FontChange))
      applyStyle();
    if (watched == view && event->type() == QEvent::Resize && charts)
      charts->setDirection(view->width() < stack_below_width ? QBoxLayout::TopToBottom : QBoxLayout::LeftToRight);
    return false;
  }
};

void MarginsView::Impl::build() {
  auto* layout = new QVBoxLayout(view);
  layout->setContentsMargins(4, 4, 4, 4);
  // The view may be narrower than the charts side by side: it stacks them then.
  layout->setSizeConstraint(QLayout::SetNoConstraint);
  view->setMinimumWidth(480);  // the figures' two columns need it
  charts = new QBoxLayout(QBoxLayout::LeftToRight);
  charts->setSpacing(6);
  eigen = new QCustomPlot(view);
  eigen->setObjectName(QStringLiteral("eigenvalue_chart"));
  bode = new QCustomPlot(view);
  bode->setObjectName(QStringLiteral("bode_chart"));
  charts->addWidget(eigen, 2);
  charts->addWidget(bode, 3);
  layout->addLayout(charts, 3);
  buildEigen();
  buildBode();
  buildPanel(layout);
  view->installEventFilter(this);
  applyStyle();
  showFigures();
}

void MarginsView::Impl::buildEigen() {
  eigen->plotLayout()->insertRow(0);
  eigenTitle = new QCPTextElement(eigen, QStringLiteral("closed-loop eigenvalues"));
  eigen->plotLayout()->addElement(0, 0, eigenTitle);
  eigen->xAxis->setLabel(QStringLiteral("real part [1/s]"));
  eigen->yAxis->setLabel(QStringLiteral("imaginary part [rad/s]"));
  eigen->xAxis2->setVisible(true);
  eigen->yAxis2->setVisible(true);
  for (QCPAxis* a : {eigen->xAxis2, eigen->yAxis2}) {
    a->setTicks(false);
    a->setTickLabels(false);
  }
  eigen->setInteractions(QCP::iRangeZoom | QCP::iRangeDrag);
  connect(eigen, &QCustomPlot::mouseDoubleClick, this, [this](QMouseEvent*) {
    eigen->xAxis->setRange(eigenX);
    eigen->yAxis->setRange(eigenY);
    eigen->replot(QCustomPlot::rpQueuedReplot);
  });

  // The right half plane, shaded: whatever lies in it grows without bound.
  unstableHalf = new QCPItemRect(eigen);
  unstableHalf->setLayer(QStringLiteral("background"));
  unstableHalf->topLeft->setTypeX(QCPItemPosition::ptPlotCoords);
  unstableHalf->topLeft->setTypeY(QCPItemPosition::ptAxisRectRatio);
  unstableHalf->topLeft->setCoords(0, 0);
  unstableHalf->bottomRight->setType(QCPItemPosition::ptAxisRectRatio);
  unstableHalf->bottomRight->setCoords(1, 1);
  unstableHalf->setPen(Qt::NoPen);

  stablePoints = eigen->addGraph();
  stablePoints->setName(QStringLiteral("eigenvalue"));
  unstablePoints = eigen->addGraph();
  unstablePoints->setName(QStringLiteral("unstable (real part \u2265 0)"));
  dominantRing = eigen->addGraph();
  dominantRing->setName(QStringLiteral("dominant pair"));
  for (QCPGraph* g : {stablePoints, unstablePoints, dominantRing}) {
    g->setLineStyle(QCPGraph::lsNone);
    g->setAdaptiveSampling(false);
  }
  dominantLabel = new QCPItemText(eigen);
  dominantLabel->setPositionAlignment(Qt::AlignLeft | Qt::AlignBottom);
  dominantLabel->setTextAlignment(Qt::AlignLeft);
  dominantLabel->setPadding(QMargins(4, 1, 4, 1));
  dominantLabel->setVisible(false);
  eigen->legend->setVisible(true);
  // In a row of its own under the chart, so it never covers an eigenvalue.
  eigen->axisRect()->insetLayout()->take(eigen->legend);
  eigen->plotLayout()->addElement(2, 0, eigen->legend);
  eigen->plotLayout()->setRowStretchFactor(2, 0.001);
  eigen->legend->setFillOrder(QCPLegend::foColumnsFirst);
  eigen->legend->setWrap(3);
}

void MarginsView::Impl::buildBode() {
  bode->plotLayout()->insertRow(0);
  bodeTitle =
      new QCPTextElement(bode, QStringLiteral("loop transfer L(j\u03c9), opened at the swash angle in the pump flow"));
  bode->plotLayout()->addElement(0, 0, bodeTitle);
  magRect = bode->axisRect();
  phaseRect = new QCPAxisRect(bode);
  bode->plotLayout()->addElement(2, 0, phaseRect);
  bode->plotLayout()->setRowSpacing(4);
  auto* group = new QCPMarginGroup(bode);
  magRect->setMarginGroup(QCP::msLeft | QCP::msRight, group);
  phaseRect->setMarginGroup(QCP::msLeft | QCP::msRight, group);
  bode->legend->setVisible(false);

  const QSharedPointer<QCPAxisTicker> hz(new HzTicker);
  for (QCPAxisRect* rect : {magRect, phaseRect}) {
    rect->setupFullAxesBox(true);
    for (QCPAxis* a : {rect->axis(QCPAxis::atTop), rect->axis(QCPAxis::atRight)}) {
      a->setTicks(false);
      a->setTickLabels(false);
    }
    QCPAxis* x = rect->axis(QCPAxis::atBottom);
    x->setScaleType(QCPAxis::stLogarithmic);
    x->setTicker(hz);
    x->setRange(margin_search_low_hz, margin_search_high_hz);
    x->grid()->setSubGridVisible(true);
  }
  magRect->axis(QCPAxis::atBottom)->setTickLabels(false);  // the phase chart labels the shared frequency axis
  magRect->axis(QCPAxis::atLeft)->setLabel(QStringLiteral("magnitude [dB]"));
  phaseRect->axis(QCPAxis::atLeft)->setLabel(QStringLiteral("phase [deg]"));
  phaseRect->axis(QCPAxis::atBottom)->setLabel(QStringLiteral("frequency [Hz]"));
  QSharedPointer<QCPAxisTickerFixed> quarter(new QCPAxisTickerFixed);
  quarter->setTickStep(90.0);
  quarter->setScaleStrategy(QCPAxisTickerFixed::ssMultiples);
  phaseRect->axis(QCPAxis::atLeft)->setTicker(quarter);
  magRect->axis(QCPAxis::atLeft)->ticker()->setTickCount(5);
  magRect->axis(QCPAxis::atLeft)->setRange(-60, 20);
  phaseRect->axis(QCPAxis::atLeft)->setRange(-270, 0);

  magnitude = bode->addGraph(magRect->axis(QCPAxis::atBottom), magRect->axis(QCPAxis::atLeft));
  phase = bode->addGraph(phaseRect->axis(QCPAxis::atBottom), phaseRect->axis(QCPAxis::atLeft));

  zeroDb = reference_line(bode, magRect, false);
  place_reference(zeroDb, false, 0.0);
  minus180 = reference_line(bode, phaseRect, false);
  place_reference(minus180, false, -180.0);
  for (int k = 0; k < 3; ++k) {
    furtherOdd[k] = reference_line(bode, phaseRect, false);
    place_reference(furtherOdd[k], false, -180.0 - 360.0 * (k + 1));
  }
  gainCrossDots = bode->addGraph(magRect->axis(QCPAxis::atBottom), magRect->axis(QCPAxis::atLeft));
  phaseCrossDots = bode->addGraph(phaseRect->axis(QCPAxis::atBottom), phaseRect->axis(QCPAxis::atLeft));
  for (QCPGraph* g : {gainCrossDots, phaseCrossDots}) {
    g->setLineStyle(QCPGraph::lsNone);
    g->setAdaptiveSampling(false);
  }
  notApplyText = rect_text(bode, phaseRect);
  notApplyText->position->setType(QCPItemPosition::ptAxisRectRatio);
  notApplyText->position->setCoords(0.02, 0.97);
  notApplyText->setPositionAlignment(Qt::AlignLeft | Qt::AlignBottom);
  notApplyText->setTextAlignment(Qt::AlignLeft);

  auto bracket = [this](QCPAxisRect* rect) {
    auto* line = new QCPItemLine(bode);
    line->setClipAxisRect(rect);
    for (QCPItemPosition* pos : {line->start, line->end})
      pos->setAxes(rect->axis(QCPAxis::atBottom), rect->axis(QCPAxis::atLeft));
    line->setHead(QCPLineEnding(QCPLineEnding::esSpikeArrow, 9, 11));
    line->setTail(QCPLineEnding(QCPLineEnding::esBar, 10));
    return line;
  };
  gainBracket = bracket(magRect);
  phaseBracket = bracket(phaseRect);
  gainText = rect_text(bode, magRect);
  phaseText = rect_text(bode, phaseRect);
  // Placed in pixels from their bracket's end (see showBode).
  gainText->position->setParentAnchor(gainBracket->end);
  gainText->position->setType(QCPItemPosition::ptAbsolute);
  phaseText->position->setParentAnchor(phaseBracket->start);
  phaseText->position->setType(QCPItemPosition::ptAbsolute);

  inactiveText = rect_text(bode, magRect);
  inactiveText->position->setType(QCPItemPosition::ptAxisRectRatio);
  inactiveText->position->setCoords(0.5, 0.5);
  inactiveText->setText(QStringLiteral("loop inactive: the swashplate rests on its stop\nmargins do not apply"));
  inactiveText->setTextAlignment(Qt::AlignHCenter);

  hideBodeMarks();
}

void MarginsView::Impl::buildPanel(QVBoxLayout* layout) {
  auto* panel = new QFrame(view);
  panel->setObjectName(QStringLiteral("margins_figures"));
  panel->setFrameShape(QFrame::StyledPanel);
  auto* grid = new QGridLayout(panel);
  grid->setContentsMargins(10, 6, 10, 6);
  grid->setHorizontalSpacing(12);
  grid->setVerticalSpacing(3);
  auto add = [&](int row, int column, const char* name) {
    auto* n = new QLabel(QString::fromUtf8(name), panel);
    names.append(n);
    auto* value = new QLabel(panel);
    value->setTextInteractionFlags(Qt::TextSelectableByMouse);
    value->setWordWrap(true);  // a narrow panel wraps the longer figures instead of cutting them
    grid->addWidget(n, row, column);
    grid->addWidget(value, row, column + 1);
    return value;
  };
  operatingLabel = add(0, 0, "operating point");
  angleLabel = add(1, 0, "swash angle");
  stopsLabel = add(2, 0, "stops");
  dominantLabelText = add(3, 0, "dominant mode");
  gainLabel = add(0, 3, "gain margin");
  phaseLabel = add(1, 3, "phase margin");
  modulusLabel = add(2, 3, "modulus margin");
  crossoverLabel = add(3, 3, "crossover");
  phaseCrossoverLabel = add(4, 3, "phase crossover");
  verdictLabel = add(5, 0, "verdict");
  grid->removeWidget(verdictLabel);
  grid->addWidget(verdictLabel, 5, 1, 1, 5);
  verdictLabel->setWordWrap(true);
  explanationLabel = add(6, 0, "in plain words");
  grid->removeWidget(explanationLabel);
  grid->addWidget(explanationLabel, 6, 1, 1, 5);
  explanationLabel->setObjectName(QStringLiteral("margins_explanation"));
  explanationLabel->setWordWrap(true);
  // The two groups sit side by side at the left; spare width goes to the end.
  grid->setColumnMinimumWidth(2, 24);
  grid->setColumnStretch(5, 1);
  // The figures scroll when the panel is short, so the charts keep their room.
  auto* scroll = new QScrollArea(view);
  scroll->setObjectName(QStringLiteral("margins_figures_scroll"));
  scroll->setWidget(panel);
  scroll->setWidgetResizable(true);
  scroll->setFrameShape(QFrame::NoFrame);
  scroll->setHorizontalScrollBarPolicy(Qt::ScrollBarAlwaysOff);
  layout->addWidget(scroll, 2);
}

void MarginsView::Impl::applyStyle() {
  const QPalette pal = view->palette();
  const QColor text = pal.color(QPalette::WindowText);
  const QColor base = pal.color(QPalette::Base);
  const bool dark = is_dark(pal);
  const QFont font = view->font();
  QFont titleFont = font;
  titleFont.setBold(true);
  const QColor curve = for_background(QColor(kCurveColour), dark);
  const QColor unstable = for_background(QColor(kUnstableColour), dark);
  const QColor dominant = for_background(QColor(kDominantColour), dark);
  const QColor axisLine = blend(base, text, 0.55);

  for (QCustomPlot* plot : {eigen, bode}) {
    plot->setBackground(pal.brush(QPalette::Window));
    for (QCPAxisRect* rect : plot->axisRects()) {
      rect->setBackground(QBrush(base));
      for (QCPAxis* a : rect->axes()) style_axis(a, pal, font);
    }
  }
  for (QCPTextElement* t : {eigenTitle, bodeTitle}) {
    t->setFont(titleFont);
    t->setTextColor(text);
  }

  // The real and imaginary axes themselves, drawn firmer than the grid.
  eigen->xAxis->grid()->setZeroLinePen(QPen(axisLine, 1.3));
  eigen->yAxis->grid()->setZeroLinePen(QPen(axisLine, 1.3));
  unstableHalf->setBrush(QBrush(QColor(unstable.red(), unstable.green(), unstable.blue(), dark ? 40 : 22)));
  stablePoints->setScatterStyle(QCPScatterStyle(QCPScatterStyle::ssCircle, QPen(curve, 2), base, 9));
  stablePoints->setPen(QPen(curve, 2));
  unstablePoints->setScatterStyle(QCPScatterStyle(QCPScatterStyle::ssDisc, unstable, 10));
  unstablePoints->setPen(QPen(unstable, 2));
  dominantRing->setScatterStyle(QCPScatterStyle(QCPScatterStyle::ssCircle, QPen(dominant, 2), Qt::NoBrush, 20));
  dominantRing->setPen(QPen(dominant, 2));
  dominantLabel->setColor(dominant);
  dominantLabel->setFont(font);
  dominantLabel->setBrush(QBrush(QColor(base.red(), base.green(), base.blue(), 220)));
  eigen->legend->setBrush(QBrush(QColor(base.red(), base.green(), base.blue(), 215)));
  eigen->legend->setBorderPen(QPen(blend(base, text, 0.25), 1));
  eigen->legend->setTextColor(text);
  eigen->legend->setFont(font);
  eigen->legend->setIconSize(24, 22);  // room for the dominant pair's ring

  magnitude->setPen(QPen(curve, 2));
  phase->setPen(QPen(curve, 2));
  for (QCPItemStraightLine* line : {zeroDb, minus180, furtherOdd[0], furtherOdd[1], furtherOdd[2]})
    line->setPen(QPen(axisLine, 1.3));
  for (QCPAbstractItem* item : std::as_const(crossingItems)) {
    if (auto* line = qobject_cast<QCPItemStraightLine*>(item))
      line->setPen(QPen(blend(base, text, 0.5), 1, line->property("gain").toBool() ? Qt::DashLine : Qt::DotLine));
    if (auto* label = qobject_cast<QCPItemText*>(item)) {
      label->setColor(text);
      label->setFont(font);
      label->setBrush(QBrush(QColor(base.red(), base.green(), base.blue(), 200)));
    }
  }
  gainCrossDots->setScatterStyle(QCPScatterStyle(QCPScatterStyle::ssCircle, QPen(text, 1.5), base, 7));
  phaseCrossDots->setScatterStyle(QCPScatterStyle(QCPScatterStyle::ssDiamond, QPen(text, 1.5), base, 8));
  notApplyText->setColor(for_background(QColor(kCautionColour), dark));
  notApplyText->setFont(font);
  notApplyText->setBrush(QBrush(QColor(base.red(), base.green(), base.blue(), 220)));
  for (QCPItemText* t : {inactiveText}) {
    t->setColor(text);
    t->setFont(font);
    t->setBrush(QBrush(QColor(base.red(), base.green(), base.blue(), 220)));
  }
  styleMarginItems();

  const QColor muted = blend(text, pal.color(QPalette::Window), 0.35);
  for (QLabel* n : std::as_const(names)) {
    QPalette p = n->palette();
    p.setColor(QPalette::WindowText, muted);
    n->setPalette(p);
  }
  styleVerdict();
  eigen->replot(QCustomPlot::rpQueuedReplot);
  bode->replot(QCustomPlot::rpQueuedReplot);
}

QColor MarginsView::Impl::marginColour(const std::optional<double>& value) const {
  const QPalette pal = view->palette();
  const bool dark = is_dark(pal);
  if (!report || !value) return pal.color(QPalette::WindowText);
  if (!report->margins_apply) return for_background(QColor(kCautionColour), dark);
  const bool good = report->stable && *value >= 0.0;
  return for_background(QColor(good ? kMarginColour : kUnstableColour), dark);
}

void MarginsView::Impl::styleMarginItems() {
  const QPalette pal = view->palette();
  const QColor base = pal.color(QPalette::Base);
  QFont font = view->font();
  font.setBold(true);
  const QColor gm = marginColour(report ? report->margins.gain_margin_db : std::nullopt);
  const QColor pm = marginColour(report ? report->margins.phase_margin_deg : std::nullopt);
  const std::pair<QCPItemLine*, QColor> brackets[] = {{gainBracket, gm}, {phaseBracket, pm}};
  for (const auto& [line, c] : brackets) line->setPen(QPen(c, 2));
  const std::pair<QCPItemText*, QColor> texts[] = {{gainText, gm}, {phaseText, pm}};
  for (const auto& [text, c] : texts) {
    text->setColor(c);
    text->setFont(font);
    text->setBrush(QBrush(QColor(base.red(), base.green(), base.blue(), 220)));
  }
}

void MarginsView::Impl::styleFigures() {
  auto paint = [](QLabel* label, const QColor& c) {
    QPalette p = label->palette();
    p.setColor(QPalette::WindowText, c);
    label->setPalette(p);
  };
  paint(gainLabel, marginColour(report ? report->margins.gain_margin_db : std::nullopt));
  paint(phaseLabel, marginColour(report ? report->margins.phase_margin_deg : std::nullopt));
  paint(modulusLabel, marginColour(report ? report->margins.modulus_margin : std::nullopt));
}

void MarginsView::Impl::styleVerdict() {
  const QPalette pal = view->palette();
  const bool dark = is_dark(pal);
  QColor colour = pal.color(QPalette::WindowText);
  // The verdict is the eigenvalues'; where a linear model cannot speak for
  // the pump (dry friction, no steady state) it is not drawn as good news.
  const bool trustworthy = report && !report->dry_friction_dominates && report->operating_point.converged;
  if (report && report->model.loop_active && (!report->stable || trustworthy))
    colour = for_background(QColor(report->stable ? kMarginColour : kUnstableColour), dark);
  QPalette p = verdictLabel->palette();
  p.setColor(QPalette::WindowText, colour);
  verdictLabel->setPalette(p);
  QFont f = view->font();
  f.setBold(true);
  verdictLabel->setFont(f);
  styleFigures();
}

void MarginsView::Impl::showEigenvalues() {
  stablePoints->data()->clear();
  unstablePoints->data()->clear();
  dominantRing->data()->clear();
  dominantLabel->setVisible(false);
  if (!report || report->modes.empty()) return;

  double minRe = 0.0, maxRe = 0.0, maxIm = 0.0;
  for (const Mode& m : report->modes) {
    const double re = m.eigenvalue.real(), im = m.eigenvalue.imag();
    (re >= 0.0 ? unstablePoints : stablePoints)->addData(re, im);
    minRe = std::min(minRe, re);
    maxRe = std::max(maxRe, re);
    maxIm = std::max(maxIm, std::abs(im));
  }
  const double spanRe = std::max(maxRe - minRe, 1.0);
  eigenX = QCPRange(minRe - 0.1 * spanRe, maxRe + 0.22 * spanRe);  // room on the right keeps the unstable side visible
  const double halfIm = std::max(maxIm, 0.25 * spanRe) * 1.2;
  eigenY = QCPRange(-halfIm, halfIm);
  eigen->xAxis->setRange(eigenX);
  eigen->yAxis->setRange(eigenY);

  if (report->dominant) {
    const std::complex<double> e = report->dominant->eigenvalue;
    dominantRing->addData(e.real(), std::abs(e.imag()));
    dominantRing->addData(e.real(), -std::abs(e.imag()));
    dominantLabel->setText(QStringLiteral("dominant pair\n%1 Hz, \u03b6 = %2")
                               .arg(QString::asprintf("%.4g", report->dominant->damped_frequency_hz),
                                    QString::asprintf("%.4f", report->dominant->damping_ratio)));
    // Beside the upper member of the pair, on the side with more room.
    const bool left = e.real() > eigenX.center();
    const double clear = (left ? -0.04 : 0.04) * eigenX.size();  // clear of the ring
    dominantLabel->position->setCoords(e.real() + clear, std::abs(e.imag()));
    dominantLabel->setPositionAlignment((left ? Qt::AlignRight : Qt::AlignLeft) | Qt::AlignVCenter);
    dominantLabel->setVisible(true);
  }
}

void MarginsView::Impl::hideBodeMarks() {
  for (QCPAbstractItem* item :
       std::initializer_list<QCPAbstractItem*>{gainBracket, gainText, phaseBracket, phaseText, inactiveText,
                                               notApplyText, furtherOdd[0], furtherOdd[1], furtherOdd[2]})
    item->setVisible(false);
  clearCrossings();
}

void MarginsView::Impl::clearCrossings() {
  for (QCPAbstractItem* item : std::as_const(crossingItems)) bode->removeItem(item);
  crossingItems.clear();
  crossingMarks = 0;
  gainCrossDots->data()->clear();
  phaseCrossDots->data()->clear();
}

// A vertical mark through both charts at a crossing, with a short label in
// the magnitude chart (gain crossovers along its top, phase crossovers along
// its bottom; neighbours alternate rows so that close ones stay legible).
void MarginsView::Impl::addCrossing(double hz, bool gain, const QString& label, int row) {
  const QPalette pal = view->palette();
  const QColor text = pal.color(QPalette::WindowText);
  const QColor base = pal.color(QPalette::Base);
  for (QCPAxisRect* rect : {magRect, phaseRect}) {
    QCPItemStraightLine* line = reference_line(bode, rect, true);
    place_reference(line, true, hz);
    line->setProperty("gain", gain);
    line->setPen(QPen(blend(base, text, 0.5), 1, gain ? Qt::DashLine : Qt::DotLine));
    crossingItems.append(line);
  }
  QCPItemText* t = rect_text(bode, magRect);
  t->position->setTypeY(QCPItemPosition::ptAxisRectRatio);
  const double y = gain ? 0.02 + 0.1 * (row % 2) : 0.98 - 0.1 * (row % 2);
  t->position->setCoords(hz, y);
  t->setPositionAlignment((gain ? Qt::AlignTop : Qt::AlignBottom) | Qt::AlignHCenter);
  t->setText(label);
  t->setColor(text);
  t->setFont(view->font());
  t->setBrush(QBrush(QColor(base.red(), base.green(), base.blue(), 200)));
  crossingItems.append(t);
  ++crossingMarks;
}

void MarginsView::Impl::showBode() {
  magnitude->data()->clear();
  phase->data()->clear();
  hideBodeMarks();
  if (!report) return;
  if (!report->model.loop_active) {
    magRect->axis(QCPAxis::atLeft)->setRange(-60, 20);
    phaseRect->axis(QCPAxis::atLeft)->setRange(-270, 0);
    inactiveText->setVisible(true);
    return;
  }

  const std::vector<BodePoint> points =
      loop_bode(report->model, margin_search_low_hz, margin_search_high_hz, kBodePoints);
  QVector<double> f, mag, ph;
  for (const BodePoint& p : points) {
    if (!std::isfinite(p.magnitude_db) || !std::isfinite(p.phase_deg)) continue;
    f.append(p.frequency_hz);
    mag.append(p.magnitude_db);
    ph.append(p.phase_deg);
  }
  magnitude->setData(f, mag, true);
  phase->setData(f, ph, true);

  const LoopMargins& m = report->margins;
  // Value ranges frame the curves and always include the reference lines;
  // the magnitude's far tail is cut so the crossover region keeps its height.
  if (!mag.isEmpty()) {
    const double top = std::max(*std::max_element(mag.begin(), mag.end()), 0.0);
    double bottom = std::min(*std::min_element(mag.begin(), mag.end()), 0.0);
    bottom = std::max(bottom, top - 120.0);
    if (m.gain_margin_db) bottom = std::min(bottom, -*m.gain_margin_db);
    const double pad = 0.08 * (top - bottom);
    magRect->axis(QCPAxis::atLeft)->setRange(bottom - pad, top + pad);
    const double phTop = std::max(*std::max_element(ph.begin(), ph.end()), -180.0);
    const double phBottom = std::min(*std::min_element(ph.begin(), ph.end()), -180.0);
    const double phPad = std::max(0.08 * (phTop - phBottom), 10.0);
    phaseRect->axis(QCPAxis::atLeft)->setRange(phBottom - phPad, phTop + phPad);
    for (int k = 0; k < 3; ++k) furtherOdd[k]->setVisible(-180.0 - 360.0 * (k + 1) >= phBottom - phPad);
  }

  // Every crossing gets its mark; the smallest margin of each kind its bracket.
  auto phase_on_curve = [&](double hz) {
    // The plotted (unwrapped) phase at hz, so the mark sits on the curve.
    for (int i = 1; i < f.size(); ++i)
      if (f[i] >= hz) {
        const double t = std::log(hz / f[i - 1]) / std::log(f[i] / f[i - 1]);
        return ph[i - 1] + t * (ph[i] - ph[i - 1]);
      }
    return ph.isEmpty() ? -180.0 : ph.back();
  };
  int row = 0;
  for (const GainCrossover& g : m.gain_crossovers) {
    addCrossing(g.frequency_hz, true, QStringLiteral("PM %1\u00b0").arg(g.phase_margin_deg, 0, 'f', 1), row++);
    gainCrossDots->addData(g.frequency_hz, 0.0);
  }
  row = 0;
  for (const PhaseCrossover& c : m.phase_crossovers) {
    addCrossing(c.frequency_hz, false, QStringLiteral("GM %1 dB").arg(c.gain_margin_db, 0, 'f', 1), row++);
    phaseCrossDots->addData(c.frequency_hz, phase_on_curve(c.frequency_hz));
  }
  const bool crossFirst = !m.phase_crossover_frequency_hz ||
                          (m.crossover_frequency_hz && *m.crossover_frequency_hz <= *m.phase_crossover_frequency_hz);
  if (m.crossover_frequency_hz && m.phase_margin_deg) {
    const double wc = *m.crossover_frequency_hz, pm = *m.phase_margin_deg;
    const double at = phase_on_curve(wc);  // the curve's value: 180 + pm wrapped onto its branch
    const double foot = at - pm;
    phaseBracket->start->setCoords(wc, foot);
    phaseBracket->end->setCoords(wc, at);
    phaseBracket->setVisible(true);
    const double side = crossFirst ? -1.0 : 1.0;
    phaseText->position->setCoords(6.0 * side, pm >= 0.0 ? 5.0 : -5.0);
    phaseText->setPositionAlignment((pm >= 0.0 ? Qt::AlignTop : Qt::AlignBottom) |
                                    (crossFirst ? Qt::AlignRight : Qt::AlignLeft));
    phaseText->setText(QStringLiteral("phase margin %1").arg(format_margin_deg(pm)));
    phaseText->setVisible(true);
  }
  if (m.phase_crossover_frequency_hz && m.gain_margin_db) {
    const double w180 = *m.phase_crossover_frequency_hz, gm = *m.gain_margin_db;
    gainBracket->start->setCoords(w180, -gm);
    gainBracket->end->setCoords(w180, 0.0);
    gainBracket->setVisible(true);
    const double side = crossFirst ? 1.0 : -1.0;
    gainText->position->setCoords(6.0 * side, gm >= 0.0 ? -5.0 : 5.0);
    gainText->setPositionAlignment((gm >= 0.0 ? Qt::AlignBottom : Qt::AlignTop) |
                                   (crossFirst ? Qt::AlignLeft : Qt::AlignRight));
    gainText->setText(QStringLiteral("gain margin %1").arg(format_margin_db(gm)));
    gainText->setVisible(true);
  }
  if (!report->margins_apply) {
    notApplyText->setText(QStringLiteral("not stability margins here (see below)"));
    notApplyText->setVisible(true);
  }
  styleMarginItems();
}

void MarginsView::Impl::showFigures() {
  if (!report) {
    for (QLabel* l : {operatingLabel, angleLabel, stopsLabel}) l->setText(QStringLiteral("\u2013"));
    dominantLabelText->setText(QStringLiteral("none"));
    gainLabel->setText(format_margin_db(std::nullopt));
    phaseLabel->setText(format_margin_deg(std::nullopt));
    modulusLabel->setText(format_modulus(std::nullopt));
    crossoverLabel->setText(format_frequency(std::nullopt));
    phaseCrossoverLabel->setText(format_frequency(std::nullopt));
    verdictLabel->setText(QStringLiteral("no analysis yet"));
    explanationLabel->clear();
    styleVerdict();
    return;
  }
  const StabilityReport& r = *report;
  const State& x = r.operating_point.condition.x;
  const StopModes& modes = r.operating_point.condition.modes;
  const double p = units.pressure.to_display(x[state::discharge_pressure]);
  const QString pText = units.pressure.unit == QLatin1String("bar")   ? QString::number(p, 'f', 2)
                        : units.pressure.unit == QLatin1String("psi") ? QString::number(p, 'f', 1)
                                                                      : QString::asprintf("%.4g", p);
  operatingLabel->setText(QStringLiteral("%1 %2 at load opening %3 (found by %4%5)")
                              .arg(pText, units.pressure.unit, QString::asprintf("%.4g", r.load_opening),
                                   QString::fromUtf8(to_string(r.operating_point.method)),
                                   r.operating_point.converged ? QString() : QStringLiteral(", NOT converged")));
  const double a = units.angle.to_display(x[state::swash_angle]);
  angleLabel->setText(QStringLiteral("%1 %2").arg(
      QString::asprintf(units.angle.unit == QLatin1String("deg") ? "%.3f" : "%.5f", a), units.angle.unit));
  stopsLabel->setText(
      QStringLiteral("swashplate: %1; spool: %2")
          .arg(QString::fromUtf8(stop_name(modes.swash, true)), QString::fromUtf8(stop_name(modes.spool, false))));
  dominantLabelText->setText(r.dominant ? QString::asprintf("%.4g Hz, damping ratio %.4f",
                                                            r.dominant->damped_frequency_hz, r.dominant->damping_ratio)
                                        : QStringLiteral("none"));
  const QString suffix = r.model.loop_active && !r.margins_apply ? QStringLiteral(" (does not apply)") : QString();
  auto with_suffix = [&](const QString& text, bool present) { return present ? text + suffix : text; };
  gainLabel->setText(with_suffix(format_margin_db(r.margins.gain_margin_db), r.margins.gain_margin_db.has_value()));
  phaseLabel->setText(
      with_suffix(format_margin_deg(r.margins.phase_margin_deg), r.margins.phase_margin_deg.has_value()));
  modulusLabel->setText(with_suffix(format_modulus(r.margins.modulus_margin), r.margins.modulus_margin.has_value()) +
                        (r.margins.modulus_margin_frequency_hz
                             ? QStringLiteral(" at %1").arg(format_frequency(r.margins.modulus_margin_frequency_hz))
                             : QString()));
  auto all_of = [](const auto& list, auto frequency) {
    QStringList parts;
    for (const auto& item : list) parts << format_frequency(frequency(item));
    return parts.isEmpty() ? QStringLiteral("none") : parts.join(QStringLiteral(", "));
  };
  crossoverLabel->setText(all_of(r.margins.gain_crossovers, [](const GainCrossover& g) { return g.frequency_hz; }));
  phaseCrossoverLabel->setText(
      all_of(r.margins.phase_crossovers, [](const PhaseCrossover& c) { return c.frequency_hz; }));
  if (!r.model.loop_active) {
    verdictLabel->setText(QStringLiteral("loop inactive: the swashplate rests on its %1 stop; margins do not apply")
                              .arg(QString::fromUtf8(stop_name(modes.swash, true))));
  } else {
    QString verdict = r.stable
                          ? QStringLiteral("stable")
                          : QStringLiteral("UNSTABLE: an eigenvalue has a non-negative real part (the pump hunts)");
    verdict += QStringLiteral("; %1 unstable pole(s) of the opened loop, %2 of the closed loop")
                   .arg(r.open_loop_unstable_poles)
                   .arg(r.closed_loop_unstable_poles);
    if (!r.margins_apply) verdict += QStringLiteral("; the margins do not apply");
    verdictLabel->setText(verdict);
  }
  QStringList lines;
  for (const std::string& line : r.explanation) lines << QString::fromStdString(line);
  explanationLabel->setText(lines.join(QLatin1Char('\n')));
  styleVerdict();
}

// ---- MarginsView ----

MarginsView::MarginsView(QWidget* parent) : QWidget(parent), d(new Impl(this)) { d->build(); }

MarginsView::~MarginsView() { delete d; }

void MarginsView::setUnits(UnitSystem system) {
  d->units = DisplayUnits::make(system);
  d->showFigures();
}

void MarginsView::setReport(const StabilityReport& report) {
  d->report = report;
  d->showEigenvalues();
  d->showBode();
  d->showFigures();
  d->eigen->replot(QCustomPlot::rpQueuedReplot);
  d->bode->replot(QCustomPlot::rpQueuedReplot);
}

QString MarginsView::gainMarginText() const { return d->gainLabel->text(); }
QString MarginsView::phaseMarginText() const { return d->phaseLabel->text(); }
QString MarginsView::modulusMarginText() const { return d->modulusLabel->text(); }
QString MarginsView::crossoverText() const { return d->crossoverLabel->text(); }
QString MarginsView::explanationText() const { return d->explanationLabel->text(); }
QColor MarginsView::gainMarginColour() const { return d->gainLabel->palette().color(QPalette::WindowText); }
QColor MarginsView::goodColour() const { return for_background(QColor(kMarginColour), is_dark(palette())); }
int MarginsView::crossingMarkCount() const { return d->crossingMarks; }
QString MarginsView::dominantText() const { return d->dominantLabelText->text(); }
QString MarginsView::verdictText() const { return d->verdictLabel->text(); }

QCustomPlot* MarginsView::eigenvaluePlot() const { return d->eigen; }
QCustomPlot* MarginsView::bodePlot() const { return d->bode; }

}  // namespace swashtune::ui
