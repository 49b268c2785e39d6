// swashtune: the desktop program. Wiring only: options, the built-in demo,
// the start (with recovery of sessions not closed properly), and the
// --screenshot, --measure and --save-as modes.
#include <sys/resource.h>

#include <QApplication>
#include <QCommandLineParser>
#include <QElapsedTimer>
#include <QFile>
#include <QTimer>
#include <algorithm>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <memory>

#include "main_window.hpp"
#include "session_controller.hpp"
#include "swashtune/scenario.hpp"
#include "swashtune/version.hpp"
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

QString version_line() {
  return QStringLiteral("swashtune (Swashtune) %1").arg(QString::fromLatin1(swashtune::version));
}

void describe(QCommandLineParser& parser, const QList<QCommandLineOption>& options) {
  parser.setApplicationDescription(
      "Live simulation of a pressure-compensated piston pump's control loop.\n"
      "Without a display, --screenshot, --save-as and --measure run with QT_QPA_PLATFORM=offscreen.");
  parser.addOptions(options);
  parser.addPositionalArgument("scenario", "Scenario file to open (same as --scenario).", "[FILE]");
}

bool has_display() {
  const char* platform = std::getenv("QT_QPA_PLATFORM");
  if (platform && *platform) return true;  // the person chose a platform
  return (std::getenv("DISPLAY") && *std::getenv("DISPLAY")) ||
         (std::getenv("WAYLAND_DISPLAY") && *std::getenv("WAYLAND_DISPLAY"));
}

}  // namespace

int main(int argc, char** argv) {
  const QCommandLineOption help_option({"h", "help"}, "Show this help and exit.");
  const QCommandLineOption version_option({"v", "version"}, "Print the version and exit.");
  const QCommandLineOption screenshot("screenshot", "Render the window to FILE.png after the run and exit.", "FILE");
  const QCommandLineOption scenario("scenario", "Scenario file to open (default: the built-in demo).", "FILE");
  const QCommandLineOption run_for("run-for", "With --screenshot or --save-as: simulated seconds to run first.",
                                   "SECONDS", "0.3");
  const QCommandLineOption measure(
      "measure", "Run live for SECONDS of wall time, print the display rate and CPU load, exit.", "SECONDS");
  const QCommandLineOption time_scale("time-scale", "With --measure: simulated per wall time, 1 down to 0.001.",
                                      "SCALE", "1");
  const QCommandLineOption tab("tab", "With --screenshot: the side tab to show (e.g. \"Troubleshooting\").", "TITLE");
  const QCommandLineOption view("view", "With --screenshot: the view to show: charts, circuit, room (the circuit without the side panel) or compare.",
                                "NAME", "charts");
  const QCommandLineOption size("size", "With --screenshot: the window size, e.g. 1280x800 (default).", "WxH",
                                "1280x800");
  const QCommandLineOption save_as(
      "save-as", "Run the study for --run-for seconds, save the session to FILE as a person's Save would, and exit.",
      "FILE");
  const QCommandLineOption change(
      "change", "With --save-as: a change made at the start, KEY=VALUE in stored units (repeatable).", "KEY=VALUE");
  const QCommandLineOption repeat("repeat", "With --save-as: save this many times (a crash test's target).", "N", "1");
  const QList<QCommandLineOption> options{help_option, version_option, screenshot, scenario,
                                          run_for,     measure,        time_scale, tab, view,
                                          size,        save_as,        change,     repeat};

  // --help and --version need no display: answered before any window system is touched.
  {
    QStringList arguments;
    for (int i = 0; i < argc; ++i) arguments << QString::fromLocal8Bit(argv[i]);
    QCommandLineParser early;
    describe(early, options);
    early.parse(arguments);
    if (early.isSet(help_option)) {
      std::fputs(early.helpText().replace("<executable_name>", "swashtune").toLocal8Bit().constData(), stdout);
      return 0;
    }
    if (early.isSet(version_option)) {
      std::printf("%s\n", version_line().toLocal8Bit().constData());
      return 0;
    }
    // The batch modes draw offscreen when there is no display to draw on.
    if (!has_display() && (early.isSet(screenshot) || early.isSet(save_as) || early.isSet(measure)))
      qputenv("QT_QPA_PLATFORM", "offscreen");
  }

  QApplication app(argc, argv);
  QApplication::setOrganizationName("Swashtune");
  QApplication::setApplicationName("Swashtune");
  QApplication::setApplicationVersion(QString::fromLatin1(swashtune::version));

  QCommandLineParser parser;
  describe(parser, options);
  if (!parser.parse(QApplication::arguments())) return fail(parser.errorText(), exit_bad_input);

  QString scenario_path = parser.value(scenario);
  if (scenario_path.isEmpty() && !parser.positionalArguments().isEmpty())
    scenario_path = parser.positionalArguments().first();
  const bool shooting = parser.isSet(screenshot);
  const bool batch = shooting || parser.isSet(save_as);

  double seconds = 0.0;
  if (batch) {
    bool ok = false;
    seconds = parser.value(run_for).toDouble(&ok);
    if (!ok || seconds < 0.0 || seconds > 3600.0)
      return fail("--run-for: expected seconds from 0 to 3600", exit_bad_input);
  }

  swashtune::ui::MainWindow::Options window_options;
  window_options.interactive = !batch;
  window_options.autosave = !shooting;
  swashtune::ui::MainWindow window(window_options);

  if (!batch) {
    window.show();  // the recovery question, if any, comes over the window
    if (!window.start(scenario_path, built_in_demo()) && !scenario_path.isEmpty())
      return fail(window.lastError(), exit_bad_input);
  } else if (!scenario_path.isEmpty()) {
    if (!window.openFile(scenario_path)) return fail(window.lastError(), exit_bad_input);
  } else {
    window.openStudy(built_in_demo(), QString());
  }

  if (parser.isSet(save_as)) {
    // What a person does: changes at the start, a run, File > Save as.
    for (const QString& text : parser.values(change)) {
      const int equals = text.indexOf('=');
      bool ok = false;
      const double value = equals > 0 ? text.mid(equals + 1).toDouble(&ok) : 0.0;
      if (!ok) return fail("--change: expected KEY=VALUE, got \"" + text + "\"", exit_bad_input);
      if (!window.change(text.left(equals), value))
        return fail("--change " + text + ": " + window.lastError(), exit_bad_input);
    }
    QString error;
    if (!window.session()->advanceNow(seconds, &error)) return fail(error, exit_solver_failed);
    window.autosaveNow();  // as the autosave timer would have by now
    std::printf("autosaved %s\n", window.autosave().currentFile().toLocal8Bit().constData());
    std::fflush(stdout);
    bool ok_repeat = false;
    const int times = parser.value(repeat).toInt(&ok_repeat);
    if (!ok_repeat || times < 1) return fail("--repeat: expected a whole number from 1", exit_bad_input);
    for (int i = 0; i < times; ++i) {
      if (!window.saveTo(parser.value(save_as))) return fail(window.lastError(), exit_bad_input);
      std::printf("saved %d\n", i + 1);  // progress for a watching script (the crash tests)
      std::fflush(stdout);
    }
    return 0;
  }

  if (shooting) {
    const QStringList wh = parser.value(size).split('x');
    bool ok_w = false, ok_h = false;
    const int width = wh.size() == 2 ? wh[0].toInt(&ok_w) : 0;
    const int height = wh.size() == 2 ? wh[1].toInt(&ok_h) : 0;
    if (!ok_w || !ok_h || width < 640 || height < 480 || width > 7680 || height > 4320)
      return fail("--size: expected WIDTHxHEIGHT from 640x480 to 7680x4320, e.g. 1280x800", exit_bad_input);
    window.resize(width, height);
    window.traces()->setWindowSeconds(std::max(seconds, 0.01));  // the whole run in view
    if (parser.value(view) == "compare")  // something to compare: the study, two faults, the present design
      for (const char* what : {"opened", "faults.entrained_air", "faults.line_volume_factor"})
        window.addToComparison(what);
    if (!window.showView(parser.value(view)))
      return fail("--view: expected charts, circuit, room or compare, got \"" + parser.value(view) + "\"", exit_bad_input);
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
    const double wall_seconds = parser.value(measure).toDouble(&ok_seconds);
    const double scale = parser.value(time_scale).toDouble(&ok_scale);
    if (!ok_seconds || wall_seconds <= 0.0 || wall_seconds > 3600.0 || !ok_scale || scale < 1e-3 || scale > 1.0)
      return fail("--measure SECONDS (0..3600) and --time-scale (0.001..1) expected", exit_bad_input);
    window.show();
    window.session()->setTimeScale(scale);
    window.session()->start();
    const long long frames_before = window.framesDrawn();
    const double cpu_before = process_cpu_seconds();
    const double sim_before = window.session()->simulatedTime();
    QElapsedTimer wall;
    wall.start();
    QTimer::singleShot(static_cast<int>(wall_seconds * 1000), &app, [&] {
      const double elapsed = wall.elapsed() * 1e-3;
      std::printf("time scale %g: %.1f display frames/s, CPU %.1f %% of one core, %.4f s simulated in %.2f s\n", scale,
                  (window.framesDrawn() - frames_before) / elapsed,
                  100.0 * (process_cpu_seconds() - cpu_before) / elapsed,
                  window.session()->simulatedTime() - sim_before, elapsed);
      QApplication::exit(0);
    });
    return QApplication::exec();
  }

  return QApplication::exec();
}
