#include "plot_style.hpp"

#include <qcustomplot.h>

#include <algorithm>

namespace swashtune::ui {

QColor blend(const QColor& a, const QColor& b, double t) {
  return QColor::fromRgbF(static_cast<float>(a.redF() * (1 - t) + b.redF() * t),
                          static_cast<float>(a.greenF() * (1 - t) + b.greenF() * t),
                          static_cast<float>(a.blueF() * (1 - t) + b.blueF() * t));
}

bool is_dark(const QPalette& palette) { return palette.color(QPalette::Base).lightnessF() < 0.5; }

QColor for_background(const QColor& colour, bool dark) {
  if (!dark) return colour;
  float h, s, l, a;
  colour.getHslF(&h, &s, &l, &a);
  return QColor::fromHslF(h, s * 0.9f, std::max(l, 0.66f), a);
}

void style_axis(QCPAxis* axis, const QPalette& palette, const QFont& font) {
  const QColor text = palette.color(QPalette::WindowText);
  const QColor base = palette.color(QPalette::Base);
  const QPen line(blend(text, base, 0.45), 1);
  axis->setBasePen(line);
  axis->setTickPen(line);
  axis->setSubTickPen(line);
  axis->setTickLabelColor(text);
  axis->setLabelColor(text);
  axis->setTickLabelFont(font);
  axis->setLabelFont(font);
  axis->grid()->setPen(QPen(blend(base, text, 0.13), 1));
  axis->grid()->setSubGridPen(QPen(blend(base, text, 0.06), 1));
  axis->grid()->setZeroLinePen(QPen(blend(base, text, 0.3), 1));
}

}  // namespace swashtune::ui
