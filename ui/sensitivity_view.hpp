// Which design change moves which figure: the tunable parameters ranked by
// their effect on the figure chosen, as horizontal bars (green where the
// change improves the figure, red where it worsens it, grey where neither
// is better), with the largest effects in words. core's sensitivity()
// computes everything, in the background; the view only shows it.
#pragma once

#include <QFutureWatcher>
#include <QString>
#include <QWidget>
#include <optional>
#include <utility>
#include <vector>

#include "swashtune/scenario.hpp"
#include "swashtune/sensitivity.hpp"

class QComboBox;
class QCustomPlot;
class QLabel;
class QPushButton;

namespace swashtune::ui {

class SensitivityView : public QWidget {
  Q_OBJECT
 public:
  explicit SensitivityView(QWidget* parent = nullptr);
  ~SensitivityView() override;
  void setUnits(UnitSystem system);
  // Works the sensitivities of this design out on other threads; the bars
  // follow when done.
  void compute(const Scenario& design);
  bool busy() const;

  QPushButton* computeButton() const { return compute_; }
  QComboBox* figureBox() const { return figure_; }
  QCustomPlot* chart() const { return chart_; }
  // The bars as drawn, top (largest) first: the parameter's key and the
  // figure's change for the parameter's change, in the shown unit.
  const std::vector<std::pair<QString, double>>& bars() const { return bars_; }
  QString wordsText() const;
  const std::optional<SensitivityReport>& report() const { return report_; }

 signals:
  void computeRequested();  // the button: the window answers with compute(its present design)
  void finished();

 private:
  void showRanking();
  Response chosen() const;

  QComboBox* figure_;
  QPushButton* compute_;
  QLabel* status_;
  QCustomPlot* chart_;
  QLabel* words_;
  QFutureWatcher<SensitivityReport>* watcher_;
  std::optional<SensitivityReport> report_;
  std::vector<std::pair<QString, double>> bars_;
  UnitSystem units_ = UnitSystem::metric;
};

}  // namespace swashtune::ui
