// Scrolling strip charts of a run: discharge and control pressure with the
// compensator setting as a line (so a setting turned under flow shows as a
// line that moved while the pressure did not), pump and load flow, swash
// angle, spool position; a cursor read-out, zoom anchored at the cursor, and
// numeric read-outs of the present values. Reads samples; computes nothing.
#pragma once

#include <QString>
#include <QWidget>
#include <string>
#include <utility>
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
  // The present state for the read-outs (also while held, when no new sample comes).
  void showPresent(const Sample& present);
  void clear();                            // live data and cursor, not overlays
  // The pressure at the load valve, drawn with the discharge pressure when
  // the study's line is distributed (the two differ only then).
  void setValveEndShown(bool shown);
  bool valveEndShown() const;
  void setWindowSeconds(double seconds);   // visible span while following the run
  // Simulated seconds per wall second: the followed span is 5 s of wall time.
  void setTimeScale(double scale);
  double windowSeconds() const;
  void setHistorySeconds(double seconds);  // kept for scrolling back
  void setFollowing(bool following);       // false: the view holds still to be inspected
  bool following() const;
  std::pair<double, double> timeRange() const;  // the time axis as shown, s

  // Finished runs drawn under the live traces for comparison.
  void addOverlay(const QString& name, const std::vector<Sample>& trace);
  // A recording: its time and the quantities it holds, by trace column name
  // ("discharge_pressure", "load_flow"), in stored units.
  void addMeasuredOverlay(const QString& name, const std::vector<double>& time,
                          const std::vector<std::pair<std::string, std::vector<double>>>& series);
  void clearOverlays();
  int overlayCount() const;
  QStringList legendNames() const;  // the entries of the legend above the charts

  int sampleCount() const;  // live samples held
  double lastTime() const;  // time of the newest live sample, s
  const std::vector<Sample>& liveSamples() const;
  QString readoutText(int index) const;  // for tests: the present-value read-outs

  QList<QCustomPlot*> plots() const;  // for tests

 signals:
  void followingChanged(bool following);

 private:
  struct Impl;
  Impl* d;  // owned; deleted in the destructor
};

}  // namespace swashtune::ui
