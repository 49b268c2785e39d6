#include "session_controller.hpp"

#include <QElapsedTimer>
#include <QThread>
#include <QTimer>
#include <algorithm>
#include <atomic>
#include <exception>

namespace swashtune::ui {

// Lives on the worker thread; everything that touches the session runs there.
class SessionWorker : public QObject {
 public:
  explicit SessionWorker(SessionController* owner) : owner_(owner) {}

  void startTicking() {
    timer_ = new QTimer(this);
    timer_->setTimerType(Qt::PreciseTimer);
    timer_->setInterval(8);
    connect(timer_, &QTimer::timeout, this, [this] { tick(); });
    timer_->start();
    wall_.start();
  }

  // Live samples: 1 ms of wall time apart, or the study's own spacing when
  // that is finer (a fast oscillation must not alias into slow beats).
  double liveInterval() const { return std::min(SessionController::sampleIntervalFor(scale_), study_interval_); }

  void load(const Scenario& study) {
    Scenario s = study;
    study_interval_ = study.settings.sample_interval > 0.0 ? study.settings.sample_interval : 1e-3;
    s.settings.sample_interval = liveInterval();
    session_ = std::make_unique<LiveSession>(s);
    running_ = false;
    publish({session_->sample_now()});  // the t = 0 row: present values and exports start there
  }

  void reset() {
    const ModelParameters now = session_->parameters_now();
    session_->reset(now);
    running_ = false;
    publish({session_->sample_now()});
  }

  Event change(const std::string& key, double to, double ramp) {
    const Event e = session_->change(key, to, ramp);
    publish({});
    return e;
  }

  void setScale(double scale) {
    scale_ = scale;
    if (session_) session_->set_sample_interval(liveInterval());
  }

  // Advances and hands the samples over; false (with the message) on failure.
  bool advance(double seconds, QString* error) {
    std::vector<Sample> fresh;
    try {
      session_->advance(seconds, [&](const Sample& s) { fresh.push_back(s); });
    } catch (const std::exception& e) {
      running_ = false;
      publish(std::move(fresh));
      if (error) *error = QString::fromStdString(e.what());
      return false;
    }
    publish(std::move(fresh));
    return true;
  }

  void tick() {
    const double wall = wall_.restart() * 1e-3;
    if (!running_ || !session_) return;
    // Never more than 50 ms of wall time at once: after a stall the run
    // falls behind instead of jumping.
    QString error;
    if (!advance(scale_ * std::min(wall, 0.05), &error)) {
      emit owner_->runningChanged(false);
      emit owner_->solverFailed(error);
    }
  }

  // Copies what the UI thread may read, under the lock.
  void publish(std::vector<Sample> fresh) {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      pending_.insert(pending_.end(), fresh.begin(), fresh.end());
      snapshot_.latest = session_->sample_now();
      snapshot_.parameters = session_->parameters_now();
      snapshot_.stats = session_->stats();
      snapshot_.start = session_->start();
    }
    if (!fresh.empty()) emit owner_->samplesReady();
  }

  struct Snapshot {
    Sample latest;
    ModelParameters parameters = default_parameters();
    SolverStats stats;
    OperatingPoint start;
  };

  SessionController* owner_;
  std::unique_ptr<LiveSession> session_;
  QTimer* timer_ = nullptr;
  QElapsedTimer wall_;
  std::atomic<bool> running_{false};
  std::atomic<double> scale_{1.0};
  double study_interval_ = 1e-3;
  mutable std::mutex mutex_;
  std::vector<Sample> pending_;
  Snapshot snapshot_;
};

namespace {

// Runs f on the worker's thread and waits; exceptions come back to the caller.
template <class F>
void run_on_worker(SessionWorker* worker, F&& f) {
  std::exception_ptr failure;
  QMetaObject::invokeMethod(
      worker,
      [&] {
        try {
          f();
        } catch (...) {
          failure = std::current_exception();
        }
      },
      Qt::BlockingQueuedConnection);
  if (failure) std::rethrow_exception(failure);
}

}  // namespace

SessionController::SessionController(QObject* parent)
    : QObject(parent), thread_(new QThread), worker_(new SessionWorker(this)) {
  qRegisterMetaType<swashtune::Event>("swashtune::Event");
  worker_->moveToThread(thread_);
  connect(thread_, &QThread::finished, worker_, &QObject::deleteLater);
  thread_->start();
  QMetaObject::invokeMethod(
      worker_, [w = worker_] { w->startTicking(); }, Qt::BlockingQueuedConnection);
  load(Scenario{});
}

SessionController::~SessionController() {
  thread_->quit();
  thread_->wait();
  delete thread_;
}

void SessionController::load(const Scenario& study) {
  run_on_worker(worker_, [&] { worker_->load(study); });
  emit runningChanged(false);
  emit sessionStarted();
}

void SessionController::start() {
  if (worker_->running_.exchange(true)) return;
  emit runningChanged(true);
}

void SessionController::pause() {
  if (!worker_->running_.exchange(false)) return;
  emit runningChanged(false);
}

bool SessionController::running() const { return worker_->running_; }

void SessionController::step() {
  pause();
  QString error;
  if (!advanceNow(0.05 * timeScale(), &error)) emit solverFailed(error);
}

void SessionController::resetToSteadyState() {
  run_on_worker(worker_, [&] { worker_->reset(); });
  emit runningChanged(false);
  emit sessionStarted();
}

void SessionController::setTimeScale(double scale) {
  scale = std::clamp(scale, 1e-3, 1.0);
  run_on_worker(worker_, [&] { worker_->setScale(scale); });
}

double SessionController::timeScale() const { return worker_->scale_; }

void SessionController::change(const std::string& key, double to, double ramp) {
  Event e;
  run_on_worker(worker_, [&] { e = worker_->change(key, to, ramp); });
  emit changed(e);
}

bool SessionController::advanceNow(double seconds, QString* error) {
  bool ok = true;
  run_on_worker(worker_, [&] { ok = worker_->advance(seconds, error); });
  return ok;
}

std::vector<Sample> SessionController::takeSamples() {
  std::lock_guard<std::mutex> lock(worker_->mutex_);
  std::vector<Sample> out;
  out.swap(worker_->pending_);
  return out;
}

Scenario SessionController::sessionScenario() const {
  Scenario s;
  run_on_worker(worker_, [&] { s = worker_->session_->to_scenario(); });
  return s;
}

ModelParameters SessionController::parametersNow() const {
  std::lock_guard<std::mutex> lock(worker_->mutex_);
  return worker_->snapshot_.parameters;
}

Sample SessionController::latest() const {
  std::lock_guard<std::mutex> lock(worker_->mutex_);
  return worker_->snapshot_.latest;
}

double SessionController::simulatedTime() const { return latest().time; }

SolverStats SessionController::solverStats() const {
  std::lock_guard<std::mutex> lock(worker_->mutex_);
  return worker_->snapshot_.stats;
}

OperatingPoint SessionController::startingPoint() const {
  std::lock_guard<std::mutex> lock(worker_->mutex_);
  return worker_->snapshot_.start;
}

double SessionController::sampleIntervalFor(double scale) { return std::clamp(1e-3 * scale, 1e-6, 1e-3); }

}  // namespace swashtune::ui
