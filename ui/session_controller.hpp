// Owns the live session on a worker thread and paces it against the wall
// clock. The UI thread never integrates: it posts changes (which become
// events at the present simulated time) and collects samples at display rate.
#pragma once

#include <QObject>
#include <QString>
#include <memory>
#include <mutex>
#include <vector>

#include "swashtune/live_session.hpp"

class QThread;

namespace swashtune::ui {

class SessionWorker;

class SessionController : public QObject {
  Q_OBJECT
 public:
  explicit SessionController(QObject* parent = nullptr);
  ~SessionController() override;

  // Starts a new session from a study (its events are scheduled too). Paused.
  void load(const Scenario& study);
  void start();
  void pause();
  bool running() const;
  // Advances by a short slice of simulated time (what 50 ms of wall time
  // shows at the present time scale) and pauses.
  void step();
  // Starts over at t = 0 from the steady state of the present parameters.
  void resetToSteadyState();
  // Simulated seconds per wall second: 1 (real time) down to 1/1000.
  void setTimeScale(double scale);
  double timeScale() const;

  // A change now: the parameter moves to `to` (stored units) over `ramp` s.
  // Throws ScenarioError for a bad key or value (checked before posting).
  void change(const std::string& key, double to, double ramp = 0.0);

  // Runs `seconds` of simulated time at once, in the worker, and waits for it
  // (screenshots, tests). Returns false with the message when the solver fails.
  bool advanceNow(double seconds, QString* error = nullptr);

  // Samples produced since the last call, in time order.
  std::vector<Sample> takeSamples();

  // Snapshot of the session (thread-safe copies).
  Scenario sessionScenario() const;  // initial parameters and every event so far
  ModelParameters parametersNow() const;
  Sample latest() const;  // the newest sample
  double simulatedTime() const;
  SolverStats solverStats() const;
  OperatingPoint startingPoint() const;

  // Sample spacing for a time scale: 1 ms of wall time, within 1 us..1 ms.
  static double sampleIntervalFor(double scale);

 signals:
  void samplesReady();                          // new samples can be taken
  void changed(const swashtune::Event& event);  // a change became an event
  void runningChanged(bool running);
  void sessionStarted();  // after load() or a reset
  void solverFailed(const QString& message);

 private:
  friend class SessionWorker;
  QThread* thread_;
  SessionWorker* worker_;
};

}  // namespace swashtune::ui
