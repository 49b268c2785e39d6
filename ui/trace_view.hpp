// Scrolling strip charts of a run: discharge and control pressure, pump and
// load flow, swash angle, spool position, with a cursor read-out, zoom, and
// numeric read-outs of the present values. Reads samples; computes nothing.
#pragma once

#include <QString>
#include <QWidget>
#include <vector>

#include "display_units.hpp"
#include "swashtune/simulator.hpp"

class QCustomPlot;
class QLabel;

namespace swashtune::ui {

class TraceView : public QWidget {
  Q_OBJECT
 public:
  explicit TraceView(QWidget* parent = nullptr);
  ~TraceView() override;

  void setUnits(UnitSystem system);  // relabels and rescales what is shown
  // Live data: appended in time order. Older samples than the retained
  // history (see setHistorySeconds) are dropped so memory stays bounded.
  void appendSamples(const std::vector<Sample>& samples);
  void clear();                            // live data and cursor, not overlays
  void setWindowSeconds(double seconds);   // visible span while following the run
  void setHistorySeconds(double seconds);  // kept for scrolling back
  void setFollowing(bool following);       // false: the view holds still to be inspected
  bool following() const;

  // Finished runs drawn under the live traces for comparison.
  void addOverlay(const QString& name, const std::vector<Sample>& trace);
  void clearOverlays();
  int overlayCount() const;

  int sampleCount() const;  // live samples held
  double lastTime() const;  // time of the newest live sample, s
  const std::vector<Sample>& liveSamples() const;

  // Saves the charts as one picture; the format follows the suffix: png, svg or pdf.
  bool exportImage(const QString& path, QString* error = nullptr);

  QList<QCustomPlot*> plots() const;  // for tests

 signals:
  void followingChanged(bool following);

 private:
  struct Impl;
  Impl* d;  // owned; deleted in the destructor
};

}  // namespace swashtune::ui
