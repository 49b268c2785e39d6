// Saves a view as a picture with a title band naming the study, so that an
// exported chart says what it shows. PNG, SVG or PDF by the suffix; charts
// (QCustomPlot) are drawn as vectors in SVG and PDF. Written aside and
// renamed: never a half-written picture.
#pragma once

#include <QString>

class QWidget;

namespace swashtune::ui {

struct PictureTitle {
  QString title;     // e.g. "valve-slam demo: loop margins"
  QString subtitle;  // e.g. "valve-slam.toml, t = 0.300 s, metric units, exported 2025-12-02 05:40"
};

bool export_picture(QWidget* content, const QString& path, const PictureTitle& title, QString* error = nullptr);

}  // namespace swashtune::ui
