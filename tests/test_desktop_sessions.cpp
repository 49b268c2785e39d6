// Sessions that never lose work, driven as a person drives the program:
// clicks on buttons, keys in boxes, shortcuts, answers in the questions and
// file names typed into the file dialogs (Qt Test, offscreen).
#include <QDockWidget>
#include <QDoubleSpinBox>
#include <QMenu>
#include <QMenuBar>
#include <QProcess>
#include <QPushButton>
#include <QRandomGenerator>
#include <QSlider>
#include <QStatusBar>
#include <QTemporaryDir>
#include <QUndoStack>
#include <cmath>

#include "control_panel.hpp"
#include "desktop_helpers.hpp"
#include "main_window.hpp"
#include "session_controller.hpp"
#include "swashtune/atomic_file.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/simulator.hpp"
#include "trace_columns.hpp"
#include "trace_view.hpp"

using namespace swashtune;
using namespace swashtune::ui;
using namespace desktop_test;

namespace {

// The worst difference of discharge pressure between a live trace and a replay, Pa.
double worst_difference(const std::vector<Sample>& live, const RunResult& replay, std::size_t* compared) {
  const SampleReader pressure = column_reader("discharge_pressure");
  double worst = 0.0;
  *compared = 0;
  for (const Sample& s : live) {
    if (s.time > replay.trace.back().time) break;
    worst = std::max(worst, std::abs(trace_value_at(replay.trace, s.time, discharge_pressure_of) - pressure(s)));
    ++*compared;
  }
  return worst;
}

QAction* menu_action(QMainWindow& w, const QString& menu, const QString& text) {
  for (QAction* top : w.menuBar()->actions())
    if (top->text().remove('&') == menu && top->menu())
      for (QAction* a : top->menu()->actions())
        if (a->text().remove('&').startsWith(text)) return a;
  return nullptr;
}

// The value a scenario's events give a key in the end (the initial value when none does).
double last_set(const Scenario& s, const char* key, double initial) {
  double value = initial;
  for (const Event& e : s.events)
    if (e.target == key) value = e.to;
  return value;
}

int count_events(const Scenario& s, const char* key) {
  return static_cast<int>(
      std::count_if(s.events.begin(), s.events.end(), [&](const Event& e) { return e.target == key; }));
}

}  // namespace

class SessionTest : public QObject {
  Q_OBJECT
 private slots:
  void initTestCase() { QStandardPaths::setTestModeEnabled(true); }

  // The issue's path: open the shipped demo, Reset, set 150 bar, Close fast,
  // then Ctrl+O and Save in the prompt. The demo file stays as shipped (the
  // program refuses it as a target), the session goes to a new file that
  // keeps the study's scripted events and an updated description, and that
  // file replays to the live trace.
  void theIssuesPathNeverWritesOverTheShippedDemo() {
    QTemporaryDir dir;
    const QByteArray shipped = file_hash(demo);
    MainWindow w(asking(dir.filePath("autosave")));
    QVERIFY(show_active(w));
    QVERIFY(w.openFile(demo));
    QTest::mouseClick(w.controls()->findChild<QPushButton*>("reset-button"), Qt::LeftButton);
    type_into(w.controls()->settingBox(), "150");
    QTest::mouseClick(w.controls()->closeFastButton(), Qt::LeftButton);
    QVERIFY(w.isModified());
    QVERIFY(w.session()->advanceNow(0.25));  // runs past the scripted slam at 0.1 s
    w.refreshNow();
    const std::vector<Sample> live = w.traces()->liveSamples();

    const QString target = dir.filePath("press-150bar.toml");
    // The file dialog itself asks before replacing a file; even a "Yes" there does not get past the program.
    Answers answers({click("unsaved-box", "Save"), type_file("save-session-dialog", demo),
                     click("text:already exists", "Yes"), click("refused-box", "OK"),
                     type_file("save-session-dialog", target), escape("open-dialog")});
    press(w, Qt::Key_O, Qt::ControlModifier);
    QTRY_VERIFY(answers.done());
    QCOMPARE(answers.seen(), QStringList({"unsaved-box", "save-session-dialog", "text:already exists", "refused-box",
                                          "save-session-dialog", "open-dialog"}));
    QVERIFY2(answers.lastText().contains("shipped"), qPrintable(answers.lastText()));

    QCOMPARE(file_hash(demo), shipped);  // untouched
    QVERIFY(QFile::exists(target));
    QVERIFY(!w.isModified());
    QCOMPARE(w.sessionPath(), QFileInfo(target).absoluteFilePath());
    QVERIFY(w.windowTitle().contains("press-150bar.toml"));

    const Scenario saved = load_scenario(target.toStdString());
    QCOMPARE(saved.name, w.study().name);
    // The study's two scripted valve events are kept beside the person's two changes.
    QCOMPARE(count_events(saved, "load.opening"), 3);
    QCOMPARE(count_events(saved, "compensator.setting"), 1);
    QVERIFY(std::any_of(saved.events.begin(), saved.events.end(), [](const Event& e) { return e.at == 0.6; }));
    QCOMPARE(saved.settings.duration, 1.0);  // the script goes on to the study's end
    QCOMPARE(saved.settings.sample_interval, 0.0005);
    const QString description = QString::fromStdString(saved.description);
    QVERIFY2(description.startsWith(QString::fromStdString(load_scenario(demo.toStdString()).description)),
             qPrintable(description));
    QVERIFY2(description.contains("Live session saved"), qPrintable(description));
    QVERIFY2(description.contains("compensator.setting to 150 bar"), qPrintable(description));
    QVERIFY2(description.contains("2 scripted events are kept"), qPrintable(description));
    // No float noise in the file: times and the ramp are the decimals they stand for.
    const std::string text = read_file(target.toStdString());
    QVERIFY2(text.find("ramp = 0.005\n") != std::string::npos, text.c_str());
    QVERIFY(text.find("00000000") == std::string::npos && text.find("99999999") == std::string::npos);

    // Replayed by the command line's engine, the file gives the live trace.
    std::size_t compared = 0;
    const double worst = worst_difference(live, run_scenario(saved), &compared);
    QVERIFY(compared + 2 >= live.size());
    QVERIFY2(worst < 1e-3 * 150e5, qPrintable(QString("worst difference %1 Pa").arg(worst)));  // solver tolerance
  }

  // The first save of a session opened from a person's own scenario asks for
  // a name and suggests a new one beside it; later saves go there without asking.
  void firstSaveAsksLaterSavesDoNot() {
    QTemporaryDir dir;
    const QString own = dir.filePath("press.toml");
    QVERIFY(QFile::copy(demo, own));
    const QByteArray original = file_hash(own);
    MainWindow w(asking(dir.filePath("autosave")));
    QVERIFY(show_active(w));
    QVERIFY(w.openFile(own));
    type_into(w.controls()->settingBox(), "190");
    QString suggested;
    {
      Answers answers({accept_suggestion("save-session-dialog", &suggested)});
      press(w, Qt::Key_S, Qt::ControlModifier);
      QTRY_VERIFY(answers.done());
    }
    QCOMPARE(QFileInfo(suggested).fileName(), QString("press-session.toml"));
    QCOMPARE(QFileInfo(suggested).absolutePath(), QFileInfo(own).absolutePath());
    QCOMPARE(file_hash(own), original);  // the study's file is not the session's
    QVERIFY(QFile::exists(dir.filePath("press-session.toml")));
    QVERIFY(!w.isModified());

    QVERIFY(w.session()->advanceNow(0.05));
    QTest::mouseClick(w.controls()->closeFastButton(), Qt::LeftButton);
    QVERIFY(w.isModified());
    {
      Answers none({});
      press(w, Qt::Key_S, Qt::ControlModifier);  // no dialog this time
      QCOMPARE(none.seen(), QStringList());
    }
    QVERIFY(!w.isModified());
    const Scenario saved = load_scenario(dir.filePath("press-session.toml").toStdString());
    QCOMPARE(count_events(saved, "load.opening"), 3);  // the two scripted and the person's
    QCOMPARE(file_hash(own), original);
  }

  // The suggested name of a first save is never a shipped example's and
  // always a file name any system takes.
  void firstSaveSuggestsANewSafeName() {
    QTemporaryDir dir;
    MainWindow w(asking(dir.filePath("autosave")));
    QVERIFY(show_active(w));
    QVERIFY(w.openFile(demo));
    type_into(w.controls()->settingBox(), "190");
    QString suggested;
    Answers answers({read_suggestion_and_cancel("save-session-dialog", &suggested)});
    press(w, Qt::Key_S, Qt::ControlModifier);
    QTRY_VERIFY(answers.done());
    QVERIFY2(!is_shipped_example(suggested), qPrintable(suggested));
    QCOMPARE(QFileInfo(suggested).fileName(), QString("valve-slam-session.toml"));
    QVERIFY(w.isModified());  // cancelled: nothing written, nothing lost
    Scenario named;
    named.name = "Hot press 2: clamp / supply";
    w.openStudy(named, QString());
    type_into(w.controls()->settingBox(), "190");
    Answers again({read_suggestion_and_cancel("save-session-dialog", &suggested)});
    press(w, Qt::Key_S, Qt::ControlModifier);
    QTRY_VERIFY(again.done());
    QCOMPARE(QFileInfo(suggested).fileName(), QString("Hot-press-2-clamp-supply-session.toml"));
  }

  // Every path that would drop unsaved changes asks, and Cancel keeps them.
  void everyCloseOrOpenPathAsks() {
    QTemporaryDir dir;
    MainWindow w(asking(dir.filePath("autosave")));
    QVERIFY(show_active(w));
    QVERIFY(w.openFile(demo));  // also puts it into Open recent
    type_into(w.controls()->settingBox(), "180");
    QVERIFY(w.isModified());
    const std::string name = w.study().name;

    struct Path {
      const char* what;
      std::function<void()> go;
    };
    const QList<Path> paths = {
        {"File > New (Ctrl+N)", [&] { press(w, Qt::Key_N, Qt::ControlModifier); }},
        {"File > Open (Ctrl+O)", [&] { press(w, Qt::Key_O, Qt::ControlModifier); }},
        {"File > Open recent", [&] { menu_action(w, "File", "Open recent")->menu()->actions().first()->trigger(); }},
        {"Run > Restart the study", [&] { menu_action(w, "Run", "Restart the study")->trigger(); }},
        {"File > Quit (Ctrl+Q)", [&] { press(w, Qt::Key_Q, Qt::ControlModifier); }},
        {"closing the window", [&] { w.close(); }},
    };
    for (const Path& p : paths) {
      Answers answers({click("unsaved-box", "Cancel")});
      p.go();
      QTRY_VERIFY2(answers.done(), p.what);
      QVERIFY2(w.isModified(), p.what);
      QVERIFY2(w.isVisible(), p.what);
      QCOMPARE(w.study().name, name);
      QCOMPARE(w.session()->parametersNow().setting, 180e5);
    }
    // Discard goes on: a new study, nothing to save.
    Answers answers({click("unsaved-box", "Discard")});
    press(w, Qt::Key_N, Qt::ControlModifier);
    QTRY_VERIFY(answers.done());
    QVERIFY(!w.isModified());
    QCOMPARE(w.study().name, Scenario{}.name);
  }

  // Autosave: one file per instance and per session, named after the study,
  // written within a few seconds of a change; a second instance never takes
  // a running one's autosave for a crashed session.
  void autosaveIsPerInstanceAndSessionAndPrompt() {
    QTemporaryDir dir;
    const QString folder = dir.filePath("autosave");
    auto first = std::make_unique<MainWindow>(asking(folder));
    MainWindow second(asking(folder));
    first->show();
    second.show();
    QVERIFY(first->openFile(demo));
    QVERIFY(second.openFile(under_flow));
    QElapsedTimer clock;
    clock.start();
    type_into(first->controls()->settingBox(), "170");
    type_into(second.controls()->settingBox(), "160");
    QTRY_VERIFY_WITH_TIMEOUT(
        !first->autosave().currentFile().isEmpty() && QFile::exists(first->autosave().currentFile()), 4000);
    const qint64 written_after = clock.elapsed();
    QVERIFY2(written_after < 3000, qPrintable(QString("autosaved %1 ms after the change").arg(written_after)));
    QTRY_VERIFY_WITH_TIMEOUT(QFile::exists(second.autosave().currentFile()), 4000);
    QVERIFY(first->autosave().currentFile() != second.autosave().currentFile());
    QVERIFY2(QFileInfo(first->autosave().currentFile()).fileName().startsWith("Hot-press-2"),
             qPrintable(first->autosave().currentFile()));
    QVERIFY(QFileInfo(second.autosave().currentFile()).fileName().startsWith("Winder-3"));
    // Both instances run: neither sees anything to recover.
    QVERIFY(first->autosave().orphans().empty());
    QVERIFY(second.autosave().orphans().empty());

    // A new session in the first instance: its old autosave goes once the person answered.
    const QString old_file = first->autosave().currentFile();
    {
      first->show();
      Answers answers({click("unsaved-box", "Discard")});
      press(*first, Qt::Key_N, Qt::ControlModifier);
      QTRY_VERIFY(answers.done());
    }
    QVERIFY(!QFile::exists(old_file));
    type_into(first->controls()->settingBox(), "175");
    QTRY_VERIFY_WITH_TIMEOUT(QFile::exists(first->autosave().currentFile()), 4000);
    QVERIFY(first->autosave().currentFile() != old_file);

    // The first instance stops without closing (as a crash would): now the
    // second sees its session as one to recover, and says what and when.
    const QString left = first->autosave().currentFile();
    first.reset();
    const std::vector<AutosaveInfo> orphans = second.autosave().orphans();
    QCOMPARE(orphans.size(), std::size_t(1));
    QCOMPARE(orphans[0].file, QFileInfo(left).absoluteFilePath());
    QCOMPARE(orphans[0].study_name, QString::fromStdString(Scenario{}.name));
    QCOMPARE(orphans[0].changes, 1);
    QVERIFY(orphans[0].saved_at.secsTo(QDateTime::currentDateTime()) < 30);
  }

  // Recovery from every start path: without a file, and with one (recover
  // instead, keep it for later, discard it). A recovered session is modified,
  // named after its study, asks before closing, and its first save asks for a
  // file and keeps that file.
  void recoveryIsOfferedOnEveryStartPath() {
    QTemporaryDir dir;
    const QString folder = dir.filePath("autosave");
    auto crashed = [&](double setting_bar) {
      auto w = std::make_unique<MainWindow>(asking(folder));
      w->show();
      w->openFile(demo);
      type_into(w->controls()->settingBox(), QString::number(setting_bar));
      w->session()->advanceNow(0.2);
      w->autosaveNow();
      const QString file = w->autosave().currentFile();
      w.reset();  // gone without closing
      return file;
    };
    const Scenario fallback;

    // Started without a file.
    const QString file = crashed(165);
    {
      MainWindow w(asking(folder));
      QVERIFY(show_active(w));
      Answers answers({click("recovery-box", "Recover")});
      QVERIFY(w.start(QString(), fallback));
      QVERIFY(answers.done());
      QVERIFY2(answers.lastText().contains("Hot press 2") && answers.lastText().contains("1 change") &&
                   answers.lastText().contains("autosave"),
               qPrintable(answers.lastText()));
      QVERIFY(w.isModified());
      QVERIFY2(w.windowTitle().startsWith("Hot press 2") && w.windowTitle().contains("recovered"),
               qPrintable(w.windowTitle()));
      QCOMPARE(w.session()->parametersNow().setting, 165e5);
      QVERIFY(std::abs(w.session()->simulatedTime() - 0.2) < 1e-9);  // back where it was
      QVERIFY(w.traces()->sampleCount() > 100);
      QVERIFY(QFile::exists(file));  // kept until the session is saved or discarded
      // Quitting asks; the first save asks for a file and keeps it.
      {
        Answers cancel({click("unsaved-box", "Cancel")});
        press(w, Qt::Key_Q, Qt::ControlModifier);
        QTRY_VERIFY(cancel.done());
        QVERIFY(w.isVisible());
      }
      const QString target = dir.filePath("recovered.toml");
      Answers save({type_file("save-session-dialog", target)});
      press(w, Qt::Key_S, Qt::ControlModifier);
      QTRY_VERIFY(save.done());
      QVERIFY(QFile::exists(target));
      QVERIFY(!QFile::exists(file));  // the autosave, not the file just written
      QVERIFY(!w.isModified());
      press(w, Qt::Key_Q, Qt::ControlModifier);  // nothing to ask now
      QVERIFY(QFile::exists(target));
      const Scenario saved = load_scenario(target.toStdString());
      QCOMPARE(last_set(saved, "compensator.setting", saved.parameters.setting), 165e5);
      QVERIFY(QString::fromStdString(saved.description).contains("recovered"));
    }

    // Started with a file: keep the autosave for later, then discard it.
    const QString second = crashed(155);
    {
      MainWindow w(asking(folder));
      QVERIFY(show_active(w));
      Answers answers({click("recovery-box", "Keep it for later")});
      QVERIFY(w.start(under_flow, fallback));
      QVERIFY(answers.done());
      QVERIFY2(answers.lastText().contains("setting-under-flow.toml"), qPrintable(answers.lastText()));
      QCOMPARE(QFileInfo(w.studyPath()).fileName(), QString("setting-under-flow.toml"));
      QVERIFY(!w.isModified());
      QVERIFY(QFile::exists(second));
    }
    {
      MainWindow w(asking(folder));
      QVERIFY(show_active(w));
      Answers answers({click("recovery-box", "Discard it")});
      QVERIFY(w.start(under_flow, fallback));
      QVERIFY(answers.done());
      QVERIFY(!QFile::exists(second));
    }
    // Started with a file and recovering instead.
    crashed(145);
    {
      MainWindow w(asking(folder));
      QVERIFY(show_active(w));
      Answers answers({click("recovery-box", "Recover")});
      QVERIFY(w.start(under_flow, fallback));
      QVERIFY(answers.done());
      QCOMPARE(w.session()->parametersNow().setting, 145e5);
      QVERIFY(w.isModified());
      w.autosave().discard();
    }
  }

  // kill -9 at random moments of the desktop's save: the file is always a
  // whole session, the one before or the new one; killed before its first
  // save, the session's autosave is there to recover; killed after it, the
  // file holds the session.
  void killDuringSaveLeavesAWholeFile() {
    QTemporaryDir dir;
    const QString target = dir.filePath("session.toml");
    const QString data = dir.filePath("data");
    QProcessEnvironment env = QProcessEnvironment::systemEnvironment();
    env.insert("XDG_DATA_HOME", data);
    env.insert("XDG_CONFIG_HOME", dir.filePath("config"));  // not the user's settings, nor other tests'
    env.insert("QT_QPA_PLATFORM", "offscreen");
    // Runs a save as a person's session would, killed after `kill_after_ms`
    // (never when negative); returns what it reported before it died.
    auto run = [&](double setting_pa, int repeat, int kill_after_ms) {
      QProcess p;
      p.setProcessEnvironment(env);
      p.start(SWASHTUNE_DESKTOP, {"--scenario", demo, "--change", QString("compensator.setting=%1").arg(setting_pa),
                                  "--run-for", "0.2", "--save-as", target, "--repeat", QString::number(repeat)});
      if (!p.waitForStarted(10000)) return QString("not started");
      if (kill_after_ms >= 0) {
        p.waitForFinished(kill_after_ms);
        if (p.state() == QProcess::Running) p.kill();  // SIGKILL: no clean-up of any kind
      }
      p.waitForFinished(60000);
      return QString::fromLocal8Bit(p.readAllStandardOutput());
    };
    QVERIFY(run(200e5, 1, -1).contains("saved 1"));  // an earlier, complete session
    const std::string before = read_file(target.toStdString());

    // How long a run takes here, so the kills land all over it on any machine.
    QElapsedTimer clock;
    clock.start();
    QVERIFY(run(170e5, 40, -1).contains("saved 40"));
    const int span = static_cast<int>(clock.elapsed());
    const AutosaveStore store(data + "/Swashtune/Swashtune/autosave");
    QRandomGenerator random(20251202);
    int before_autosave = 0, before_save = 0, during_saves = 0, mid_write = 0;
    for (int i = 0; i < 16; ++i) {
      write_file_atomically(target.toStdString(), before);
      for (const QString& partial : QDir(dir.path()).entryList({"session.toml.partial-*"}, QDir::Files))
        QFile::remove(dir.filePath(partial));
      for (const AutosaveInfo& o : store.orphans()) store.removeOrphan(o.file);
      const QString said = run(170e5, 40, static_cast<int>(random.bounded(span)));
      const std::string now = read_file(target.toStdString());
      Scenario s;
      try {
        s = load_scenario(target.toStdString());  // whole and readable
      } catch (const std::exception& e) {
        QFAIL(qPrintable(QString("kill %1 (%2) left a broken %3: %4").arg(i).arg(said, target, e.what())));
      }
      // What the program had said before it died runs a little behind what it
      // did: a save may have replaced the file just before the kill without
      // telling. Either way nothing is lost: the new session is in the file,
      // or the old file is intact and the session is in its autosave.
      const bool said_saved = said.contains(QRegularExpression("(^|\\n)saved [0-9]"));  // not "autosaved"
      const bool replaced = now != before;
      if (said_saved) QVERIFY2(replaced, qPrintable(said));
      if (replaced) {
        QVERIFY2(last_set(s, "compensator.setting", 0.0) == 170e5, qPrintable(said));  // the new session, whole
        ++during_saves;
      } else if (said.contains("autosaved")) {
        const std::vector<AutosaveInfo> orphans = store.orphans();
        QCOMPARE(orphans.size(), std::size_t(1));
        QCOMPARE(last_set(AutosaveStore::readSession(orphans[0].file), "compensator.setting", 0.0), 170e5);
        ++before_save;
      } else {
        ++before_autosave;  // killed before it had anything to keep
      }
      if (!QDir(dir.path()).entryList({"session.toml.partial-*"}, QDir::Files).isEmpty()) ++mid_write;
    }
    // Killed right after it autosaved, before any save: the old file, and the session to recover.
    {
      write_file_atomically(target.toStdString(), before);
      for (const AutosaveInfo& o : store.orphans()) store.removeOrphan(o.file);
      QProcess p;
      p.setProcessEnvironment(env);
      p.start(SWASHTUNE_DESKTOP, {"--scenario", demo, "--change", "compensator.setting=17000000", "--run-for", "0.2",
                                  "--save-as", target, "--repeat", "40"});
      QVERIFY(p.waitForStarted(10000));
      QByteArray said;
      while (!said.contains("autosaved") && p.waitForReadyRead(60000)) said += p.readAllStandardOutput();
      p.kill();
      QVERIFY2(said.contains("autosaved"), qPrintable("no autosave reported within 60 s; it said: " + said));
      p.waitForFinished(10000);
      said += p.readAllStandardOutput();
      if (read_file(target.toStdString()) == before) {  // the first save may have finished between our read and the kill
        QCOMPARE(store.orphans().size(), std::size_t(1));
        QCOMPARE(last_set(AutosaveStore::readSession(store.orphans()[0].file), "compensator.setting", 0.0), 170e5);
        ++before_save;
      }
    }
    qInfo("17 kills: %d before the autosave, %d between it and the first save, %d during the saves (%d mid-write)",
          before_autosave, before_save, during_saves, mid_write);
  }

  // Every live change is one step on one history: the slider (a drag undoes
  // as one step), the setting box, the fast close and a Parameters-tab edit.
  void everyLiveChangeUndoesAndRedoes() {
    MainWindow w(quiet());
    QVERIFY(show_active(w));
    w.openStudy(Scenario{}, QString());
    const double opening = w.session()->parametersNow().opening;
    QSlider* slider = w.controls()->openingSlider();
    slider->setFocus();
    for (int i = 0; i < 3; ++i) QTest::keyClick(slider, Qt::Key_PageDown);  // a drag in three moves
    const double dragged = w.session()->parametersNow().opening;
    QVERIFY(dragged < opening);
    type_into(w.controls()->settingBox(), "175");
    QCOMPARE(w.session()->parametersNow().setting, 175e5);
    QCOMPARE(w.changes()->count(), 2);

    press(w, Qt::Key_Z, Qt::ControlModifier);  // the setting back
    QCOMPARE(w.session()->parametersNow().setting, Scenario{}.parameters.setting);
    QCOMPARE(w.controls()->settingBox()->value(), 210.0);
    press(w, Qt::Key_Z, Qt::ControlModifier);  // the whole drag back
    QCOMPARE(w.session()->parametersNow().opening, opening);
    QCOMPARE(slider->value(), static_cast<int>(std::lround(opening * 1000)));
    press(w, Qt::Key_Z, Qt::ControlModifier | Qt::ShiftModifier);  // redo the drag
    QCOMPARE(w.session()->parametersNow().opening, dragged);
    press(w, Qt::Key_Y, Qt::ControlModifier);  // redo the setting
    QCOMPARE(w.session()->parametersNow().setting, 175e5);
    // Undo and redo are changes now: events at the present time, replayable.
    QVERIFY(w.liveEvents().size() >= 6);

    QTest::mouseClick(w.controls()->closeFastButton(), Qt::LeftButton);
    QVERIFY(w.session()->advanceNow(0.01));  // the fast ramp takes 5 ms
    QCOMPARE(w.session()->parametersNow().opening, 0.0);
    press(w, Qt::Key_Z, Qt::ControlModifier);
    QCOMPARE(w.session()->parametersNow().opening, dragged);

    QVERIFY(w.showSideTab("Parameters"));
    const double volume = w.session()->parametersNow().line_volume;
    QVERIFY(edit_parameter_cell(w.parameters(), "line.volume", "2 L"));
    QCOMPARE(w.session()->parametersNow().line_volume, 0.002);
    press(w, Qt::Key_Z, Qt::ControlModifier);
    QCOMPARE(w.session()->parametersNow().line_volume, volume);
  }
};

QTEST_MAIN(SessionTest)
#include "test_desktop_sessions.moc"
