// The desktop program as a person uses it, offscreen (Qt Test).
#include <QCheckBox>
#include <QComboBox>
#include <QDoubleSpinBox>
#include <QImage>
#include <QJsonArray>
#include <QJsonDocument>
#include <QJsonObject>
#include <QProcess>
#include <QPushButton>
#include <QSignalSpy>
#include <QSlider>
#include <QSpinBox>
#include <QStandardPaths>
#include <QTemporaryDir>
#include <QtTest>
#include <cmath>

#include "control_panel.hpp"
#include "main_window.hpp"
#include "margins_view.hpp"
#include "session_controller.hpp"
#include "swashtune/atomic_file.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/simulator.hpp"
#include "trace_view.hpp"
#include "troubleshooting_panel.hpp"

using namespace swashtune;
using namespace swashtune::ui;

namespace {

const QString demo = QStringLiteral(SWASHTUNE_SOURCE_DIR "/scenarios/valve-slam.toml");

MainWindow::Options quiet() {
  MainWindow::Options o;
  o.interactive = false;
  o.autosave = false;
  return o;
}

const Event& last_event(const Scenario& s) { return s.events.back(); }

// Runs the session live (wall clock) for `ms` while the display timer works.
void run_for(MainWindow& w, int ms) {
  w.session()->start();
  QTest::qWait(ms);
  w.session()->pause();
  w.refreshNow();
}

}  // namespace

class DesktopTest : public QObject {
  Q_OBJECT
 private slots:
  void initTestCase() { QStandardPaths::setTestModeEnabled(true); }

  // Every control acts through an event on the core parameter it names.
  void eachControlChangesItsParameterThroughAnEvent() {
    MainWindow w(quiet());
    w.openFile(demo);
    ControlPanel* c = w.controls();

    c->openingFine()->setValue(50.0);
    Scenario s = w.session()->sessionScenario();
    QCOMPARE(QString::fromStdString(last_event(s).target), QString("load.opening"));
    QCOMPARE(last_event(s).to, 0.5);
    QCOMPARE(w.session()->parametersNow().opening, 0.5);

    c->openingSlider()->setValue(250);  // coarse: 25 %
    QCOMPARE(w.session()->sessionScenario().events.back().to, 0.25);

    c->rampMs()->setValue(8.0);
    QTest::mouseClick(c->closeFastButton(), Qt::LeftButton);
    s = w.session()->sessionScenario();
    QCOMPARE(last_event(s).to, 0.0);
    QCOMPARE(last_event(s).ramp, 0.008);

    c->settingBox()->setValue(180.0);  // bar
    s = w.session()->sessionScenario();
    QCOMPARE(QString::fromStdString(last_event(s).target), QString("compensator.setting"));
    QVERIFY(std::abs(last_event(s).to - 180e5) < 1e-6);

    c->speedBox()->setValue(1500);
    s = w.session()->sessionScenario();
    QCOMPARE(QString::fromStdString(last_event(s).target), QString("pump.speed"));
    QCOMPARE(last_event(s).to, 1500.0);
    QVERIFY(w.isModified());
  }

  void runningFillsTracesPausingFreezesResetReturnsToSteadyState() {
    MainWindow w(quiet());
    w.openFile(demo);
    QCOMPARE(w.traces()->sampleCount(), 0);
    run_for(w, 400);
    const int filled = w.traces()->sampleCount();
    QVERIFY2(filled > 50, qPrintable(QString("only %1 samples after 0.4 s").arg(filled)));
    QTest::qWait(200);
    w.refreshNow();
    QCOMPARE(w.traces()->sampleCount(), filled);  // held: nothing new

    w.controls()->closeFastButton()->click();
    QVERIFY(w.session()->advanceNow(0.05));
    w.session()->resetToSteadyState();
    QCOMPARE(w.session()->simulatedTime(), 0.0);
    const OperatingPoint start = w.session()->startingPoint();
    QCOMPARE(w.session()->latest().x, start.condition.x);
    QVERIFY(start.converged);
    // Reset at the present settings: the valve is shut, so it is deadhead.
    QVERIFY(std::abs(start.condition.x[state::discharge_pressure] / 210e5 - 1.0) < 0.02);
  }

  // A live session saved as a scenario and replayed gives the same trace.
  void liveSessionSavedAndReplayedGivesTheSameTrace() {
    MainWindow w(quiet());
    w.openStudy(Scenario{}, QString());  // no scripted events: only the person's
    run_for(w, 150);
    w.controls()->closeFastButton()->click();
    run_for(w, 150);
    w.controls()->settingBox()->setValue(190.0);
    run_for(w, 100);
    w.controls()->openFastButton()->click();
    run_for(w, 150);
    const std::vector<Sample> live = w.traces()->liveSamples();
    QVERIFY(live.size() > 100);

    QTemporaryDir dir;
    const QString path = dir.filePath("session.toml");
    QVERIFY(w.saveTo(path));
    QVERIFY(!w.isModified());
    const Scenario saved = load_scenario(path.toStdString());
    QCOMPARE(saved.events.size(), std::size_t(3));
    const RunResult replay = run_scenario(saved);
    std::size_t compared = 0;
    double worst = 0.0;
    for (const Sample& s : live) {
      const double t = s.time;
      if (t > replay.trace.back().time) break;
      const double replayed = trace_value_at(replay.trace, t, discharge_pressure_of);
      worst = std::max(worst, std::abs(replayed - s.x[state::discharge_pressure]));
      ++compared;
    }
    QVERIFY(compared + 2 >= live.size());
    QVERIFY2(worst < 1e-3 * 210e5, qPrintable(QString("worst difference %1 Pa").arg(worst)));
  }

  // The margins view shows the numbers swashtune-cli stability prints.
  void marginsViewShowsTheCliNumbers() {
    QProcess cli;
    cli.start(SWASHTUNE_CLI, {"stability", demo, "--opening", "0", "--json"});
    QVERIFY(cli.waitForFinished(30000));
    QCOMPARE(cli.exitCode(), 0);
    const QJsonObject loop = QJsonDocument::fromJson(cli.readAllStandardOutput()).object()["loop"].toObject();
    QVERIFY(loop["gain_margin_dB"].isDouble());
    QVERIFY(loop["applies"].toBool());

    MainWindow w(quiet());
    w.openFile(demo);
    w.controls()->openingFine()->setValue(0.0);
    w.refreshNow();
    QCOMPARE(w.margins()->gainMarginText(), format_margin_db(loop["gain_margin_dB"].toDouble()));
    QCOMPARE(w.margins()->phaseMarginText(), format_margin_deg(loop["phase_margin_deg"].toDouble()));
    QVERIFY(w.margins()->modulusMarginText().startsWith(format_modulus(loop["modulus_margin"].toDouble())));
    QStringList crossovers;
    for (const QJsonValue& c : loop["gain_crossovers"].toArray())
      crossovers << format_frequency(c.toObject()["frequency_Hz"].toDouble());
    QCOMPARE(w.margins()->crossoverText(), crossovers.join(", "));
    // A stable loop whose margins apply: good news, in plain words.
    QCOMPARE(w.margins()->gainMarginColour(), w.margins()->goodColour());
    QVERIFY2(w.margins()->explanationText().contains("times more gain"), qPrintable(w.margins()->explanationText()));
  }

  // The hunting demo reads as unstable, every crossing is marked, and the
  // margins (whose inner loop is unstable by itself) are never drawn as safe.
  void marginsViewNeverPaintsTheHuntingDemoSafe() {
    const QString hunting = QStringLiteral(SWASHTUNE_SOURCE_DIR "/scenarios/hunting-oversized-damping-orifice.toml");
    QProcess cli;
    cli.start(SWASHTUNE_CLI, {"stability", hunting, "--json"});
    QVERIFY(cli.waitForFinished(30000));
    const QJsonObject doc = QJsonDocument::fromJson(cli.readAllStandardOutput()).object();
    const QJsonObject loop = doc["loop"].toObject();
    QVERIFY(!doc["stable"].toBool());

    MainWindow w(quiet());
    w.openFile(hunting);
    w.refreshNow();
    QVERIFY2(w.margins()->verdictText().startsWith("UNSTABLE"), qPrintable(w.margins()->verdictText()));
    QCOMPARE(w.margins()->crossingMarkCount(),
             loop["gain_crossovers"].toArray().size() + loop["phase_crossovers"].toArray().size());
    QVERIFY(w.margins()->crossingMarkCount() >= 2);
    if (!loop["applies"].toBool()) QVERIFY(w.margins()->gainMarginText().endsWith("(does not apply)"));
    QVERIFY(w.margins()->gainMarginColour() != w.margins()->goodColour());
    QVERIFY(w.margins()->explanationText().contains("UNSTABLE"));
  }

  void settingUnderFlowWarnsAndAtDeadheadDoesNot() {
    {
      MainWindow w(quiet());
      w.openFile(demo);  // full flow
      QVERIFY(w.session()->advanceNow(0.01));
      w.controls()->settingBox()->setValue(150.0);
      QVERIFY(w.warningShown());
      QVERIFY(w.warningText().contains("not been verified"));
      QVERIFY(w.warningText().contains("no flow"));
    }
    {
      MainWindow w(quiet());
      w.openFile(demo);
      w.controls()->openingFine()->setValue(0.0);
      QVERIFY(w.session()->advanceNow(0.2));  // pressure at the setting, no flow
      w.controls()->settingBox()->setValue(150.0);
      QVERIFY(!w.warningShown());
    }
  }

  void badScenarioShowsTheErrorAndKeepsTheStudy() {
    MainWindow w(quiet());
    QVERIFY(w.openFile(demo));
    const std::string name = w.study().name;
    QTemporaryDir dir;
    const QString bad = dir.filePath("broken.toml");
    write_file_atomically(bad.toStdString(), "[line]\nvolume = \"-1 L\"\n");
    QVERIFY(!w.openFile(bad));
    QVERIFY(w.lastError().contains("broken.toml:2"));
    QVERIFY(w.lastError().contains("line.volume"));
    QCOMPARE(w.study().name, name);
    QVERIFY(w.findChild<QWidget*>("error-box") != nullptr);
  }

  void exportsTracesAndCharts() {
    MainWindow w(quiet());
    w.openFile(demo);
    QVERIFY(w.session()->advanceNow(0.05));
    w.refreshNow();
    QTemporaryDir dir;
    QVERIFY(w.exportTracesCsv(dir.filePath("t.csv")));
    const std::string csv = read_file(dir.filePath("t.csv").toStdString());
    QVERIFY(csv.rfind("time_s,discharge_pressure_bar", 0) == 0);
    for (const char* suffix : {"png", "svg", "pdf"}) {
      const QString path = dir.filePath(QString("c.") + suffix);
      QVERIFY2(w.exportCharts(path), suffix);
      QVERIFY(QFileInfo(path).size() > 1000);
    }
    QVERIFY(!w.exportCharts(dir.filePath("c.bmpx")));
    QVERIFY(w.runStudyToEnd());
    QCOMPARE(w.traces()->overlayCount(), 1);
  }

  // Faults switch on and off through events while the pump runs.
  void faultSwitchesActThroughEvents() {
    MainWindow w(quiet());
    w.openStudy(Scenario{}, QString());
    TroubleshootingPanel* t = w.troubleshooting();
    QVERIFY(t->faultSwitch("faults.spool_friction") != nullptr);
    t->faultSeverity("faults.spool_friction")->setValue(12.0);  // N; nothing yet, it is off
    QVERIFY(w.session()->sessionScenario().events.empty());
    t->faultSwitch("faults.spool_friction")->setChecked(true);
    Scenario s = w.session()->sessionScenario();
    QCOMPARE(QString::fromStdString(last_event(s).target), QString("faults.spool_friction"));
    QCOMPARE(last_event(s).to, 12.0);
    QVERIFY(w.session()->advanceNow(0.02));
    t->faultSwitch("faults.spool_friction")->setChecked(false);
    QCOMPARE(w.session()->sessionScenario().events.back().to, 0.0);  // healthy again
    QCOMPARE(w.session()->parametersNow().fault_spool_friction, 0.0);
  }

  // A recording is overlaid and analysed beside the simulation; a bad one is
  // refused with its row named and the previous recording kept.
  void recordingIsOverlaidAndAnalysedSideBySide() {
    MainWindow w(quiet());
    QVERIFY(w.openFile(QStringLiteral(SWASHTUNE_SOURCE_DIR "/scenarios/hunting-oversized-damping-orifice.toml")));
    TroubleshootingPanel* t = w.troubleshooting();
    QVERIFY(t->loadRecording(QStringLiteral(SWASHTUNE_SOURCE_DIR "/scenarios/field/line2-pusher-hunting.csv")));
    QCOMPARE(w.traces()->overlayCount(), 1);
    QVERIFY2(t->recordingAnalysisText().startsWith("sustained oscillation"), qPrintable(t->recordingAnalysisText()));
    QVERIFY2(t->simulatedAnalysisText().startsWith("sustained oscillation"), qPrintable(t->simulatedAnalysisText()));
    QVERIFY(!t->loadRecording(QStringLiteral(SWASHTUNE_SOURCE_DIR "/tests/data/field/bad_time_order.csv")));
    QVERIFY(t->lastMessage().contains("bad_time_order.csv:7"));
    QVERIFY(t->recording()->source.find("line2-pusher-hunting") != std::string::npos);
  }

  // The fit runs in the background with progress, can be cancelled, and its
  // result can become the study.
  void fitRunsCancelsAndApplies() {
    MainWindow w(quiet());
    QVERIFY(w.openFile(demo));
    TroubleshootingPanel* t = w.troubleshooting();
    QVERIFY(t->loadRecording(QStringLiteral(SWASHTUNE_SOURCE_DIR "/scenarios/field/log-turner-slam.csv")));
    t->setFreeKeys({"faults.entrained_air"});
    QSignalSpy finished(t, &TroubleshootingPanel::fitFinished);
    QVERIFY(t->startFit(w.study()));
    t->cancelFit();
    QVERIFY(finished.wait(60000));
    QVERIFY(t->fitResult() && t->fitResult()->cancelled);

    QVERIFY(t->startFit(w.study()));
    QVERIFY(finished.wait(120000));
    QVERIFY(t->fitResult() && t->fitResult()->converged);
    const FittedParameter& air = t->fitResult()->parameters.front();
    // The recording was made (scenarios/field) with 3 % air: the fit must find it.
    QVERIFY2(std::abs(air.value - 0.03) < 3 * air.standard_error + 1e-4,
             qPrintable(QString("%1 +- %2").arg(air.value).arg(air.standard_error)));
    emit t->applyFitRequested(t->fitResult()->fitted);
    QCOMPARE(w.study().parameters.fault_entrained_air, air.value);
  }

  // swashtune --screenshot renders the window with traces drawn.
  void screenshotModeWritesAPicture() {
    QTemporaryDir dir;
    const QString png = dir.filePath("shot.png");
    QProcess app;
    app.start(SWASHTUNE_DESKTOP, {"--screenshot", png, "--run-for", "0.3"});
    QVERIFY(app.waitForFinished(60000));
    QCOMPARE(app.exitCode(), 0);
    const QImage image(png);
    QVERIFY(!image.isNull());
    QVERIFY(image.width() >= 1200);
    // Drawn traces: many distinct colours, not an empty window.
    QSet<QRgb> colours;
    for (int y = 0; y < image.height(); y += 7)
      for (int x = 0; x < image.width(); x += 7) colours.insert(image.pixel(x, y));
    QVERIFY(colours.size() > 50);
    QProcess bad;
    bad.start(SWASHTUNE_DESKTOP, {"--screenshot", png, "--scenario", dir.filePath("missing.toml")});
    QVERIFY(bad.waitForFinished(60000));
    QCOMPARE(bad.exitCode(), 2);
  }
};

QTEST_MAIN(DesktopTest)
#include "test_desktop.moc"
