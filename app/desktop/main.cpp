// swashtune: the desktop program. Wiring only: options, the built-in demo,
// recovery of an autosaved session, and the --screenshot mode.
#include <QApplication>
#include <QCommandLineParser>
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
  parser.addOptions({screenshot, scenario, run_for});
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

  window.show();
  return QApplication::exec();
}
