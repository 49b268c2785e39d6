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
#include "swashtune/remedies.hpp"
#include "swashtune/sensitivity.hpp"

class QComboBox;
class QCustomPlot;
class QLabel;
class QPushButton;
class QTableWidget;
class QTabWidget;

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
  // For a pump that hunts: the ranked remedies of this design, in the
  // background; each found remedy gets a button that offers it to the
  // comparison (remedyToCompare).
  void findRemedies(const Scenario& design);

  QTabWidget* pages() const { return pages_; }  // "Ranked effects", "Remedies"
  QPushButton* remediesButton() const { return remedies_button_; }
  QTableWidget* remediesTable() const { return remedies_table_; }
  const std::optional<RemedyReport>& remedies() const { return remedies_; }

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
  void remediesRequested();  // the window answers with findRemedies(its present design)
  void remediesFinished();
  void remedyToCompare(const QString& name, const swashtune::Scenario& design);

 private:
  void showRanking();
  Response chosen() const;

  QTabWidget* pages_ = nullptr;
  QComboBox* figure_;
  QPushButton* compute_;
  QLabel* status_;
  QCustomPlot* chart_;
  QLabel* words_;
  QFutureWatcher<SensitivityReport>* watcher_;
  QPushButton* remedies_button_;
  QLabel* remedies_status_;
  QTableWidget* remedies_table_;
  QFutureWatcher<RemedyReport>* remedies_watcher_;
  std::optional<RemedyReport> remedies_;
  Scenario remedies_base_;
  void showRemedies();
  std::optional<SensitivityReport> report_;
  std::vector<std::pair<QString, double>> bars_;
  UnitSystem units_ = UnitSystem::metric;
};

}  // namespace swashtune::ui
