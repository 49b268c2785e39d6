// The loop's stability at the present operating point: closed-loop
// eigenvalues in the complex plane, the Bode plot of L(jw) (the displacement
// loop opened at the swash angle in the pump flow) with every gain and phase
// crossover marked and the smallest margins bracketed, and the figures in
// numbers and plain words. The verdict comes from the eigenvalues; a margin
// is drawn as good news only when the loop is stable and the margin applies.
// Everything shown comes from core's StabilityReport; nothing is computed here.
#pragma once

#include <QString>
#include <QWidget>

#include "display_units.hpp"
#include "swashtune/analysis.hpp"

class QCustomPlot;
class QLabel;

namespace swashtune::ui {

class MarginsView : public QWidget {
  Q_OBJECT
 public:
  explicit MarginsView(QWidget* parent = nullptr);
  ~MarginsView() override;
  void setUnits(UnitSystem system);  // units of the operating point's figures
  void setReport(const StabilityReport& report);

  // The figures as shown, e.g. "14.67 dB", "37.5 deg", "77.78 Hz", "none";
  // a margin that does not apply is followed by " (does not apply)".
  QString gainMarginText() const;
  QString phaseMarginText() const;
  QString modulusMarginText() const;
  QString crossoverText() const;
  QString dominantText() const;     // e.g. "292.1 Hz, damping ratio 0.1245"
  QString verdictText() const;      // "stable" / "UNSTABLE: ..." / loop inactive
  QString explanationText() const;  // the plain-words reading, one line per figure
  // The colour the gain margin's figure is drawn in (green only when the loop
  // is stable and the margin applies).
  QColor gainMarginColour() const;
  QColor goodColour() const;  // the "good news" colour of the present palette
  // Vertical marks in the Bode plot: one per gain and per phase crossover.
  int crossingMarkCount() const;

  QCustomPlot* eigenvaluePlot() const;
  QCustomPlot* bodePlot() const;

 private:
  struct Impl;
  Impl* d;  // owned; deleted in the destructor
};

// The formatting used by the view (shared with tests and the CLI's habits).
QString format_margin_db(const std::optional<double>& v);
QString format_margin_deg(const std::optional<double>& v);
QString format_frequency(const std::optional<double>& v);
QString format_modulus(const std::optional<double>& v);

}  // namespace swashtune::ui
