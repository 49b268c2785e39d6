// Designs side by side: any number of designs (the study as opened, the
// design as edited, fault variants, a loaded recording) run on the same
// events, their pressure and swash overlaid with a legend naming each, and a
// table of their figures (peak, overshoot or undershoot, settling, off- and
// on-stroke times, oscillation, margins at no flow, modulus margin) with the
// differences to a chosen baseline. Every figure comes from core.
#pragma once

#include <QString>
#include <QWidget>
#include <optional>
#include <vector>

#include "display_units.hpp"
#include "swashtune/analysis.hpp"
#include "swashtune/field_trace.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/scenario.hpp"

class QComboBox;
class QCustomPlot;
class QLabel;
class QListWidget;
class QPushButton;
class QTableWidget;
class QToolButton;

namespace swashtune::ui {

class CompareView : public QWidget {
  Q_OBJECT
 public:
  enum class Source { opened, present, fault, recording };

  explicit CompareView(QWidget* parent = nullptr);
  ~CompareView() override;

  void setUnits(UnitSystem system);
  // The study whose events every design runs on; a new study clears the designs.
  void setStudy(const Scenario& study);
  // Adds a design: its parameters with the study's events and settings. It
  // is run at once; false (with lastMessage()) when the run fails.
  bool addDesign(const QString& name, const Scenario& design, Source source);
  bool addRecording(const QString& name, const FieldTrace& recording);
  void removeDesign(int index);
  void clear();
  void setBaseline(int index);
  void setRecordingAvailable(bool available);  // the "recording" button

  int designCount() const;
  QString designName(int index) const;
  int baseline() const;
  QString lastMessage() const;

  // The table as shown, for tests and export: a row's label and a cell's text.
  QTableWidget* table() const { return table_; }
  // The `occurrence`-th row whose label starts with this (events repeat their rows); -1 when none.
  int rowOf(const QString& label, int occurrence = 0) const;
  QString cell(const QString& row_label, int design, int occurrence = 0) const;
  QPushButton* addOpenedButton() const { return add_opened_; }
  QPushButton* addPresentButton() const { return add_present_; }
  QToolButton* addFaultButton() const { return add_fault_; }
  QPushButton* addRecordingButton() const { return add_recording_; }
  QPushButton* removeButton() const { return remove_; }
  QComboBox* baselineBox() const { return baseline_box_; }
  QListWidget* designList() const { return list_; }
  QList<QCustomPlot*> plots() const;

 protected:
  bool eventFilter(QObject* watched, QEvent* event) override;

 signals:
  // A button asks for a design; the owner knows the present design and the recording.
  void designRequested(swashtune::ui::CompareView::Source source, const QString& fault_key);

 private:
  struct Design {
    QString name;
    Source source;
    Scenario scenario;
    std::optional<FieldTrace> recording;
    std::optional<RunResult> run;
    std::vector<EventMetrics> metrics;
    std::optional<StabilityReport> no_flow;  // the loop at no flow
    QColor colour;
  };
  void rebuild();
  void redrawCharts();
  void refillTable();
  void refillBaselines();
  QColor nextColour() const;

  DisplayUnits units_ = DisplayUnits::make(UnitSystem::metric);
  Scenario study_;
  std::vector<Design> designs_;
  int baseline_ = 0;
  QString message_;
  QPushButton* add_opened_;
  QPushButton* add_present_;
  QToolButton* add_fault_;
  QPushButton* add_recording_;
  QPushButton* remove_;
  QComboBox* baseline_box_;
  QListWidget* list_;
  QLabel* note_;
  QCustomPlot* pressure_plot_;
  QCustomPlot* swash_plot_;
  QTableWidget* table_;
};

}  // namespace swashtune::ui
