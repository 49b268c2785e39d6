#include "picture_export.hpp"

#include <qcustomplot.h>

#include <QFileInfo>
#include <QImage>
#include <QLayout>
#include <QPageSize>
#include <QPainter>
#include <QPdfWriter>
#include <QSaveFile>
#include <QSvgGenerator>

namespace swashtune::ui {
namespace {

int band_height(const QWidget* w) {
  const QFontMetrics fm(w->font());
  return static_cast<int>(fm.height() * 1.35) + fm.height() + 16;
}

void paint(QCPPainter& painter, QWidget* content, const PictureTitle& title, bool vector) {
  const int band = band_height(content);
  const QPalette pal = content->palette();
  painter.fillRect(QRect(0, 0, content->width(), content->height() + band), pal.brush(QPalette::Window));
  QFont big = content->font();
  big.setBold(true);
  big.setPointSizeF(big.pointSizeF() * 1.3);
  painter.setPen(pal.color(QPalette::WindowText));
  painter.setFont(big);
  const QFontMetrics bigFm(big);
  painter.drawText(QRect(10, 6, content->width() - 20, bigFm.height()), Qt::AlignLeft | Qt::AlignVCenter, title.title);
  painter.setFont(content->font());
  painter.drawText(QRect(10, 8 + bigFm.height(), content->width() - 20, QFontMetrics(content->font()).height()),
                   Qt::AlignLeft | Qt::AlignVCenter, title.subtitle);
  painter.translate(0, band);
  content->render(&painter, QPoint(0, 0), QRegion(), QWidget::DrawChildren);
  if (!vector) return;
  // The charts once more, as vectors, over their pixel copies.
  painter.setMode(QCPPainter::pmVectorized);
  painter.setMode(QCPPainter::pmNoCaching);
  for (QCustomPlot* plot : content->findChildren<QCustomPlot*>()) {
    if (!plot->isVisibleTo(content)) continue;
    painter.save();
    painter.translate(plot->mapTo(content, QPoint(0, 0)));
    plot->toPainter(&painter, plot->width(), plot->height());
    painter.restore();
  }
}

}  // namespace

bool export_picture(QWidget* content, const QString& path, const PictureTitle& title, QString* error) {
  auto fail = [&](const QString& why) {
    if (error) *error = why;
    return false;
  };
  const QString suffix = QFileInfo(path).suffix().toLower();
  if (suffix != QLatin1String("png") && suffix != QLatin1String("svg") && suffix != QLatin1String("pdf"))
    return fail(QStringLiteral("%1: unknown picture format \"%2\"; use .png, .svg or .pdf").arg(path, suffix));
  if (content->width() < 50 || content->height() < 50)
    return fail(QStringLiteral("%1: the view has no room to draw; show it first").arg(path));
  if (content->layout()) content->layout()->activate();
  for (QCustomPlot* plot : content->findChildren<QCustomPlot*>()) plot->replot(QCustomPlot::rpImmediateRefresh);

  const int band = band_height(content);
  const QSize size(content->width(), content->height() + band);
  QSaveFile file(path);
  if (!file.open(QIODevice::WriteOnly))
    return fail(QStringLiteral("%1: cannot write: %2").arg(path, file.errorString()));
  bool drawn = false;
  if (suffix == QLatin1String("png")) {
    const qreal ratio = content->devicePixelRatioF();
    QImage image(size * ratio, QImage::Format_ARGB32_Premultiplied);
    image.setDevicePixelRatio(ratio);
    QCPPainter painter;
    if (painter.begin(&image)) {
      paint(painter, content, title, false);
      painter.end();
      drawn = image.save(&file, "PNG");
    }
  } else if (suffix == QLatin1String("svg")) {
    QSvgGenerator svg;
    svg.setOutputDevice(&file);
    svg.setSize(size);
    svg.setViewBox(QRect(QPoint(0, 0), size));
    svg.setResolution(content->logicalDpiX());
    svg.setTitle(title.title);
    svg.setDescription(title.subtitle);
    QCPPainter painter;
    if (painter.begin(&svg)) {
      paint(painter, content, title, true);
      drawn = painter.end();
    }
  } else {
    QPdfWriter pdf(&file);
    pdf.setCreator(QStringLiteral("Swashtune"));
    pdf.setTitle(title.title);
    pdf.setResolution(content->logicalDpiX());  // one device unit per screen pixel: fonts keep their proportions
    pdf.setPageMargins(QMarginsF(0, 0, 0, 0));
    const double toPoints = 72.0 / content->logicalDpiX();
    pdf.setPageSize(QPageSize(QSizeF(size.width() * toPoints, size.height() * toPoints), QPageSize::Point, QString(),
                              QPageSize::ExactMatch));
    QCPPainter painter;
    if (painter.begin(&pdf)) {
      paint(painter, content, title, true);
      drawn = painter.end();
    }
  }
  if (!drawn) {
    file.cancelWriting();
    return fail(QStringLiteral("%1: the picture could not be drawn").arg(path));
  }
  if (!file.commit()) return fail(QStringLiteral("%1: cannot write: %2").arg(path, file.errorString()));
  return true;
}

}  // namespace swashtune::ui
