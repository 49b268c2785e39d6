// The views as a person sees them (Qt Test, offscreen): the layout at
// 1280x800 and 1920x1200, legends clear of ticks and data, the time axis,
// zoom at the cursor, the circuit for the room, the pressure-flow view's
// earlier curve, and designs side by side.
#include <qcustomplot.h>

#include <QComboBox>
#include <QFile>
#include <QStatusBar>
#include <QLabel>
#include <QDoubleSpinBox>
#include <QListWidget>
#include <QMenu>
#include <QMenuBar>
#include <QProcess>
#include <QPushButton>
#include <QSignalSpy>
#include <QTableWidget>
#include <QSplitter>
#include <QTabBar>
#include <QTabWidget>
#include <QTableWidget>
#include <QTemporaryDir>
#include <QToolButton>
#include <QWheelEvent>
#include <cmath>

#include "circuit_view.hpp"
#include "sensitivity_view.hpp"
#include "compare_view.hpp"
#include "control_panel.hpp"
#include "desktop_helpers.hpp"
#include "main_window.hpp"
#include "margins_view.hpp"
#include "pressure_flow_view.hpp"
#include "pressure_scale.hpp"
#include "session_controller.hpp"
#include "swashtune/analysis.hpp"
#include "swashtune/metrics.hpp"
#include "trace_columns.hpp"
#include "trace_view.hpp"
#include "troubleshooting_panel.hpp"

using namespace swashtune;
using namespace swashtune::ui;
using namespace desktop_test;

namespace {

void click_tab(QTabWidget* tabs, const QString& title) {
  for (int i = 0; i < tabs->count(); ++i)
    if (tabs->tabText(i) == title)
      QTest::mouseClick(tabs->tabBar(), Qt::LeftButton, {}, tabs->tabBar()->tabRect(i).center());
}

QAction* menu_action(QMainWindow& w, const QString& menu, const QString& text) {
  for (QAction* top : w.menuBar()->actions())
    if (top->text().remove('&') == menu && top->menu())
      for (QAction* a : top->menu()->actions())
        if (a->text().remove('&').startsWith(text)) return a;
  return nullptr;
}

void settle() {
  for (int i = 0; i < 4; ++i) QTest::qWait(20);
}

// Picks an entry of a combo box with the keyboard, as a person does.
void choose(QComboBox* box, const QString& text) {
  box->setFocus();
  const int target = box->findText(text);
  QVERIFY(target >= 0);
  while (box->currentIndex() < target) QTest::keyClick(box, Qt::Key_Down);
  while (box->currentIndex() > target) QTest::keyClick(box, Qt::Key_Up);
}

double number_in(const QString& text) {
  static const QRegularExpression n(QStringLiteral("[-\u2212+]?[0-9]+(\\.[0-9]+)?"));
  const auto m = n.match(text);
  return m.hasMatch() ? QString(m.captured(0)).replace(QChar(0x2212), '-').toDouble() : std::nan("");
}

}  // namespace

class ViewsTest : public QObject {
  Q_OBJECT
 private slots:
  void initTestCase() { QStandardPaths::setTestModeEnabled(true); }

  // The charts keep at least 40 % of the width at both sizes, whatever side
  // tab is shown; the margins panel takes less when the loop is inactive;
  // F9 folds the side panel away.
  void layoutFitsBothSizes() {
    for (const QSize size : {QSize(1280, 800), QSize(1920, 1200)}) {
      MainWindow w(quiet());
      w.resize(size);
      QVERIFY(show_active(w));
      w.openFile(demo);  // full flow at the start: the spool on its stop, the loop inactive
      settle();
      for (const QString& tab :
           {QString("Loop margins"), QString("Pressure-flow"), QString("Parameters"), QString("Troubleshooting")}) {
        click_tab(w.sideTabs(), tab);
        settle();
        const double share = double(w.centreTabs()->width()) / w.width();
        QVERIFY2(share >= 0.4, qPrintable(QString("%1x%2, %3: charts %4 of %5 px")
                                              .arg(size.width())
                                              .arg(size.height())
                                              .arg(tab)
                                              .arg(w.centreTabs()->width())
                                              .arg(w.width())));
        for (QCustomPlot* plot : w.traces()->plots()) QVERIFY(plot->axisRect()->width() > 250);
        qInfo("%dx%d %s: controls %d px, charts %d px (%.0f %%), side panel %d px, chart plot area %dx%d px",
              size.width(), size.height(), qPrintable(tab), w.controlsDock()->width(), w.centreTabs()->width(),
              100.0 * share, w.sideTabs()->width(), w.traces()->plots()[0]->axisRect()->width(),
              w.traces()->plots()[0]->axisRect()->height());
      }
      click_tab(w.sideTabs(), "Loop margins");
      settle();
      const int inactive = w.sideTabs()->width();
      QVERIFY(w.margins()->verdictText().contains("inactive") || w.margins()->gainMarginText() == "none");
      type_into(w.controls()->openingFine(), "0");  // no flow: the loop acts, its figures need room
      w.refreshNow();
      settle();
      const int active = w.sideTabs()->width();
      QVERIFY2(inactive < active,
               qPrintable(QString("side panel %1 px inactive, %2 px active").arg(inactive).arg(active)));
      const int charts = w.centreTabs()->width();
      press(w, Qt::Key_F9, Qt::NoModifier);
      settle();
      QVERIFY(!w.sideTabs()->isVisible());
      QVERIFY(w.centreTabs()->width() > charts + 200);
      press(w, Qt::Key_F9, Qt::NoModifier);
      settle();
      QVERIFY(w.sideTabs()->isVisible());
    }
  }

  // Legends sit outside the charts' plotting areas: the traces (with a run
  // overlaid), the eigenvalues, the pressure-flow view, the comparison.
  void legendsNeverCoverTicksOrData() {
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openFile(demo);
    menu_action(w, "Run", "Run the study's events to the end")->trigger();
    settle();
    QCustomPlot* pressure = w.traces()->plots().front();
    QVERIFY(pressure->legend->visible());
    QVERIFY(!pressure->legend->outerRect().intersects(pressure->axisRect()->outerRect()));
    QCustomPlot* eigen = w.margins()->eigenvaluePlot();
    eigen->replot(QCustomPlot::rpImmediateRefresh);
    QVERIFY(!eigen->legend->outerRect().intersects(eigen->axisRect()->outerRect()));
    click_tab(w.sideTabs(), "Pressure-flow");
    settle();
    QCustomPlot* pf = w.pressureFlow()->plot();
    pf->replot(QCustomPlot::rpImmediateRefresh);
    QVERIFY(!pf->legend->outerRect().intersects(pf->axisRect()->outerRect()));
    click_tab(w.centreTabs(), "Compare");
    QTest::mouseClick(w.compare()->addOpenedButton(), Qt::LeftButton);
    settle();
    QCustomPlot* cmp = w.compare()->plots().front();
    cmp->replot(QCustomPlot::rpImmediateRefresh);
    QVERIFY(!cmp->legend->outerRect().intersects(cmp->axisRect()->outerRect()));
  }

  // A study whose line is distributed draws the pressure at the load valve
  // beside the discharge pressure, with its read-out; a lumped line does not.
  // The demo with its 1 L line as a 3.2 m steel tube of 20 mm bore in
  // `reaches` reaches, written into dir; empty on failure.
  static QString write_long_line(const QTemporaryDir& dir, int reaches) {
    QFile in(demo);
    if (!in.open(QIODevice::ReadOnly)) return {};
    QString text = QString::fromUtf8(in.readAll());
    if (!text.contains(QStringLiteral("volume = \"1 L\""))) return {};
    text.replace(QStringLiteral("volume = \"1 L\""),
                 QStringLiteral("model = \"distributed\"\nlength = \"3.2 m\"\nbore = \"20 mm\"\nreaches = %1").arg(reaches));
    const QString path = dir.filePath(QStringLiteral("long-line.toml"));
    QFile out(path);
    if (!out.open(QIODevice::WriteOnly)) return {};
    out.write(text.toUtf8());
    return path;
  }

  void valveEndPressureIsDrawnForADistributedLine() {
    QTemporaryDir dir;
    const QString path = write_long_line(dir, 4);
    QVERIFY(!path.isEmpty());

    MainWindow w(quiet());
    QVERIFY(show_active(w));
    auto valve_end_graph = [&]() -> QCPGraph* {
      QCustomPlot* pressure = w.traces()->plots().front();
      for (int i = 0; i < pressure->graphCount(); ++i)
        if (pressure->graph(i)->name() == QLatin1String("valve end")) return pressure->graph(i);
      return nullptr;
    };
    QCustomPlot* pressure = w.traces()->plots().front();
    // Run to the end: the run is laid over the charts, one dashed line per
    // pressure it has.
    auto run_to_end = [&] {
      const int before = pressure->graphCount();
      menu_action(w, "Run", "Run the study's events to the end")->trigger();
      for (int waited = 0; pressure->graphCount() == before && waited < 20000; waited += 20) QTest::qWait(20);
      return pressure->graphCount() - before;
    };
    w.openFile(demo);
    settle();
    QVERIFY(valve_end_graph());
    QVERIFY(!valve_end_graph()->visible());
    QCOMPARE(run_to_end(), 2);  // discharge and control

    w.openFile(path);
    settle();
    QVERIFY(valve_end_graph() && valve_end_graph()->visible());
    QVERIFY(w.traces()->findChild<QLabel*>(QStringLiteral("readout_7"))->isVisible());
    QCOMPARE(run_to_end(), 3);  // and the valve end
    auto peak_of = [](const QCPGraph* g) {
      double peak = 0.0;
      for (auto it = g->data()->constBegin(); it != g->data()->constEnd(); ++it) peak = std::max(peak, it->value);
      return peak;
    };
    const int n = pressure->graphCount();
    const double valve_peak = peak_of(pressure->graph(n - 1)), discharge_peak = peak_of(pressure->graph(n - 3));
    QVERIFY(pressure->graph(n - 1)->data()->size() > 1000);
    // The slam's surge: the pump end sees the reflected wave on top of the
    // valve end's (about 281 and 263 bar on this line).
    QVERIFY2(discharge_peak > valve_peak + 5.0, qPrintable(QStringLiteral("%1 %2").arg(discharge_peak).arg(valve_peak)));

    // The line's shape cannot change mid-run: typed into the editor, it
    // starts the run again with it.
    click_tab(w.sideTabs(), "Parameters");
    settle();
    QVERIFY(edit_parameter_cell(w.parameters(), "line.reaches", "6"));
    settle();
    QCOMPARE(w.session()->parametersNow().line_reaches, 6.0);
    QVERIFY(edit_parameter_cell(w.parameters(), "line.model", "lumped"));
    settle();
    QCOMPARE(w.session()->parametersNow().line_model, 0.0);
    QVERIFY(!valve_end_graph()->visible());
  }

  // The circuit draws a distributed line in the colours of the pressures
  // along it: read back from the drawn pixels at its nodes while the slam's
  // wave is in the line, pump end and valve end apart.
  void circuitShowsThePressureAlongTheLine() {
    QTemporaryDir dir;
    const QString path = write_long_line(dir, 6);
    QVERIFY(!path.isEmpty());
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openFile(demo);
    click_tab(w.centreTabs(), "Circuit");
    settle();
    CircuitView* c = w.circuit();
    QVERIFY(!c->lineIsDistributed());  // the demo's lumped line: one pressure
    QCOMPARE(c->lineColour(CircuitView::Line::valve_end), c->lineColour(CircuitView::Line::discharge));

    w.openFile(path);
    settle();
    QTest::mouseClick(w.controls()->closeFastButton(), Qt::LeftButton);
    // 3.2 m at about 1300 m/s: the front of the wave takes 2.5 ms to reach the pump.
    QVERIFY(w.session()->advanceNow(0.0045));
    w.refreshNow();
    settle();
    QVERIFY(c->lineIsDistributed());
    const Sample now = w.session()->latest();
    const double pump_end = column_value(now, "discharge_pressure"), valve_end = now.valve_end_pressure;
    QVERIFY2(std::abs(valve_end - pump_end) > 10e5, qPrintable(QStringLiteral("%1 %2").arg(pump_end).arg(valve_end)));
    QCOMPARE(c->alongLineColour(0.0), pressure_colour(pump_end / c->scaleTop()));
    QCOMPARE(c->alongLineColour(1.0), pressure_colour(valve_end / c->scaleTop()));
    QCOMPARE(c->lineColour(CircuitView::Line::valve_end), pressure_colour(valve_end / c->scaleTop()));
    const QImage drawn = c->grab().toImage();
    const double ratio = drawn.devicePixelRatio();
    auto pixel_at = [&](double share) {
      const QPointF at = c->alongLinePoint(share) * ratio;
      return drawn.pixelColor(static_cast<int>(at.x()), static_cast<int>(at.y()));
    };
    auto near = [](const QColor& a, const QColor& b) {
      return std::abs(a.red() - b.red()) <= 3 && std::abs(a.green() - b.green()) <= 3 && std::abs(a.blue() - b.blue()) <= 3;
    };
    for (int k = 1; k < 6; ++k) {
      const QColor want = c->alongLineColour(k / 6.0), got = pixel_at(k / 6.0);
      QVERIFY2(near(got, want), qPrintable(QStringLiteral("node %1: drawn %2, pressure's %3").arg(k).arg(got.name(), want.name())));
    }
    QVERIFY(!near(c->alongLineColour(0.0), c->alongLineColour(1.0)));
  }

  // The sensitivity tab: the button works the present design out in the
  // background; the bars are ranked by size, coloured by whether the change
  // helps the figure, and the same numbers as core's for that design.
  void sensitivityBarsRankTheParts() {
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openFile(demo);
    settle();
    click_tab(w.sideTabs(), "Sensitivity");
    settle();
    SensitivityView* v = w.sensitivityView();
    QVERIFY(v->isVisible());
    QVERIFY(v->bars().empty());
    QSignalSpy done(v, &SensitivityView::finished);
    QTest::mouseClick(v->computeButton(), Qt::LeftButton);
    QVERIFY(done.wait(60000));
    QVERIFY(v->report().has_value());
    const auto& bars = v->bars();
    QVERIFY(bars.size() >= 5);
    for (std::size_t i = 1; i < bars.size(); ++i) QVERIFY(std::abs(bars[i - 1].second) >= std::abs(bars[i].second));
    // The same figures as core computes for the design on screen.
    const SensitivityReport core_report = sensitivity(w.presentDesign());
    double largest = 0.0;
    QString largest_key;
    for (const ParameterEffect& e : core_report.effects)
      if (e.effect[Response::damping] && std::abs(*e.effect[Response::damping]) > largest) {
        largest = std::abs(*e.effect[Response::damping]);
        largest_key = QString::fromUtf8(e.spec->key.data(), int(e.spec->key.size()));
      }
    QCOMPARE(bars.front().first, largest_key);
    QVERIFY(std::abs(std::abs(bars.front().second) - largest) <= 1e-9 * largest);
    // Colours: damping is better larger, so a bar that raises it is green-ish.
    QCustomPlot* chart = v->chart();
    QCOMPARE(chart->plottableCount(), int(bars.size()));
    for (int i = 0; i < chart->plottableCount(); ++i) {
      const QColor c = chart->plottable(i)->brush().color();
      if (bars[i].second > 0.0) QVERIFY2(c.green() > c.red(), qPrintable(bars[i].first));
      if (bars[i].second < 0.0) QVERIFY2(c.red() > c.green(), qPrintable(bars[i].first));
    }
    QVERIFY(v->wordsText().contains("damping ratio"));
    QVERIFY(v->wordsText().contains("lock out"));
    // Another figure: ranked again from the same report, no new work.
    choose(v->figureBox(), "the off-stroke time");
    QVERIFY(v->wordsText().contains("off-stroke time"));
    QVERIFY(!v->bars().empty());
    if (qEnvironmentVariableIsSet("SWASHTUNE_GRAB")) w.grab().save(qEnvironmentVariable("SWASHTUNE_GRAB"));
    for (std::size_t i = 1; i < v->bars().size(); ++i)
      QVERIFY(std::abs(v->bars()[i - 1].second) >= std::abs(v->bars()[i].second));
    // Shown in ms: the control orifice moves the off-stroke time by milliseconds, not by a few 1e-3.
    for (const auto& bar : v->bars())
      if (bar.first == QStringLiteral("compensator.control_orifice")) QVERIFY2(std::abs(bar.second) > 0.5, qPrintable(QString::number(bar.second)));
  }

  // Remedies for a pump that hunts: found in the background, one row per
  // remedy with core's figures, and its button adds the remedy as a design
  // to the comparison.
  void remediesGoToTheComparison() {
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openFile(QStringLiteral(SWASHTUNE_SOURCE_DIR "/scenarios/hunting-oversized-damping-orifice.toml"));
    settle();
    click_tab(w.sideTabs(), "Sensitivity");
    settle();
    SensitivityView* v = w.sensitivityView();
    click_tab(v->pages(), "Remedies");
    settle();
    QSignalSpy done(v, &SensitivityView::remediesFinished);
    QTest::mouseClick(v->remediesButton(), Qt::LeftButton);
    QVERIFY(done.wait(120000));
    QVERIFY(v->remedies().has_value() && v->remedies()->hunts);
    QTableWidget* table = v->remediesTable();
    int found = 0;
    for (const Remedy& m : v->remedies()->remedies) found += m.found ? 1 : 0;
    QVERIFY(found >= 1);
    QCOMPARE(table->rowCount(), found);
    const Remedy& first = v->remedies()->remedies.front();
    QCOMPARE(table->item(0, 0)->text(), QString::fromStdString(first.action));
    QCOMPARE(table->item(0, 3)->text(), first.run_hunts ? QStringLiteral("still hunts") : QStringLiteral("settles"));
    if (qEnvironmentVariableIsSet("SWASHTUNE_GRAB")) w.grab().save(qEnvironmentVariable("SWASHTUNE_GRAB"));
    const int before = w.compare()->designCount();
    auto* button = qobject_cast<QPushButton*>(table->cellWidget(0, 4));
    QVERIFY(button);
    table->scrollToItem(table->item(0, 0));
    QTest::mouseClick(button, Qt::LeftButton);
    settle();
    QCOMPARE(w.compare()->designCount(), before + 1);
    QVERIFY(w.compare()->designName(before).contains(QString::fromStdString(first.action)));
  }

  // While following, the time axis spans 5 s of wall time at the chosen time scale.
  void timeAxisFollowsTheTimeScale() {
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openFile(demo);
    QCOMPARE(w.traces()->windowSeconds(), 5.0);
    choose(w.controls()->timeScaleBox(), "1/100 slow motion");
    QCOMPARE(w.traces()->windowSeconds(), 0.05);
    const auto range = w.traces()->timeRange();
    QVERIFY(std::abs(range.second - range.first - 0.05) < 1e-12);
    choose(w.controls()->timeScaleBox(), "1/1000 slow motion");
    QCOMPARE(w.traces()->windowSeconds(), 0.005);
    QCOMPARE(w.session()->timeScale(), 0.001);
  }

  // The wheel zooms about the time under the cursor; no pan or zoom shows negative time.
  void zoomAtTheCursorAndNoNegativeTime() {
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openFile(demo);
    w.traces()->setWindowSeconds(0.4);
    QVERIFY(w.session()->advanceNow(0.4));
    w.refreshNow();
    settle();
    QCustomPlot* plot = w.traces()->plots()[1];
    const QRect area = plot->axisRect()->rect();
    const QPointF at(area.left() + 0.7 * area.width(), area.center().y());
    const double under = plot->xAxis->pixelToCoord(at.x());
    const double span_before = plot->xAxis->range().size();
    QWheelEvent in(at, plot->mapToGlobal(at), QPoint(), QPoint(0, 120), Qt::NoButton, Qt::NoModifier, Qt::NoScrollPhase,
                   false);
    QApplication::sendEvent(plot, &in);
    settle();
    QVERIFY(plot->xAxis->range().size() < 0.9 * span_before);
    const double pixel = plot->xAxis->range().size() / area.width();
    QVERIFY2(
        std::abs(plot->xAxis->pixelToCoord(at.x()) - under) < pixel,
        qPrintable(QString("%1 s under the cursor became %2 s").arg(under).arg(plot->xAxis->pixelToCoord(at.x()))));
    QVERIFY(!w.traces()->following());
    // Every chart shows the same time.
    QCOMPARE(w.traces()->plots()[0]->xAxis->range().lower, plot->xAxis->range().lower);
    // Zoom out far at the left edge, then drag right (toward earlier times): never below 0.
    const QPointF left(area.left() + 2, area.center().y());
    for (int i = 0; i < 12; ++i) {
      QWheelEvent out(left, plot->mapToGlobal(left), QPoint(), QPoint(0, -120), Qt::NoButton, Qt::NoModifier,
                      Qt::NoScrollPhase, false);
      QApplication::sendEvent(plot, &out);
    }
    settle();
    QVERIFY2(plot->xAxis->range().lower >= 0.0, qPrintable(QString::number(plot->xAxis->range().lower)));
    const QPoint from = area.center();
    QTest::mousePress(plot, Qt::LeftButton, {}, from);
    QTest::mouseMove(plot, from + QPoint(area.width() / 2, 0));
    QTest::mouseRelease(plot, Qt::LeftButton, {}, from + QPoint(area.width() / 2, 0));
    settle();
    QVERIFY2(plot->xAxis->range().lower >= 0.0, qPrintable(QString::number(plot->xAxis->range().lower)));
    QVERIFY(w.traces()->timeRange().first >= 0.0);
    // A double-click follows the run again.
    QTest::mouseDClick(plot, Qt::LeftButton, {}, area.center());
    QVERIFY(w.traces()->following());
  }

  // The circuit for the room: lines coloured by their pressure on the
  // program's scale, the swash and spool where they are, the gauge at the
  // pressure, big read-outs with core's figures.
  void circuitShowsTheMachineLive() {
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openFile(demo);
    click_tab(w.centreTabs(), "Circuit");
    settle();
    CircuitView* c = w.circuit();
    QVERIFY(c->isVisible());
    Sample now = w.session()->latest();
    const double p_low = column_value(now, "discharge_pressure");
    QCOMPARE(c->readoutText(0), QString("%1 bar").arg(p_low * 1e-5, 0, 'f', 1));
    QCOMPARE(c->readoutText(1), QString("%1 L/min").arg(column_value(now, "pump_flow") * 60000.0, 0, 'f', 1));
    QVERIFY(c->strokeShown() > 0.99);  // full stroke at full flow
    const QColor open_line = c->lineColour(CircuitView::Line::discharge);
    QVERIFY(open_line.blue() > open_line.red());  // 5 bar: the cool end
    const double spool_open = c->spoolShift();
    const double gauge_open = c->gaugeAngle();

    QTest::mouseClick(w.controls()->closeFastButton(), Qt::LeftButton);
    QVERIFY(w.session()->advanceNow(0.2));
    w.refreshNow();
    settle();
    now = w.session()->latest();
    const double p_high = column_value(now, "discharge_pressure");
    QVERIFY(p_high > 200e5);
    QCOMPARE(c->readoutText(0), QString("%1 bar").arg(p_high * 1e-5, 0, 'f', 1));
    QCOMPARE(c->readoutText(2),
             QString("%1 deg").arg(column_value(now, "swash_angle") * 180.0 / 3.14159265358979, 0, 'f', 1));
    const QColor shut_line = c->lineColour(CircuitView::Line::discharge);
    QVERIFY(shut_line.red() > shut_line.blue());  // near the setting: the warm end
    QCOMPARE(shut_line, pressure_colour(p_high / c->scaleTop()));
    QCOMPARE(c->lineColour(CircuitView::Line::tank), pressure_colour(0.0));
    QVERIFY(c->strokeShown() < 0.1);        // destroked
    QVERIFY(c->spoolShift() > spool_open);  // the spool moved toward supplying the control piston
    // A 270 deg dial: the needle turns by 270 deg times the rise over full scale.
    QVERIFY(std::abs(c->gaugeAngle() - gauge_open - 270.0 * (p_high - p_low) / c->scaleTop()) < 1.0);
    // The scale tops out above the most the relief valve lets through (250 bar
    // cracking plus 15 bar override), rounded up to a whole number of bar.
    QVERIFY(c->scaleTop() > 265e5 && c->scaleTop() <= 2.0 * 265e5);
    // The room view: the circuit with the controls, the side panel out of the way.
    press(w, Qt::Key_F10, Qt::NoModifier);
    settle();
    QVERIFY(!w.sideTabs()->isVisible());
    QVERIFY(w.controlsDock()->isVisible());
    QVERIFY(c->width() > 0.7 * w.width());
  }

  // The pressure-flow view keeps the characteristic from before a change of
  // the setting or a parameter as a faint curve, named by what changed.
  void pressureFlowKeepsTheEarlierCharacteristic() {
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openFile(demo);
    click_tab(w.sideTabs(), "Pressure-flow");
    settle();
    QCOMPARE(w.pressureFlow()->previousPoints(), 0);
    type_into(w.controls()->openingFine(), "50");  // the load valve is an input, not the machine: no earlier curve
    w.refreshNow();
    QCOMPARE(w.pressureFlow()->previousPoints(), 0);
    type_into(w.controls()->settingBox(), "180");
    w.refreshNow();
    QVERIFY2(w.pressureFlow()->previousName().contains("compensator.setting 210 bar"),
             qPrintable(w.pressureFlow()->previousName()));
    QCOMPARE(w.pressureFlow()->previousPoints(), 41);
    QVERIFY(w.pressureFlow()->plot()->legend->itemCount() >= 3);  // the curve, the point, the earlier curve
    click_tab(w.sideTabs(), "Parameters");
    QVERIFY(edit_parameter_cell(w.parameters(), "bias_spring.rate", "40 kN/m"));
    w.refreshNow();
    QVERIFY2(w.pressureFlow()->previousName().startsWith("before: bias_spring.rate"),
             qPrintable(w.pressureFlow()->previousName()));
    // A new study starts without one.
    w.openFile(demo);
    QCOMPARE(w.pressureFlow()->previousPoints(), 0);
  }

  // The default pump's cradle friction makes its characteristic a band,
  // shaded between a slow closing (above) and a slow opening; a cradle
  // without friction has one curve.
  void pressureFlowShowsTheFrictionBand() {
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openFile(demo);
    click_tab(w.sideTabs(), "Pressure-flow");
    settle();
    QCOMPARE(w.pressureFlow()->frictionBandPoints(), 41);
    const auto edges = w.pressureFlow()->frictionBandAtNoFlow();
    QVERIFY(edges);
    QVERIFY2(edges->first > edges->second + 0.5 && edges->first < edges->second + 5.0,
             qPrintable(QStringLiteral("%1 / %2 bar").arg(edges->first).arg(edges->second)));
    click_tab(w.sideTabs(), "Parameters");
    QVERIFY(edit_parameter_cell(w.parameters(), "pump.swash_friction", "0"));
    w.refreshNow();
    QCOMPARE(w.pressureFlow()->frictionBandPoints(), 0);
    QVERIFY(!w.pressureFlow()->frictionBandAtNoFlow());
  }

  // Designs side by side: the study as opened, as edited, a fault variant
  // and a recording on the study's events, figures from core with the
  // differences to the chosen baseline.
  void designsSideBySide() {
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openFile(demo);
    click_tab(w.sideTabs(), "Parameters");
    QVERIFY(edit_parameter_cell(w.parameters(), "line.volume", "2 L"));
    click_tab(w.centreTabs(), "Compare");
    settle();
    CompareView* c = w.compare();
    QVERIFY(!c->addRecordingButton()->isEnabled());
    QTest::mouseClick(c->addOpenedButton(), Qt::LeftButton);
    QTest::mouseClick(c->addPresentButton(), Qt::LeftButton);
    // A fault from the button's menu, as a person picks it.
    QTimer::singleShot(100, [c] {
      auto* menu = qobject_cast<QMenu*>(QApplication::activePopupWidget());
      if (!menu) return;
      for (QAction* a : menu->actions())
        if (a->objectName() == "faults.entrained_air")
          QTest::mouseClick(menu, Qt::LeftButton, {}, menu->actionGeometry(a).center());
    });
    QTest::mouseClick(c->addFaultButton(), Qt::LeftButton);
    QTRY_COMPARE(c->designCount(), 3);
    QVERIFY(c->designName(2).startsWith("entrained air 3 %"));
    QVERIFY(w.troubleshooting()->loadRecording(
        QStringLiteral(SWASHTUNE_SOURCE_DIR "/scenarios/field/log-turner-slam.csv")));
    QVERIFY(c->addRecordingButton()->isEnabled());
    QTest::mouseClick(c->addRecordingButton(), Qt::LeftButton);
    QCOMPARE(c->designCount(), 4);

    // The figures are core's, on the study's events.
    Scenario opened = w.study();
    Scenario edited = w.study();
    edited.parameters.line_volume = 0.002;
    Scenario aerated = edited;
    aerated.parameters.fault_entrained_air = 0.03;
    const RunResult r0 = run_scenario(opened), r1 = run_scenario(edited), r2 = run_scenario(aerated);
    const double p0 = r0.peak_discharge_pressure * 1e-5, p1 = r1.peak_discharge_pressure * 1e-5,
                 p2 = r2.peak_discharge_pressure * 1e-5;
    QCOMPARE(c->cell("peak pressure over the run", 0), QString::number(p0, 'f', 1));
    QCOMPARE(number_in(c->cell("peak pressure over the run", 1)), std::round(p1 * 10) / 10);
    const QString diff = c->cell("peak pressure over the run", 1);
    QVERIFY2(std::abs(number_in(diff.mid(diff.indexOf('('))) - (p1 - p0)) <= 0.051, qPrintable(diff));
    QCOMPARE(number_in(c->cell("peak pressure over the run", 2)), std::round(p2 * 10) / 10);
    const std::vector<EventMetrics> m1 = event_metrics(edited, r1);
    QCOMPARE(number_in(c->cell("settling", 1, 0)), std::round(*m1[0].settling_time * 1e4) / 10);
    QCOMPARE(number_in(c->cell("off-stroke time", 1)), std::round(*m1[0].swash_response_time * 1e4) / 10);
    QCOMPARE(number_in(c->cell("on-stroke time", 1)), std::round(*m1[1].swash_response_time * 1e4) / 10);
    QCOMPARE(number_in(c->cell("overshoot", 1, 0)), std::round(*m1[0].overshoot_percent * 10) / 10);
    QCOMPARE(number_in(c->cell("undershoot", 1, 1)), std::round(*m1[1].undershoot_percent * 10) / 10);
    ModelParameters no_flow = edited.parameters;
    no_flow.opening = 0.0;
    const StabilityReport s1 = analyse_stability(no_flow, edited.settings);
    QCOMPARE(number_in(c->cell("gain margin", 1)), std::round(*s1.margins.gain_margin_db * 100) / 100);
    QCOMPARE(number_in(c->cell("modulus margin", 1)), std::round(*s1.margins.modulus_margin * 1000) / 1000);
    // What a recording cannot tell, and what it can.
    QCOMPARE(c->cell("settling", 3, 0), QString("not recorded"));
    QVERIFY(!c->cell("oscillation", 3, 0).isEmpty());
    QVERIFY(std::isfinite(number_in(c->cell("peak", 3, 1))));

    // Another baseline: the differences are to it.
    choose(c->baselineBox(), c->designName(1));
    QCOMPARE(c->baseline(), 1);
    QCOMPARE(number_in(c->cell("peak pressure over the run", 1)), std::round(p1 * 10) / 10);
    QVERIFY(!c->cell("peak pressure over the run", 1).contains("("));
    const QString back = c->cell("peak pressure over the run", 0);
    QVERIFY2(std::abs(number_in(back.mid(back.indexOf('('))) - (p0 - p1)) <= 0.051, qPrintable(back));

    // Remove the one selected in the list.
    c->designList()->setCurrentRow(2);
    QTest::mouseClick(c->removeButton(), Qt::LeftButton);
    QCOMPARE(c->designCount(), 3);
    QVERIFY(c->designName(2).startsWith("recorded"));
    // A new study starts a new comparison.
    w.openFile(under_flow);
    QCOMPARE(c->designCount(), 0);
  }

  // --screenshot renders the circuit, the room view and the comparison table.
  void screenshotsOfTheNewViews() {
    QTemporaryDir dir;
    for (const char* view : {"circuit", "room", "compare"}) {
      const QString png = dir.filePath(QString(view) + ".png");
      QProcess app;
      app.start(SWASHTUNE_DESKTOP, {"--screenshot", png, "--run-for", "0.3", "--view", view});
      QVERIFY(app.waitForFinished(60000));
      QCOMPARE(app.exitCode(), 0);
      QCOMPARE(QImage(png).size(), QSize(1280, 800));
    }
    QProcess bad;
    bad.start(SWASHTUNE_DESKTOP, {"--screenshot", dir.filePath("x.png"), "--view", "everything"});
    QVERIFY(bad.waitForFinished(60000));
    QCOMPARE(bad.exitCode(), 2);
  }
};

QTEST_MAIN(ViewsTest)
#include "test_desktop_views.moc"
