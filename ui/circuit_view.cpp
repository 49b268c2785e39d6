#include "circuit_view.hpp"

#include <QLinearGradient>
#include <QPainter>
#include <QPainterPath>
#include <algorithm>
#include <cmath>

#include "plot_style.hpp"
#include "pressure_scale.hpp"
#include "swashtune/model.hpp"
#include "trace_columns.hpp"

namespace swashtune::ui {
namespace {

// The diagram is drawn on a canvas of these logical units and scaled to fit.
constexpr double kCanvasW = 1000.0;
constexpr double kCanvasH = 560.0;
constexpr double kMainY = 110.0;  // the discharge line
constexpr double kTankY = 505.0;  // where the tank symbols sit
constexpr double kLine = 5.0;     // working lines
constexpr double kPilot = 2.5;    // pilot and drain lines, dashed (ISO 1219-1)
constexpr double kPi = 3.14159265358979323846;
// A distributed line runs along the main line between these x (canvas units).
constexpr double kLineFromX = 420.0;
constexpr double kLineToX = 600.0;

double finite_or(double v, double fallback) { return std::isfinite(v) ? v : fallback; }

// ISO 1219-1 symbols, drawn in canvas units.
struct Symbols {
  QPainter& g;
  QColor ink;  // symbol outlines

  void line(const QPointF& a, const QPointF& b, const QColor& c, double w = kLine) {
    g.setPen(QPen(c, w, Qt::SolidLine, Qt::RoundCap, Qt::RoundJoin));
    g.drawLine(a, b);
  }
  void path(std::initializer_list<QPointF> points, const QColor& c, double w = kLine, bool dashed = false) {
    QPen pen(c, w, Qt::SolidLine, Qt::FlatCap, Qt::RoundJoin);
    if (dashed) pen.setDashPattern({3.0, 2.0});
    g.setPen(pen);
    QPolygonF poly;
    for (const QPointF& p : points) poly << p;
    g.drawPolyline(poly);
  }
  void junction(const QPointF& at, const QColor& c) {
    g.setPen(Qt::NoPen);
    g.setBrush(c);
    g.drawEllipse(at, kLine * 1.1, kLine * 1.1);
    g.setBrush(Qt::NoBrush);
  }
  // Tank (reservoir): a rectangle open at the top; the line enters from above.
  void tank(const QPointF& top_centre) {
    g.setPen(QPen(ink, 2.0));
    const double w = 34, h = 18;
    g.drawPolyline(QPolygonF{{top_centre.x() - w / 2, top_centre.y()},
                             {top_centre.x() - w / 2, top_centre.y() + h},
                             {top_centre.x() + w / 2, top_centre.y() + h},
                             {top_centre.x() + w / 2, top_centre.y()}});
  }
  void arrowHead(const QPointF& tip, double angle, double size, const QColor& c, bool filled = true) {
    const QPointF back(std::cos(angle), std::sin(angle));
    const QPointF side(-back.y(), back.x());
    QPolygonF head{tip, tip - size * back + 0.45 * size * side, tip - size * back - 0.45 * size * side};
    g.setPen(QPen(c, 1.5));
    g.setBrush(filled ? QBrush(c) : QBrush(Qt::NoBrush));
    g.drawPolygon(head);
    g.setBrush(Qt::NoBrush);
  }
  // Adjustable (the diagonal arrow through a symbol).
  void adjustable(const QPointF& centre, double half, double angle_deg) {
    const double a = angle_deg * kPi / 180.0;
    const QPointF d(std::cos(a) * half, -std::sin(a) * half);
    g.setPen(QPen(ink, 2.0));
    g.drawLine(centre - d, centre + d);
    arrowHead(centre + d, -a, 11, ink);
  }
  // A spring: a zigzag from a to b.
  void spring(const QPointF& a, const QPointF& b, double amplitude, int turns = 5) {
    const QPointF d = b - a;
    const double length = std::hypot(d.x(), d.y());
    const QPointF u = d / length, n(-u.y(), u.x());
    QPolygonF z{a};
    for (int i = 0; i < turns * 2; ++i) z << a + u * (length * (i + 0.5) / (turns * 2)) + n * (i % 2 ? -amplitude : amplitude);
    z << b;
    g.setPen(QPen(ink, 2.0));
    g.drawPolyline(z);
  }
  // A fixed restriction (orifice): two facing arcs across the line, here vertical.
  void orifice(const QPointF& c, double half) {
    g.setPen(QPen(ink, 2.0));
    g.drawArc(QRectF(c.x() - half * 1.6, c.y() - half, half * 1.2, half * 2), -60 * 16, 120 * 16);
    g.drawArc(QRectF(c.x() + half * 0.4, c.y() - half, half * 1.2, half * 2), 120 * 16, 120 * 16);
  }
  void label(const QPointF& at, const QString& text, Qt::Alignment align, double size = 15.0, bool bold = false) {
    QFont f = g.font();
    f.setPixelSize(static_cast<int>(size));
    f.setBold(bold);
    g.setFont(f);
    g.setPen(ink);
    QRectF r(at.x() - 300, at.y() - 40, 600, 80);
    if (align & Qt::AlignLeft) r.moveLeft(at.x());
    if (align & Qt::AlignRight) r.moveRight(at.x());
    if (align & Qt::AlignTop) r.moveTop(at.y());
    if (align & Qt::AlignBottom) r.moveBottom(at.y());
    g.drawText(r, static_cast<int>(align), text);
  }
};

}  // namespace

CircuitView::CircuitView(QWidget* parent) : QWidget(parent) {
  setObjectName("circuit-view");
  setAutoFillBackground(true);
}

void CircuitView::setUnits(UnitSystem system) {
  units_ = DisplayUnits::make(system);
  update();
}

void CircuitView::setState(const Sample& now, const ModelParameters& p) {
  now_ = now;
  p_ = p;
  scale_top_ = pressure_scale_top(p.setting, p.relief_setting, p.relief_override);
  along_.clear();
  if (now.x.size() > 0 && now.x.size() <= max_states) {
    const Derived d(p);
    if (d.layout.size == now.x.size()) along_ = line_pressures(d, State(now.x));
  }
  update();
}

double CircuitView::fraction(double pressure) const { return pressure / scale_top_; }

QColor CircuitView::lineColour(Line line) const {
  if (!now_) return pressure_colour(0.0);
  switch (line) {
    case Line::discharge:
    case Line::pilot:
      return pressure_colour(fraction(column_value(*now_, "discharge_pressure")));
    case Line::valve_end:
      return pressure_colour(fraction(now_->valve_end_pressure));
    case Line::control:
      return pressure_colour(fraction(column_value(*now_, "control_pressure")));
    case Line::tank:
      return pressure_colour(fraction(p_.tank_pressure));
  }
  return pressure_colour(0.0);
}

QColor CircuitView::alongLineColour(double share) const {
  if (along_.empty()) return lineColour(Line::discharge);
  // The pressure between the nodes, linear along each reach.
  const double at = std::clamp(share, 0.0, 1.0) * static_cast<double>(along_.size() - 1);
  const std::size_t k = std::min(static_cast<std::size_t>(at), along_.size() - 1);
  const double w = at - static_cast<double>(k);
  const double pressure = k + 1 < along_.size() ? (1.0 - w) * along_[k] + w * along_[k + 1] : along_[k];
  return pressure_colour(fraction(pressure));
}

int CircuitView::readoutBand() const { return std::max(70, static_cast<int>(height() * 0.2)); }

QTransform CircuitView::canvasTransform() const {
  const int band = readoutBand();
  const QRectF area(0, band + 4, width(), height() - band - 4);
  const double scale = std::min(area.width() / kCanvasW, area.height() / kCanvasH);
  QTransform t;
  t.translate(area.left() + (area.width() - kCanvasW * scale) / 2, area.top() + (area.height() - kCanvasH * scale) / 2);
  t.scale(scale, scale);
  return t;
}

QPointF CircuitView::alongLinePoint(double share) const {
  const double s = std::clamp(share, 0.0, 1.0);
  return canvasTransform().map(QPointF(kLineFromX + s * (kLineToX - kLineFromX), kMainY));
}

double CircuitView::spoolShift() const {
  if (!now_ || !(p_.spool_travel > 0.0)) return 0.0;
  return std::clamp((column_value(*now_, "spool_position") / p_.spool_travel + 1.0) / 2.0, 0.0, 1.0);
}

double CircuitView::strokeShown() const {
  if (!now_ || !(p_.max_swash_angle > 0.0)) return 1.0;
  return std::clamp(column_value(*now_, "swash_angle") / p_.max_swash_angle, 0.0, 1.0);
}

double CircuitView::gaugeAngle() const {
  const double f = now_ ? std::clamp(fraction(column_value(*now_, "discharge_pressure")), 0.0, 1.05) : 0.0;
  return -135.0 + 270.0 * f;
}

QString CircuitView::readoutText(int index) const {
  if (!now_) return QStringLiteral("\u2013");
  switch (index) {
    case 0:
      return QStringLiteral("%1 %2").arg(units_.pressure.to_display(column_value(*now_, "discharge_pressure")), 0, 'f',
                                         units_.system == UnitSystem::us ? 0 : 1).arg(units_.pressure.unit);
    case 1:
      return QStringLiteral("%1 %2").arg(units_.flow.to_display(column_value(*now_, "pump_flow")), 0, 'f',
                                         units_.system == UnitSystem::us ? 2 : 1).arg(units_.flow.unit);
    case 2:
      return QStringLiteral("%1 %2").arg(units_.angle.to_display(column_value(*now_, "swash_angle")), 0, 'f', 1)
          .arg(units_.angle.unit);
  }
  return QString();
}

void CircuitView::paintEvent(QPaintEvent*) {
  QPainter g(this);
  g.setRenderHint(QPainter::Antialiasing);
  const QPalette pal = palette();
  const QColor text = pal.color(QPalette::WindowText);
  const QColor base = pal.color(QPalette::Base);
  g.fillRect(rect(), pal.brush(QPalette::Window));

  // ---- the read-outs: big enough to read across a room ----
  const int band = readoutBand();
  const QString captions[] = {tr("discharge pressure"), tr("pump flow"), tr("swash angle")};
  QString extras[3];
  if (now_) {
    extras[0] = tr("setting %1 %2").arg(units_.pressure.to_display(p_.setting), 0, 'f', units_.system == UnitSystem::us ? 0 : 1)
                    .arg(units_.pressure.unit);
    extras[1] = tr("load takes %1 %2").arg(units_.flow.to_display(column_value(*now_, "load_flow")), 0, 'f', 1)
                    .arg(units_.flow.unit);
    extras[2] = tr("%1 % of full stroke").arg(100.0 * strokeShown(), 0, 'f', 0);
  }
  const int gap = 10;
  const int tile_w = (width() - 4 * gap) / 3;
  // One size for the three figures: as big as the tiles take the widest likely text.
  QFont big = font();
  big.setBold(true);
  int px = std::max(14, static_cast<int>(band * 0.42));
  big.setPixelSize(px);
  const QString widest[] = {QStringLiteral("0000.0 bar"), QStringLiteral("000.0 L/min"), QStringLiteral("00.0 deg")};
  for (const QString& w : widest)
    while (px > 12 && QFontMetrics(big).horizontalAdvance(w) > tile_w - 30) big.setPixelSize(--px);
  for (int i = 0; i < 3; ++i) {
    const QRect tile(gap + i * (tile_w + gap), gap, tile_w, band - gap);
    g.setPen(QPen(blend(base, text, 0.2), 1));
    g.setBrush(base);
    g.drawRoundedRect(tile, 6, 6);
    if (i == 0) {  // the pressure's own colour, as on the lines
      g.setPen(Qt::NoPen);
      g.setBrush(lineColour(Line::discharge));
      g.drawRoundedRect(QRect(tile.left(), tile.top(), 10, tile.height()), 4, 4);
    }
    QFont small = font();
    small.setPixelSize(std::clamp(std::min(band / 7, px * 2 / 3), 11, 22));
    g.setPen(blend(text, base, 0.3));
    g.setFont(small);
    const QFontMetrics sfm(small);
    g.drawText(tile.adjusted(18, 4, -8, 0), Qt::AlignLeft | Qt::AlignTop, sfm.elidedText(captions[i], Qt::ElideRight, tile.width() - 26));
    g.drawText(tile.adjusted(18, 0, -8, -4), Qt::AlignLeft | Qt::AlignBottom, sfm.elidedText(extras[i], Qt::ElideRight, tile.width() - 26));
    g.setPen(text);
    g.setFont(big);
    g.drawText(tile.adjusted(18, 0, -8, 0), Qt::AlignLeft | Qt::AlignVCenter, readoutText(i));
  }

  // ---- the diagram ----
  g.save();
  g.setTransform(canvasTransform(), true);
  Symbols s{g, text};
  const QColor pd = lineColour(Line::discharge), pc = lineColour(Line::control), tank = lineColour(Line::tank);
  const QColor pv = lineColour(Line::valve_end);
  const bool waves = lineIsDistributed();

  // Discharge line: pump outlet, the main line, branches to gauge, relief and
  // load valve. A distributed line is drawn wider between the pump-end and
  // valve-end branches, in the colour of the pressure along it.
  const QPointF pump(330, 330);
  const double r = 50;
  s.path({{pump.x(), pump.y() - r}, {pump.x(), kMainY}}, pd);
  if (waves) {
    s.path({{60, kMainY}, {kLineFromX, kMainY}}, pd);
    // One stroke with a gradient: a stop at each node, linear between.
    QLinearGradient along(QPointF(kLineFromX, kMainY), QPointF(kLineToX, kMainY));
    const int nodes = static_cast<int>(along_.size());
    for (int k = 0; k < nodes; ++k) along.setColorAt(k / double(nodes - 1), pressure_colour(fraction(along_[k])));
    g.setPen(QPen(QBrush(along), 2.0 * kLine, Qt::SolidLine, Qt::FlatCap));
    g.drawLine(QPointF(kLineFromX, kMainY), QPointF(kLineToX, kMainY));
    s.path({{kLineToX, kMainY}, {820, kMainY}, {820, 222}}, pv);
    const QString wall = p_.line_wall == static_cast<double>(LineWall::hose)    ? tr("hose")
                         : p_.line_wall == static_cast<double>(LineWall::steel) ? tr("steel tube")
                                                                                : tr("rigid tube");
    const int digits = units_.system == UnitSystem::us ? 0 : 1;
    s.label({(kLineFromX + kLineToX) / 2, kMainY + 14},
            tr("line %1 m, %2 %3 bore, %4\npump end %5, valve end %6 %7")
                .arg(p_.line_length, 0, 'f', 2)
                .arg(units_.length.to_display(p_.line_bore), 0, 'f', units_.system == UnitSystem::us ? 2 : 1)
                .arg(units_.length.unit)
                .arg(wall)
                .arg(units_.pressure.to_display(along_.front()), 0, 'f', digits)
                .arg(units_.pressure.to_display(along_.back()), 0, 'f', digits)
                .arg(units_.pressure.unit),
            Qt::AlignHCenter | Qt::AlignTop, 12);
  } else {
    s.path({{60, kMainY}, {820, kMainY}, {820, 222}}, pd);
  }
  s.junction({pump.x(), kMainY}, pd);
  // Compensator supply (P) from the line, and the pilot sensing discharge pressure.
  const double comp_cx = 190, comp_top = 190, box = 64, box_h = 48;
  s.path({{comp_cx - 16, kMainY}, {comp_cx - 16, comp_top}}, pd);
  s.junction({comp_cx - 16, kMainY}, pd);
  const double shift = spoolShift() * box;  // the envelope moves right as pressure pushes the spool
  const double envelope_left = comp_cx - 32 - box + shift;
  s.path({{60, kMainY}, {60, comp_top + box_h / 2}, {envelope_left - 16, comp_top + box_h / 2}}, pd, kPilot, true);
  s.arrowHead({envelope_left, comp_top + box_h / 2}, 0.0, 14, pd);
  // Compensator valve: two boxes (left: P to A, destrokes; right: A to T, the
  // control piston vents and the bias spring strokes the pump), ports fixed.
  g.setPen(QPen(text, 2.0));
  g.setBrush(base);
  g.drawRect(QRectF(envelope_left, comp_top, box, box_h));
  g.drawRect(QRectF(envelope_left + box, comp_top, box, box_h));
  g.setBrush(Qt::NoBrush);
  // Parallel lines: a proportional valve, any position between.
  g.drawLine(QPointF(envelope_left, comp_top - 7), QPointF(envelope_left + 2 * box, comp_top - 7));
  g.drawLine(QPointF(envelope_left, comp_top + box_h + 7), QPointF(envelope_left + 2 * box, comp_top + box_h + 7));
  const double lx = envelope_left + box / 2, rx = envelope_left + 1.5 * box;
  s.line({lx - 16, comp_top + 4}, {lx, comp_top + box_h - 10}, text, 2.0);  // P -> A
  s.arrowHead({lx, comp_top + box_h - 4}, std::atan2(box_h - 14, 16), 10, text);
  s.line({lx + 16, comp_top}, {lx + 16, comp_top + 12}, text, 2.0);  // T blocked
  s.line({lx + 8, comp_top + 12}, {lx + 24, comp_top + 12}, text, 2.0);
  s.line({rx, comp_top + box_h}, {rx + 16, comp_top + 10}, text, 2.0);  // A -> T
  s.arrowHead({rx + 16, comp_top + 4}, std::atan2(-(box_h - 14), 16), 10, text);
  s.line({rx - 16, comp_top}, {rx - 16, comp_top + 12}, text, 2.0);  // P blocked
  s.line({rx - 24, comp_top + 12}, {rx - 8, comp_top + 12}, text, 2.0);
  // Its spring with the setting screw, on the right end.
  const double spring_from = envelope_left + 2 * box;
  s.spring({spring_from, comp_top + box_h / 2}, {comp_cx + 32 + box + 34, comp_top + box_h / 2}, 9, 4);
  s.adjustable({(spring_from + comp_cx + 32 + box + 34) / 2, comp_top + box_h / 2}, 24, 50);
  s.label({comp_cx + 32 + box + 40, comp_top + box_h / 2 - 2}, tr("compensator\nset %1 %2")
                                                                   .arg(units_.pressure.to_display(p_.setting), 0, 'f', units_.system == UnitSystem::us ? 0 : 1)
                                                                   .arg(units_.pressure.unit),
          Qt::AlignLeft | Qt::AlignVCenter);
  // T to tank; A (control line) to the control piston, through the control-line orifice when fitted.
  s.path({{comp_cx + 16, comp_top}, {comp_cx + 16, comp_top - 22}, {268, comp_top - 22}, {268, kTankY}}, tank);
  s.tank({268, kTankY});
  const double cyl_left = 150, cyl_right = 240, cyl_y = pump.y();
  s.path({{comp_cx, comp_top + box_h}, {comp_cx, 268}, {110, 268}, {110, cyl_y}, {cyl_left, cyl_y}}, pc);
  if (std::isfinite(p_.control_orifice) && p_.control_orifice > 0.0) s.orifice({comp_cx, 255}, 9);
  // The bleed from the control chamber to the case.
  s.path({{110, cyl_y}, {110, 420}}, pc);
  s.junction({110, cyl_y}, pc);
  s.orifice({110, 430}, 9);
  s.path({{110, 440}, {110, kTankY}}, tank);
  s.tank({110, kTankY});
  s.label({98, 430}, tr("bleed"), Qt::AlignRight | Qt::AlignVCenter, 13);

  // Control piston: single-acting cylinder; its rod pushes the swash toward zero stroke.
  g.setPen(QPen(text, 2.0));
  g.setBrush(base);
  g.drawRect(QRectF(cyl_left, cyl_y - 22, cyl_right - cyl_left, 44));
  const double stroke = strokeShown();
  const double piston_x = cyl_left + 14 + (1.0 - stroke) * (cyl_right - cyl_left - 28);
  g.setBrush(pc);
  g.drawRect(QRectF(cyl_left + 2, cyl_y - 20, piston_x - cyl_left - 2, 40));  // the chamber, in its pressure's colour
  g.setBrush(text);
  g.drawRect(QRectF(piston_x, cyl_y - 20, 6, 40));
  g.setBrush(Qt::NoBrush);
  s.line({piston_x + 6, cyl_y}, {pump.x() - r - 2 + (1.0 - stroke) * 0.0, cyl_y}, text, 4.0);
  s.label({(cyl_left + cyl_right) / 2, cyl_y + 28}, tr("control piston"), Qt::AlignHCenter | Qt::AlignTop, 13);

  // The pump: variable displacement, one flow direction, case drain.
  g.setPen(QPen(text, 2.5));
  g.setBrush(base);
  g.drawEllipse(pump, r, r);
  g.setBrush(Qt::NoBrush);
  s.arrowHead({pump.x(), pump.y() - r + 1}, -kPi / 2, 22, text);  // outlet triangle, pointing out
  // The variable-displacement arrow, inclined with the swash: flat at zero stroke, steep at full.
  s.adjustable(pump, r * 1.45, 15.0 + 50.0 * stroke);
  s.label({pump.x() + r + 10, pump.y() - r - 8}, tr("pump"), Qt::AlignLeft | Qt::AlignBottom, 15, true);
  // Bias spring pushing toward full stroke.
  s.spring({pump.x() + r * 0.75, pump.y() - r * 0.66 - 6}, {pump.x() + r + 70, pump.y() - r * 0.66 - 6}, 7, 4);
  s.line({pump.x() + r + 70, pump.y() - r * 0.66 - 22}, {pump.x() + r + 70, pump.y() - r * 0.66 + 10}, text, 3.0);
  s.label({pump.x() + r + 76, pump.y() - r * 0.66 - 6}, tr("bias spring"), Qt::AlignLeft | Qt::AlignVCenter, 13);
  // Drive shaft with its direction of rotation.
  s.line({pump.x() + r, pump.y() + 4}, {pump.x() + r + 52, pump.y() + 4}, text, 2.0);
  s.line({pump.x() + r, pump.y() - 4}, {pump.x() + r + 52, pump.y() - 4}, text, 2.0);
  g.setPen(QPen(text, 2.0));
  g.drawArc(QRectF(pump.x() + r + 14, pump.y() - 18, 24, 36), 200 * 16, 140 * 16);
  s.label({pump.x() + r + 58, pump.y()}, tr("%1 rev/min").arg(p_.speed, 0, 'f', 0), Qt::AlignLeft | Qt::AlignVCenter, 13);
  // Suction and case drain.
  s.path({{pump.x(), pump.y() + r}, {pump.x(), kTankY}}, tank);
  s.tank({pump.x(), kTankY});
  s.path({{pump.x() + r * 0.7, pump.y() + r * 0.7}, {pump.x() + 70, pump.y() + 90}, {pump.x() + 70, kTankY}}, tank, kPilot, true);
  s.tank({pump.x() + 70, kTankY});

  // The swash as it is: a plate at its angle (drawn to twice its size), beside its figure.
  const QPointF plate(pump.x() + 175, pump.y() + 95);
  const double a = 2.0 * column_value(now_ ? *now_ : Sample{}, "swash_angle");
  const double plate_angle = std::isfinite(a) ? a : 0.0;
  const QPointF d(std::sin(plate_angle) * 34, std::cos(plate_angle) * 34);
  g.setPen(QPen(blend(text, base, 0.4), 1.5, Qt::DashLine));
  g.drawLine(plate - QPointF(0, 38), plate + QPointF(0, 38));
  s.line(plate - d, plate + d, lineColour(Line::control), 7.0);
  s.label({plate.x() + 40, plate.y()}, tr("swash\n%1 %2").arg(units_.angle.to_display(finite_or(column_value(now_ ? *now_ : Sample{}, "swash_angle"), 0.0)), 0, 'f', 1).arg(units_.angle.unit),
          Qt::AlignLeft | Qt::AlignVCenter, 13);

  // Pressure gauge on the line, its needle at the pressure.
  const QPointF gauge(waves ? 385 : 470, 56);
  s.path({{gauge.x(), kMainY}, {gauge.x(), gauge.y() + 28}}, pd);
  s.junction({gauge.x(), kMainY}, pd);
  g.setPen(QPen(text, 2.5));
  g.setBrush(base);
  g.drawEllipse(gauge, 28, 28);
  const double needle = (gaugeAngle() - 90.0) * kPi / 180.0;  // 0 deg: straight up
  s.line(gauge, gauge + QPointF(std::cos(needle) * 22, std::sin(needle) * 22), pd, 3.0);
  s.arrowHead(gauge + QPointF(std::cos(needle) * 24, std::sin(needle) * 24), needle, 9, pd);
  s.label({gauge.x() + 36, gauge.y()}, tr("gauge %1").arg(readoutText(0)), Qt::AlignLeft | Qt::AlignVCenter, 15, true);

  // Relief valve: normally closed, spring-loaded, opened by its inlet pressure.
  const QPointF relief(610, 270);
  const bool fitted = std::isfinite(p_.relief_setting);
  s.path({{relief.x(), kMainY}, {relief.x(), relief.y() - 28}}, pv);
  s.junction({relief.x(), kMainY}, pv);
  g.setPen(QPen(text, 2.0));
  g.setBrush(base);
  g.drawRect(QRectF(relief.x() - 28, relief.y() - 28, 56, 56));
  g.setBrush(Qt::NoBrush);
  s.line({relief.x() + 8, relief.y() - 22}, {relief.x() + 8, relief.y() + 16}, text, 2.0);  // offset flow path
  s.arrowHead({relief.x() + 8, relief.y() + 24}, kPi / 2, 10, text);
  s.path({{relief.x(), relief.y() - 40}, {relief.x() - 40, relief.y() - 40}, {relief.x() - 40, relief.y()}, {relief.x() - 28, relief.y()}}, pv, kPilot, true);
  s.spring({relief.x() + 28, relief.y()}, {relief.x() + 70, relief.y()}, 8, 4);
  s.adjustable({relief.x() + 49, relief.y()}, 20, 50);
  s.path({{relief.x(), relief.y() + 28}, {relief.x(), kTankY}}, tank);
  s.tank({relief.x(), kTankY});
  s.label({relief.x() + 76, relief.y()},
          fitted ? tr("relief valve\nopens at %1 %2").arg(units_.pressure.to_display(p_.relief_setting), 0, 'f', units_.system == UnitSystem::us ? 0 : 1).arg(units_.pressure.unit)
                 : tr("relief valve\n(none in this study)"),
          Qt::AlignLeft | Qt::AlignVCenter, 13);

  // Load needle valve: an adjustable restriction to tank.
  const QPointF load(820, 250);
  s.path({{load.x(), load.y() + 28}, {load.x(), kTankY}}, tank);
  s.tank({load.x(), kTankY});
  const double gap_px = 4 + 14 * std::clamp(now_ ? column_value(*now_, "load_opening") : p_.opening, 0.0, 1.0);
  g.setPen(QPen(text, 2.5));
  g.drawArc(QRectF(load.x() - gap_px - 22, load.y() - 28, 22, 56), -60 * 16, 120 * 16);
  g.drawArc(QRectF(load.x() + gap_px, load.y() - 28, 22, 56), 120 * 16, 120 * 16);
  s.adjustable(load, 40, 45);
  s.label({load.x() + 30, load.y() + 40}, tr("load valve\n%1 % open").arg(100.0 * (now_ ? column_value(*now_, "load_opening") : p_.opening), 0, 'f', 1),
          Qt::AlignLeft | Qt::AlignVCenter, 13);

  // The colour scale, labelled in the shown unit.
  const double bar_x = 950, bar_top = 150, bar_bottom = 470;
  for (int i = 0; i < 64; ++i) {
    const double f0 = 1.0 - i / 64.0;
    g.fillRect(QRectF(bar_x, bar_top + (bar_bottom - bar_top) * i / 64.0, 16, (bar_bottom - bar_top) / 64.0 + 0.5),
               pressure_colour(f0));
  }
  g.setPen(QPen(text, 1.0));
  g.drawRect(QRectF(bar_x, bar_top, 16, bar_bottom - bar_top));
  const double top_shown = units_.pressure.to_display(scale_top_);
  for (double v : pressure_scale_ticks(top_shown)) {
    const double y = bar_bottom - (bar_bottom - bar_top) * v / top_shown;
    g.drawLine(QPointF(bar_x - 5, y), QPointF(bar_x, y));
    s.label({bar_x - 8, y}, QString::number(v, 'g', 4), Qt::AlignRight | Qt::AlignVCenter, 12);
  }
  s.label({bar_x + 8, bar_top - 10}, units_.pressure.unit, Qt::AlignHCenter | Qt::AlignBottom, 13, true);
  g.restore();
}

}  // namespace swashtune::ui
