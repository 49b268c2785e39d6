#include "swashtune/simulator.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <limits>
#include <optional>
#include <sstream>
#include <utility>

#include "rosenbrock.hpp"
#include "swashtune/analysis.hpp"
#include "swashtune/end_stops.hpp"
#include "swashtune/segment_parameters.hpp"

namespace swashtune {
namespace {

using Stepper = detail::Rosenbrock4<Eigen::Dynamic, max_states>;

constexpr double infinity = std::numeric_limits<double>::infinity();

std::string format_time(double t) {
  std::ostringstream out;
  out.precision(9);
  out << t << " s";
  return out.str();
}

// The model in states scaled to order one (z = x / scale), with the
// parameters of one segment between schedule corners. Within a segment every
// scheduled parameter is linear in time.
class ScaledDynamics {
 public:
  ScaledDynamics(const Schedule& schedule, const State& scale, SolverStats& stats)
      : segment_(schedule), scale_(scale), stats_(stats) {}

  void begin_segment(double t0, double t1, const StopModes& modes) {
    modes_ = modes;
    segment_.begin(t0, t1);
  }

  const StopModes& modes() const { return modes_; }
  bool ramping() const { return segment_.ramping(); }
  const ModelParameters& params(double t) { return segment_.params(t); }
  const Derived& derived(double t) { return segment_.derived(t); }

  State physical(const State& z) const { return z.cwiseProduct(scale_); }
  State scaled(const State& x) const { return x.cwiseQuotient(scale_); }

  State rates(double t, const State& x) {
    ++stats_.rhs_evaluations;
    const ModelParameters& p = params(t);
    State dx = derivatives<double>(p, segment_.derived(t), modes_, x);
    add_stop_motion(modes_, stop_motion(), dx);
    return dx;
  }

  // How fast the stops move in this stretch (their parameters ramp linearly).
  StopMotion stop_motion() const {
    return StopMotion{segment_.slope(&ModelParameters::max_swash_angle),
                      segment_.slope(&ModelParameters::spool_travel)};
  }

  // The stepper's view: rates and Jacobian in scaled states.
  State rhs(double t, const State& z) { return scaled(rates(t, physical(z))); }

  void jacobian(double t, const State& z, Jacobian& jac, State& dfdt) {
    ++stats_.jacobian_evaluations;
    const State x = physical(z);
    const ModelParameters& p = params(t);
    jac = swashtune::jacobian(p, segment_.derived(t), modes_, x);
    const int n = static_cast<int>(z.size());
    for (int j = 0; j < n; ++j)
      for (int i = 0; i < n; ++i) jac(i, j) *= scale_[j] / scale_[i];
    if (!segment_.ramping()) {
      dfdt.setZero(z.size());
      return;
    }
    // Parameters are linear in t here, so a central difference is accurate.
    const double h = 1e-7 * std::max(1e-3, std::abs(t));
    const State up = rates(t + h, x);
    const State down = rates(t - h, x);
    params(t);
    dfdt = scaled((up - down) / (2.0 * h));
  }

 private:
  SegmentParameters segment_;
  State scale_;
  SolverStats& stats_;
  StopModes modes_;
};

}  // namespace

Sample make_sample(double t, const State& x, const ModelParameters& p) {
  const Flows f = flows(p, x);
  Sample s;
  s.time = t;
  s.x = x;
  s.pump_flow = f.geometric - f.leakage;
  s.load_flow = f.load;
  s.valve_end_pressure = f.valve_end_pressure;
  s.leakage_flow = f.leakage;
  s.control_flow = f.to_control;
  s.opening = p.opening;
  s.setting = p.setting;
  return s;
}

SolverError::SolverError(double time, const std::string& why)
    : std::runtime_error("solver failed at t = " + format_time(time) + ": " + why), time_(time) {}

State state_scale(const ModelParameters& p) {
  const double pressure = std::max(p.setting, 1e6);
  const double response_time = 0.01;  // s, a typical loop time constant
  const Layout layout = layout_of(p);
  State s(layout.size);
  s.head<state::core_size>() << pressure, pressure, p.max_swash_angle, p.max_swash_angle / response_time,
      p.spool_travel, p.spool_travel / response_time;
  const double air = std::max(p.dissolved_air, 1e-3);
  for (int i : {layout.port_pressure})
    if (i >= 0) s[i] = pressure;
  for (int i : {layout.line_air, layout.chamber_air, layout.port_air})
    if (i >= 0) s[i] = air;
  if (layout.shaft_angle >= 0) s[layout.shaft_angle] = 2.0 * pi;
  if (layout.line_reaches > 0) {
    LineElement line(p, p.density, 1e-6 * p.viscosity_grade);
    line.locate(layout);
    line.set_scales(s, pressure, p.displacement * p.speed / 60.0);
  }
  return s;
}

InitialCondition full_stroke_guess(const ModelParameters& p) {
  const Derived d(p);
  // Line pressure where the delivered full-stroke flow passes the valve
  // (bisection: the valve flow grows and the delivery falls with pressure).
  double line_pressure = d.setting;
  if (p.opening * p.valve_area > 0.0) {
    double lo = p.tank_pressure, hi = std::max(2.0 * d.setting, p.tank_pressure + 1e6);
    auto excess = [&](double pd) {
      return d.full_flow - d.leakage_coefficient * pd -
             orifice_flow(p.valve_discharge_coefficient, p.opening * p.valve_area, pd - p.tank_pressure, p.density,
                          p.transition_pressure);
    };
    if (excess(hi) < 0.0) {
      for (int i = 0; i < 200; ++i) {
        const double mid = 0.5 * (lo + hi);
        (excess(mid) > 0.0 ? lo : hi) = mid;
      }
      line_pressure = std::min(0.5 * (lo + hi), d.setting);
    }
  }
  InitialCondition ic;
  const Layout layout = layout_of(p);
  ic.x = zero_state(layout);
  ic.x[state::discharge_pressure] = line_pressure;
  ic.x[state::control_pressure] = p.tank_pressure;
  if (layout.port_pressure >= 0) ic.x[layout.port_pressure] = p.tank_pressure;
  d.line.set_steady(ic.x, line_pressure, d.full_flow - d.leakage_coefficient * line_pressure);
  ic.x[state::swash_angle] = p.max_swash_angle;
  ic.modes.swash = Stop::upper;
  ic.modes.spool = Stop::free;
  return ic;
}

// Sample times k * interval as decimals: when the interval is a short
// decimal (0.35 ms = 35 / 1e5) the time is (35 k) / 1e5, the double nearest
// the decimal, not k * 0.00035 with its last-bit noise (0.0059499999999999996).
struct SampleGrid {
  double interval = 1.0;
  double numerator = 0.0, denominator = 0.0;  // interval == numerator / denominator, or 0 when it is no short decimal
  explicit SampleGrid(double dt) : interval(dt) {
    double den = 1.0;
    for (int p = 0; p <= 15; ++p, den *= 10.0) {
      const double num = std::round(dt * den);
      if (num > 0.0 && num < 9e15 && num / den == dt) {
        numerator = num;
        denominator = den;
        return;
      }
    }
  }
  double time(long long k) const {
    const double n = static_cast<double>(k) * numerator;  // exact below 2^53
    return numerator > 0.0 && n < 9e15 ? n / denominator : static_cast<double>(k) * interval;
  }
};

struct Simulator::Impl {
  Impl(const ModelParameters& initial, const RunSettings& s, const InitialCondition& start, double t0)
      : settings(s),
        schedule(initial),
        scale(state_scale(initial)),
        dynamics(schedule, scale, stats),
        t(t0),
        x(start.x),
        modes(start.modes),
        next_sample(static_cast<long long>(std::ceil(t0 / s.sample_interval - 1e-9))),
        grid(s.sample_interval),
        thresholds(initial, scale[state::discharge_pressure]) {
    pin_held();
  }

  RunSettings settings;
  Schedule schedule;
  State scale;
  SolverStats stats;
  ScaledDynamics dynamics;
  std::optional<Stepper> stepper;  // rebuilt at every restart: no stale error history
  double t;
  State x;
  StopModes modes;
  State z_old, z_new;  // scaled states at the ends of the last accepted step
  double dt = 1e-6;
  double step_start = 0.0, step_end = 0.0;
  bool restart = true;
  long long next_sample;
  SampleGrid grid;
  StepObserver observer;
  StopThresholds thresholds;

  double sample_time(long long k) const { return grid.time(k); }

  void pin_held() {
    const ModelParameters p = schedule.at(t);
    pin_to_stops(p, Derived(p), thresholds, dynamics.stop_motion(), modes, x);
  }

  double guard_value(StopGuard g, double ts, const State& xs) {
    return stop_guard_value(g, dynamics.params(ts), dynamics.derived(ts), modes, thresholds, xs);
  }

  // Dense output inside the last accepted step [step_start, step_end].
  State interpolate(double ts) {
    return dynamics.physical(stepper->interpolate(ts, z_old, step_start, z_new, step_end));
  }

  // Earliest guard that switches within (t0, t1]: returns the time just past
  // the switch (the right end of a tight bracket) and which guard it was.
  std::pair<double, StopGuard> locate_switch(double t0, double t1, const State& x1, bool& found) {
    found = false;
    double best_time = t1;
    StopGuard best = StopGuard::swash_lower_hit;
    const State x0 = dynamics.physical(z_old);
    const ActiveGuards active = active_stop_guards(modes);
    for (int k = 0; k < active.count; ++k) {
      const StopGuard g = active.guard[k];
      if (guard_value(g, t1, x1) >= 0.0) continue;
      double lo = t0, hi = t1;
      double g_lo = guard_value(g, t0, x0), g_hi = guard_value(g, t1, x1);
      if (g_lo < 0.0) {
        hi = t0;  // already past the threshold at the step's start
      } else {
        // Illinois variant of regula falsi on the dense output.
        const double tolerance = std::max(1e-13, 1e-9 * (t1 - t0));
        int side = 0;
        for (int it = 0; it < 200 && hi - lo > tolerance; ++it) {
          double tm = (lo * g_hi - hi * g_lo) / (g_hi - g_lo);
          if (!(tm > lo && tm < hi)) tm = 0.5 * (lo + hi);
          const double gm = guard_value(g, tm, interpolate(tm));
          if (gm >= 0.0) {
            lo = tm;
            g_lo = gm;
            if (side == -1) g_hi *= 0.5;
            side = -1;
          } else {
            hi = tm;
            g_hi = gm;
            if (side == 1) g_lo *= 0.5;
            side = 1;
          }
        }
      }
      if (!found || hi < best_time) {
        best_time = hi;
        best = g;
        found = true;
      }
    }
    return {best_time, best};
  }

  void apply_switch(StopGuard g) {
    ++stats.stop_events;
    apply_stop_switch(g, dynamics.params(t), dynamics.derived(t), thresholds, modes, x);
  }

  void emit_samples_until(double t_limit, bool dense, const SampleSink& sink) {
    while (sample_time(next_sample) <= t_limit * (1.0 + 1e-14) + 1e-15) {
      const double ts = sample_time(next_sample);
      const State xs = dense ? interpolate(ts) : x;
      if (sink) sink(make_sample(ts, xs, schedule.at(ts)));
      ++next_sample;
    }
  }

  void advance_to(double t_end, const SampleSink& sink) {
    const auto wall_start = std::chrono::steady_clock::now();
    if (t_end < t) t_end = t;
    // Samples at the present time (the very first call).
    emit_samples_until(t, false, sink);
    int rejected_in_a_row = 0;
    double segment_end = -infinity;
    while (t < t_end) {
      const double corner = schedule.next_corner_after(t);
      const double stop_at = std::min(corner, t_end);
      if (restart || stop_at != segment_end) {
        dynamics.begin_segment(t, corner, modes);
        segment_end = stop_at;
        pin_held();  // held coordinates take up the new stretch's stop motion
      }
      if (restart) {
        stepper.emplace(settings.atol, settings.rtol);
        restart = false;
      }
      z_old = dynamics.scaled(x);
      double step = std::min({dt, settings.max_step, stop_at - t});
      double t_try = t;
      if (!stepper->try_step(dynamics, z_old, t_try, z_new, step)) {
        ++stats.rejected_steps;
        if (++rejected_in_a_row > 500 || step < 1e-14 * std::max(1.0, std::abs(t)))
          throw SolverError(t, "the step size collapsed (" + std::to_string(step) +
                                   " s) after repeated error-test failures; the loop may be unstable or a "
                                   "parameter out of its physical range");
        dt = step;
        continue;
      }
      rejected_in_a_row = 0;
      ++stats.steps;
      // try_step moved t_try to the step's end and proposed the next size.
      const double t0 = t;
      step_start = t;
      step_end = t_try;
      double t1 = (std::abs(t_try - stop_at) <= 1e-12 * std::max(1.0, std::abs(stop_at))) ? stop_at : t_try;
      dt = step;
      State x1 = dynamics.physical(z_new);
      if (!x1.allFinite()) throw SolverError(t1, "the state became non-finite");

      bool switched = false;
      const auto [t_switch, guard] = locate_switch(t0, t1, x1, switched);
      if (switched) {
        if (t_switch < t1) x1 = interpolate(t_switch);
        t1 = t_switch;
      }
      emit_samples_until(t1, true, sink);
      t = t1;
      x = x1;
      if (switched) {
        apply_switch(guard);
        pin_held();
        restart = true;
        dt = std::max(dt, 1e-9);
      }
      if (t >= stop_at && stop_at == corner) {
        pin_held();  // a stop position itself may have changed
        restart = true;
      }
      if (observer) observer(t, x);
    }
    stats.wall_time_s += std::chrono::duration<double>(std::chrono::steady_clock::now() - wall_start).count();
  }
};

Simulator::Simulator(const ModelParameters& initial, const RunSettings& settings, const InitialCondition& start,
                     double start_time)
    : impl_(std::make_unique<Impl>(initial, settings, start, start_time)) {}

Simulator::~Simulator() = default;

void Simulator::add_event(const Event& event) {
  if (event.at < impl_->t)
    throw std::invalid_argument("event on " + event.target + " at " + format_time(event.at) +
                                " starts before the present time " + format_time(impl_->t));
  impl_->schedule.add(event);
  impl_->restart = true;
}

void Simulator::advance_to(double t_end, const SampleSink& sink) { impl_->advance_to(t_end, sink); }
void Simulator::set_sample_interval(double seconds) {
  if (!(seconds > 0.0)) throw std::invalid_argument("the sample interval must be positive");
  impl_->settings.sample_interval = seconds;
  impl_->grid = SampleGrid(seconds);
  impl_->next_sample = static_cast<long long>(std::floor(impl_->t / seconds + 1e-9)) + 1;
}

void Simulator::set_step_observer(StepObserver observer) { impl_->observer = std::move(observer); }
double Simulator::time() const { return impl_->t; }
const State& Simulator::state() const { return impl_->x; }
StopModes Simulator::stop_modes() const { return impl_->modes; }
ModelParameters Simulator::parameters_now() const { return impl_->schedule.at(impl_->t); }
const Schedule& Simulator::schedule() const { return impl_->schedule; }
const SolverStats& Simulator::stats() const { return impl_->stats; }

SettledStart settle_by_integration(const ModelParameters& p, const RunSettings& settings) {
  SettledStart result;
  RunSettings s = settings;
  s.sample_interval = 1.0;  // no trace needed
  Simulator sim(p, s, full_stroke_guess(p));
  const State scale = state_scale(p);
  const double chunk = 0.02;  // s
  State previous = sim.state();
  double t = 0.0;
  while (t < settings.settle_time_limit) {
    t = std::min(t + chunk, settings.settle_time_limit);
    sim.advance_to(t, nullptr);
    const double change = ((sim.state() - previous).cwiseQuotient(scale)).cwiseAbs().maxCoeff();
    previous = sim.state();
    if (change < 10.0 * settings.atol && change < 1e-6) {
      result.settled = true;
      break;
    }
  }
  result.condition.x = sim.state();
  result.condition.modes = sim.stop_modes();
  result.simulated_time = sim.time();
  result.stats = sim.stats();
  return result;
}

RunResult run_scenario(const Scenario& scenario, const RunOptions& options) {
  RunResult result;
  result.start = steady_state(scenario.parameters, scenario.settings);
  Simulator sim(scenario.parameters, scenario.settings, result.start.condition);
  for (const Event& e : scenario.events) sim.add_event(e);

  const double duration = scenario.settings.duration;
  const std::size_t windows = scenario.events.size();
  const State scale = state_scale(scenario.parameters);
  const OscillationOptions oscillation = window_oscillation_options(scenario.parameters);
  for (std::size_t i = 0; i < windows; ++i)
    result.windows.emplace_back(scenario.events[i].at, i + 1 < windows ? scenario.events[i + 1].at : duration,
                                scale[state::discharge_pressure], scenario.parameters.max_swash_angle, oscillation);
  // Windows follow one another, so the ones a time falls in are contiguous;
  // a window is finished once a step has passed its end (samples may land a
  // rounding error past a step's end, before the step itself is observed).
  std::size_t open = 0;
  auto observe = [&](double t, double pd, double angle, bool sample) {
    result.peak_discharge_pressure = std::max(result.peak_discharge_pressure, pd);
    while (open < windows && !sample && result.windows[open].end() < t) result.windows[open++].finish();
    for (std::size_t k = open; k < windows && result.windows[k].start() <= t; ++k)
      result.windows[k].observe(t, pd, angle, sample);
  };
  sim.set_step_observer(
      [&](double t, const State& x) { observe(t, x[state::discharge_pressure], x[state::swash_angle], false); });
  result.peak_discharge_pressure = -infinity;
  const std::size_t expected = static_cast<std::size_t>(duration / scenario.settings.sample_interval) + 2;
  const std::size_t limit = options.max_trace_samples;
  result.trace.reserve(limit > 0 ? std::min(expected, 2 * limit) : expected);
  long long index = 0;
  sim.advance_to(duration, [&](const Sample& s) {
    observe(s.time, s.x[state::discharge_pressure], s.x[state::swash_angle], true);
    if (options.stream) options.stream(s);
    result.final_sample = s;
    if (index++ % result.trace_stride != 0) return;
    result.trace.push_back(s);
    if (limit > 0 && result.trace.size() >= 2 * limit) {
      // Keep every other sample: the kept ones are those on the doubled stride.
      std::size_t kept = 0;
      for (std::size_t i = 0; i < result.trace.size(); i += 2) result.trace[kept++] = result.trace[i];
      result.trace.resize(kept);
      result.trace_stride *= 2;
    }
  });
  for (std::size_t k = open; k < windows; ++k) result.windows[k].finish();
  for (std::size_t k = open; k < windows; ++k) result.windows[k].finish();
  result.stats = sim.stats();
  return result;
}

}  // namespace swashtune
