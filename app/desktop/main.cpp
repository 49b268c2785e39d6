// swashtune: the desktop program. Wiring only: options, the built-in demo,
// recovery of an autosaved session, and the --screenshot mode.
#include <sys/resource.h>

#include <QApplication>
#include <QCommandLineParser>
#include <QElapsedTimer>
#include <QFile>
#include <QMessageBox>
#include <QTimer>
#include <algorithm>
#include <cstdio>

#include "main_window.hpp"
#include "session_controller.hpp"
#include "swashtune/scenario.hpp"
#include "trace_view.hpp"

namespace {

constexpr int exit_bad_input = 2;
constexpr int exit_solver_failed = 3;

swashtune::Scenario built_in_demo() {
  QFile file(":/scenarios/valve-slam.toml");
  file.open(QIODevice::ReadOnly);
  return swashtune::parse_scenario(file.readAll().toStdString(), "built-in demo");
}

// User and system CPU time of the whole process (all threads).
double process_cpu_seconds() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return usage.ru_utime.tv_sec + usage.ru_stime.tv_sec + 1e-6 * (usage.ru_utime.tv_usec + usage.ru_stime.tv_usec);
}

int fail(const QString& message, int code) {
  std::fprintf(stderr, "swashtune: %s\n", message.toLocal8Bit().constData());
  return code;
}

}  // namespace

int main(int argc, char** argv) {
  QApplication app(argc, argv);
  QApplication::setOrganizationName("Swashtune");
  QApplication::setApplicationName("Swashtune");
  QApplication::setApplicationVersion("0.1");

  QCommandLineParser parser;
  parser.setApplicationDescription("Live simulation of a pressure-compensated piston pump's control loop.");
  parser.addHelpOption();
  parser.addVersionOption();
  const QCommandLineOption screenshot("screenshot", "Render the window to FILE.png after the run and exit.", "FILE");
  const QCommandLineOption scenario("scenario", "Scenario file to open (default: the built-in demo).", "FILE");
  const QCommandLineOption run_for("run-for", "With --screenshot: simulated seconds to run first.", "SECONDS", "0.3");
  const QCommandLineOption measure(
      "measure", "Run live for SECONDS of wall time, print the display rate and CPU load, exit.", "SECONDS");
  const QCommandLineOption time_scale("time-scale", "With --measure: simulated per wall time, 1 down to 0.001.",
                                      "SCALE", "1");
  const QCommandLineOption tab("tab", "With --screenshot: the side tab to show (e.g. \"Troubleshooting\").", "TITLE");
  parser.addOptions({screenshot, scenario, run_for, measure, time_scale, tab});
  parser.addPositionalArgument("scenario", "Scenario file to open (same as --scenario).", "[FILE]");
  parser.process(app);

  QString scenario_path = parser.value(scenario);
  if (scenario_path.isEmpty() && !parser.positionalArguments().isEmpty())
    scenario_path = parser.positionalArguments().first();
  const bool shooting = parser.isSet(screenshot);

  swashtune::ui::MainWindow::Options options;
  options.interactive = !shooting;
  options.autosave = !shooting;
  swashtune::ui::MainWindow window(options);

  if (!scenario_path.isEmpty()) {
    if (!window.openFile(scenario_path)) return fail(window.lastError(), exit_bad_input);
  } else {
    const QString autosave = swashtune::ui::MainWindow::autosavePath();
    bool recovered = false;
    if (!shooting && QFile::exists(autosave) &&
        QMessageBox::question(nullptr, "Swashtune",
                              "A session was not closed properly. Recover its autosaved changes?") == QMessageBox::Yes)
      recovered = window.openFile(autosave);
    if (!recovered) window.openStudy(built_in_demo(), QString());
  }

  if (shooting) {
    bool ok = false;
    const double seconds = parser.value(run_for).toDouble(&ok);
    if (!ok || seconds < 0.0 || seconds > 3600.0)
      return fail("--run-for: expected seconds from 0 to 3600", exit_bad_input);
    window.resize(1600, 1000);
    window.traces()->setWindowSeconds(std::max(seconds, 0.01));  // the whole run in view
    if (parser.isSet(tab) && !window.showSideTab(parser.value(tab)))
      return fail("--tab: no side tab called \"" + parser.value(tab) + "\"", exit_bad_input);
    window.show();
    QString error;
    if (!window.session()->advanceNow(seconds, &error)) return fail(error, exit_solver_failed);
    window.refreshNow();
    // Let layouts and queued replots settle before the picture is taken.
    for (int i = 0; i < 5; ++i) QApplication::processEvents();
    QTimer::singleShot(200, &app, [&] {
      QApplication::processEvents();
      if (!window.grab().save(parser.value(screenshot))) {
        std::fprintf(stderr, "swashtune: cannot write %s\n", parser.value(screenshot).toLocal8Bit().constData());
        QApplication::exit(exit_bad_input);
        return;
      }
      QApplication::exit(0);
    });
    return QApplication::exec();
  }

  if (parser.isSet(measure)) {
    bool ok_seconds = false, ok_scale = false;
    const double seconds = parser.value(measure).toDouble(&ok_seconds);
    const double scale = parser.value(time_scale).toDouble(&ok_scale);
    if (!ok_seconds || seconds <= 0.0 || seconds > 3600.0 || !ok_scale || scale < 1e-3 || scale > 1.0)
      return fail("--measure SECONDS (0..3600) and --time-scale (0.001..1) expected", exit_bad_input);
    window.show();
    window.session()->setTimeScale(scale);
    window.session()->start();
    const long long frames_before = window.framesDrawn();
    const double cpu_before = process_cpu_seconds();
    const double sim_before = window.session()->simulatedTime();
    QElapsedTimer wall;
    wall.start();
    QTimer::singleShot(static_cast<int>(seconds * 1000), &app, [&] {
      const double elapsed = wall.elapsed() * 1e-3;
      std::printf("time scale %g: %.1f display frames/s, CPU %.1f %% of one core, %.4f s simulated in %.2f s\n", scale,
                  (window.framesDrawn() - frames_before) / elapsed,
                  100.0 * (process_cpu_seconds() - cpu_before) / elapsed,
                  window.session()->simulatedTime() - sim_before, elapsed);
      QApplication::exit(0);
    });
    return QApplication::exec();
  }

  window.show();
  return QApplication::exec();
}
