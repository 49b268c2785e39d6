// Chart styling shared by the views, derived from the application palette so
// that light and dark desktops both read well.
#pragma once

#include <QColor>
#include <QFont>
#include <QPalette>

class QCPAxis;

namespace swashtune::ui {

// a mixed with b: t = 0 gives a, t = 1 gives b.
QColor blend(const QColor& a, const QColor& b, double t);

bool is_dark(const QPalette& palette);

// The same hue, lightened enough to stand out on a dark background.
QColor for_background(const QColor& colour, bool dark);

// Axis, tick, label and grid pens and fonts from the palette.
void style_axis(QCPAxis* axis, const QPalette& palette, const QFont& font);

}  // namespace swashtune::ui
