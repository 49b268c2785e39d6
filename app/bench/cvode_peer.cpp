#include "cvode_peer.hpp"

#include <cvode/cvode.h>
#include <nvector/nvector_serial.h>
#include <sundials/sundials_config.h>
#include <sunlinsol/sunlinsol_dense.h>
#include <sunmatrix/sunmatrix_dense.h>

#include <algorithm>
#include <array>
#include <chrono>
#include <cmath>
#include <limits>
#include <optional>
#include <string>

#include "swashtune/end_stops.hpp"
#include "swashtune/model.hpp"
#include "swashtune/schedule.hpp"
#include "swashtune/segment_parameters.hpp"

static_assert(SUNDIALS_VERSION_MAJOR == 6, "the CVODE peer is written for the SUNDIALS 6 API");

namespace swashtune::bench {
namespace {

constexpr double infinity = std::numeric_limits<double>::infinity();

// SUNDIALS objects, freed in reverse order of creation.
struct CvodeHandles {
  SUNContext context = nullptr;
  N_Vector y = nullptr;
  N_Vector abstol = nullptr;
  N_Vector dense = nullptr;  // dense output at a sample time
  SUNMatrix matrix = nullptr;
  SUNLinearSolver linear_solver = nullptr;
  void* memory = nullptr;

  CvodeHandles() = default;
  CvodeHandles(const CvodeHandles&) = delete;
  CvodeHandles& operator=(const CvodeHandles&) = delete;
  ~CvodeHandles() {
    if (memory) CVodeFree(&memory);
    if (linear_solver) SUNLinSolFree(linear_solver);
    if (matrix) SUNMatDestroy(matrix);
    if (dense) N_VDestroy(dense);
    if (abstol) N_VDestroy(abstol);
    if (y) N_VDestroy(y);
    if (context) SUNContext_Free(&context);
  }
};

class Peer {
 public:
  Peer(const Scenario& scenario, const InitialCondition& start)
      : settings_(scenario.settings),
        schedule_(scenario.parameters),
        scale_(state_scale(scenario.parameters)),
        segment_(schedule_),
        x_(start.x),
        modes_(start.modes),
        thresholds_(scenario.parameters, scale_[state::discharge_pressure]) {
    for (const Event& e : scenario.events) schedule_.add(e);
    segment_.begin(t_, schedule_.next_corner_after(t_));
    pin_held_coordinates();
  }

  PeerResult run() {
    const auto wall_start = std::chrono::steady_clock::now();
    create_solver();
    const double t_end = settings_.duration;
    result_.peak_discharge_pressure = -infinity;
    result_.trace.reserve(static_cast<std::size_t>(t_end / settings_.sample_interval) + 2);
    emit_samples_until(t_, false);

    bool restart = true;
    double segment_end = -infinity;
    while (t_ < t_end) {
      const double corner = schedule_.next_corner_after(t_);
      const double stop_at = std::min(corner, t_end);
      if (restart || stop_at != segment_end) {
        segment_.begin(t_, corner);
        segment_end = stop_at;
        pin_held_coordinates();  // held coordinates take up the new stretch's stop motion
      }
      if (restart) {
        restart_at(stop_at);
        restart = false;
      }
      double t_reached = t_;
      const int flag = CVode(cv_.memory, stop_at, cv_.y, &t_reached, CV_ONE_STEP);
      if (flag < 0) throw SolverError(t_, "CVODE: " + error_message_);
      if (flag == CV_TSTOP_RETURN) t_reached = stop_at;
      emit_samples_until(t_reached, true);
      t_ = t_reached;
      x_ = physical();
      if (!x_.allFinite()) throw SolverError(t_, "the state became non-finite");
      if (flag == CV_ROOT_RETURN) {
        std::array<int, max_guards> found{};
        CVodeGetRootInfo(cv_.memory, found.data());
        const int first = static_cast<int>(
            std::find_if(found.begin(), found.begin() + guard_count_, [](int f) { return f != 0; }) - found.begin());
        // The project takes the earliest guard, the first listed on a tie;
        // CVODE reports every guard that switched at the same root time.
        if (first < guard_count_) {
          apply_switch(guards_[first]);
          pin_held_coordinates();
          restart = true;
        }
      }
      if (t_ >= stop_at && stop_at == corner) {
        pin_held_coordinates();  // a stop position itself may have changed
        restart = true;
      }
      observe(t_, x_);
    }
    harvest_counters();
    result_.stats.solver.rejected_steps = result_.stats.error_test_failures + result_.stats.convergence_failures;
    result_.stats.solver.wall_time_s =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - wall_start).count();
    return std::move(result_);
  }

 private:
  static constexpr int max_guards = 4;

  RunSettings settings_;
  Schedule schedule_;
  State scale_;
  SegmentParameters segment_;
  double t_ = 0.0;
  State x_;
  StopModes modes_;
  long long next_sample_ = 0;
  StopThresholds thresholds_;
  std::array<StopGuard, max_guards> guards_{};
  int guard_count_ = 0;
  CvodeHandles cv_;
  bool started_ = false;
  std::string error_message_ = "failed";
  PeerResult result_;

  // ---- CVODE callbacks (scaled states z = x / scale) ----------------------

  static int rhs(realtype t, N_Vector y, N_Vector ydot, void* user) {
    Peer& self = *static_cast<Peer*>(user);
    ++self.result_.stats.solver.rhs_evaluations;
    const State x = Eigen::Map<const Eigen::VectorXd>(N_VGetArrayPointer(y), self.size()).cwiseProduct(self.scale_);
    const ModelParameters& p = self.segment_.params(t);
    State dx = derivatives<double>(p, self.segment_.derived(t), self.modes_, x);
    add_stop_motion(self.modes_, self.stop_motion(), dx);
    Eigen::Map<Eigen::VectorXd>(N_VGetArrayPointer(ydot), self.size()) = dx.cwiseQuotient(self.scale_);
    return 0;
  }

  static int jacobian(realtype t, N_Vector y, N_Vector /*fy*/, SUNMatrix jac, void* user, N_Vector /*tmp1*/,
                      N_Vector /*tmp2*/, N_Vector /*tmp3*/) {
    Peer& self = *static_cast<Peer*>(user);
    ++self.result_.stats.solver.jacobian_evaluations;
    const State x = Eigen::Map<const Eigen::VectorXd>(N_VGetArrayPointer(y), self.size()).cwiseProduct(self.scale_);
    const ModelParameters& p = self.segment_.params(t);
    const Jacobian j = swashtune::jacobian(p, self.segment_.derived(t), self.modes_, x);
    // SUNDIALS dense matrices are column-major, like Eigen's default.
    Eigen::Map<Eigen::MatrixXd>(SM_DATA_D(jac), self.size(), self.size()) =
        self.scale_.cwiseInverse().asDiagonal() * j * self.scale_.asDiagonal();
    return 0;
  }

  static int guard_functions(realtype t, N_Vector y, realtype* gout, void* user) {
    Peer& self = *static_cast<Peer*>(user);
    const State x = Eigen::Map<const Eigen::VectorXd>(N_VGetArrayPointer(y), self.size()).cwiseProduct(self.scale_);
    for (int i = 0; i < self.guard_count_; ++i) gout[i] = self.guard_value(self.guards_[i], t, x);
    return 0;
  }

  static void on_error(int code, const char* /*module*/, const char* function, char* message, void* user) {
    if (code >= 0) return;  // warnings: CVODE recovers by itself
    static_cast<Peer*>(user)->error_message_ = std::string(function) + ": " + message;
  }

  // ---- setup and restarts ---------------------------------------------------

  void check(int flag, const char* what) {
    if (flag < 0) throw SolverError(t_, std::string("CVODE set-up: ") + what + " failed");
  }

  void create_solver() {
    check(SUNContext_Create(nullptr, &cv_.context), "SUNContext_Create");
    cv_.y = N_VNew_Serial(size(), cv_.context);
    cv_.abstol = N_VNew_Serial(size(), cv_.context);
    cv_.dense = N_VNew_Serial(size(), cv_.context);
    cv_.matrix = SUNDenseMatrix(size(), size(), cv_.context);
    if (!cv_.y || !cv_.abstol || !cv_.dense || !cv_.matrix) throw SolverError(t_, "CVODE set-up: out of memory");
    cv_.linear_solver = SUNLinSol_Dense(cv_.y, cv_.matrix, cv_.context);
    cv_.memory = CVodeCreate(CV_BDF, cv_.context);
    if (!cv_.linear_solver || !cv_.memory) throw SolverError(t_, "CVODE set-up: out of memory");
    check(CVodeSetErrHandlerFn(cv_.memory, on_error, this), "CVodeSetErrHandlerFn");
    load_state();
    check(CVodeInit(cv_.memory, rhs, t_, cv_.y), "CVodeInit");
    check(CVodeSetUserData(cv_.memory, this), "CVodeSetUserData");
    // The states are scaled to order one, so atol is the same fraction of
    // each state's scale, as in the project's error control.
    N_VConst(settings_.atol, cv_.abstol);
    check(CVodeSVtolerances(cv_.memory, settings_.rtol, cv_.abstol), "CVodeSVtolerances");
    check(CVodeSetLinearSolver(cv_.memory, cv_.linear_solver, cv_.matrix), "CVodeSetLinearSolver");
    check(CVodeSetJacFn(cv_.memory, jacobian), "CVodeSetJacFn");
    check(CVodeSetMaxStep(cv_.memory, settings_.max_step), "CVodeSetMaxStep");
    check(CVodeSetMaxNumSteps(cv_.memory, 1000000), "CVodeSetMaxNumSteps");
    check(CVodeSetNoInactiveRootWarn(cv_.memory), "CVodeSetNoInactiveRootWarn");
  }

  void load_state() { Eigen::Map<Eigen::VectorXd>(N_VGetArrayPointer(cv_.y), size()) = x_.cwiseQuotient(scale_); }
  State physical() const {
    return Eigen::Map<const Eigen::VectorXd>(N_VGetArrayPointer(cv_.y), size()).cwiseProduct(scale_);
  }
  int size() const { return static_cast<int>(scale_.size()); }
  StopMotion stop_motion() const {
    return StopMotion{segment_.slope(&ModelParameters::max_swash_angle),
                      segment_.slope(&ModelParameters::spool_travel)};
  }

  // Restarts CVODE at (t_, x_) after a switch or a corner: fresh history,
  // the guards of the present stop modes, and the next corner as stop time.
  void restart_at(double stop_at) {
    // A parameter step at a corner can leave a guard already past its
    // threshold; the project's solver then switches at the step's start.
    // Each pass settles one coordinate, so a few passes are enough.
    for (int pass = 0; pass < max_guards; ++pass) {
      select_guards();
      const std::optional<StopGuard> g = first_guard_past_threshold();
      if (!g) break;
      apply_switch(*g);
      pin_held_coordinates();
    }
    select_guards();
    harvest_counters();
    if (started_) ++result_.stats.restarts;
    started_ = true;
    load_state();
    check(CVodeReInit(cv_.memory, t_, cv_.y), "CVodeReInit");
    check(CVodeSetStopTime(cv_.memory, stop_at), "CVodeSetStopTime");
    check(CVodeRootInit(cv_.memory, guard_count_, guard_functions), "CVodeRootInit");
    // Only a guard falling below zero switches, as in the project's solver.
    std::array<int, max_guards> direction;
    direction.fill(-1);
    check(CVodeSetRootDirection(cv_.memory, direction.data()), "CVodeSetRootDirection");
  }

  // Adds CVODE's counters of the life that ends now (CVodeReInit zeroes them).
  void harvest_counters() {
    long steps = 0, error_tests = 0, convergence = 0, newton = 0;
    CVodeGetNumSteps(cv_.memory, &steps);
    CVodeGetNumErrTestFails(cv_.memory, &error_tests);
    CVodeGetNumNonlinSolvConvFails(cv_.memory, &convergence);
    CVodeGetNumNonlinSolvIters(cv_.memory, &newton);
    PeerStats& s = result_.stats;
    s.solver.steps += steps;
    s.error_test_failures += error_tests;
    s.convergence_failures += convergence;
    s.newton_iterations += newton;
  }

  // ---- the end-stop logic of core/src/simulator.cpp -------------------------

  void pin_held_coordinates() {
    const ModelParameters p = schedule_.at(t_);
    pin_to_stops(p, Derived(p), thresholds_, stop_motion(), modes_, x_);
  }

  void select_guards() {
    const ActiveGuards active = active_stop_guards(modes_);
    guard_count_ = active.count;
    for (int k = 0; k < active.count; ++k) guards_[k] = active.guard[k];
  }

  std::optional<StopGuard> first_guard_past_threshold() {
    for (int i = 0; i < guard_count_; ++i)
      if (guard_value(guards_[i], t_, x_) < 0.0) return guards_[i];
    return std::nullopt;
  }

  // The switch happens when a guard falls below zero.
  double guard_value(StopGuard g, double ts, const State& xs) {
    return stop_guard_value(g, segment_.params(ts), segment_.derived(ts), modes_, thresholds_, xs);
  }

  void apply_switch(StopGuard g) {
    ++result_.stats.solver.stop_events;
    apply_stop_switch(g, segment_.params(t_), segment_.derived(t_), thresholds_, modes_, x_);
  }

  // ---- the trace ------------------------------------------------------------

  double sample_time(long long k) const { return static_cast<double>(k) * settings_.sample_interval; }

  void emit_samples_until(double t_limit, bool dense) {
    while (sample_time(next_sample_) <= t_limit * (1.0 + 1e-14) + 1e-15) {
      const double ts = sample_time(next_sample_);
      State xs = x_;
      if (dense) {
        // CVODE's interpolant over the last step; a grid time a rounding
        // error past the step's end is taken at the end.
        if (CVodeGetDky(cv_.memory, std::min(ts, t_limit), 0, cv_.dense) < 0)
          throw SolverError(ts, "CVODE: no dense output at a sample time");
        xs = Eigen::Map<const Eigen::VectorXd>(N_VGetArrayPointer(cv_.dense), size()).cwiseProduct(scale_);
      }
      const Sample s = make_sample(ts, xs, schedule_.at(ts));
      observe(ts, xs);
      result_.trace.push_back(s);
      ++next_sample_;
    }
  }

  void observe(double /*t*/, const State& x) {
    result_.peak_discharge_pressure = std::max(result_.peak_discharge_pressure, x[state::discharge_pressure]);
  }
};

}  // namespace

PeerResult run_cvode_peer(const Scenario& scenario, const InitialCondition& start) {
  Peer peer(scenario, start);
  return peer.run();
}

}  // namespace swashtune::bench
