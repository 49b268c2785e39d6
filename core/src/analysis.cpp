#include "swashtune/analysis.hpp"

#include <Eigen/Dense>
#include <Eigen/Eigenvalues>
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdarg>
#include <cstdio>
#include <functional>
#include <limits>

#include "swashtune/units.hpp"

namespace swashtune {
namespace {

constexpr double two_pi = 2.0 * pi;
constexpr double response_time = 0.01;  // s, the time scale of the scaled residual

using Vector = Eigen::Matrix<double, Eigen::Dynamic, 1, 0, max_states, 1>;
using Matrix = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, 0, max_states, max_states>;

double stop_position(Stop s, double travel_low, double travel_high) {
  return s == Stop::lower ? travel_low : travel_high;
}

// The steady problem over the layout's states: the velocities are zero at
// rest, so the unknowns are every other state (pressures, positions, air)
// and the equations are their rates, with the velocity rows (the force
// balances) standing for the positions.
struct SteadyIndices {
  std::vector<int> unknowns, equations;
  int swash = -1, spool = -1;  // where the swash angle and spool position sit among the unknowns

  explicit SteadyIndices(const Layout& layout) {
    for (int i = 0; i < layout.size; ++i) {
      if (i == state::swash_velocity || i == state::spool_velocity || i == layout.shaft_angle) continue;
      if (i == state::swash_angle) swash = static_cast<int>(unknowns.size());
      if (i == state::spool_position) spool = static_cast<int>(unknowns.size());
      unknowns.push_back(i);
      equations.push_back(i == state::swash_angle      ? state::swash_velocity
                          : i == state::spool_position ? state::spool_velocity
                                                       : i);
    }
  }
  int size() const { return static_cast<int>(unknowns.size()); }
};

// Newton on the steady unknowns for one combination of stop contacts.
class SteadyProblem {
 public:
  SteadyProblem(const ModelParameters& p, const StopModes& modes)
      : p_(p), d_(p), modes_(modes), x_scale_(state_scale(p)), ix_(d_.layout) {
    // Residual scales: rates over the response time, accelerations over its
    // square; a held coordinate's row measures its distance to the stop.
    r_scale_.resize(ix_.size());
    for (int k = 0; k < ix_.size(); ++k) {
      const int u = ix_.unknowns[k];
      r_scale_[k] = (k == ix_.swash || k == ix_.spool) ? x_scale_[u] / (response_time * response_time)
                                                       : x_scale_[u] / response_time;
    }
  }

  int size() const { return ix_.size(); }

  State state_of(const Vector& y) const {
    State x = zero_state(d_.layout);
    for (int k = 0; k < ix_.size(); ++k) x[ix_.unknowns[k]] = y[k];
    return x;
  }

  Vector unknowns_of(const State& x) const {
    Vector y(ix_.size());
    for (int k = 0; k < ix_.size(); ++k) y[k] = x[ix_.unknowns[k]];
    return y;
  }

  Vector residual(const Vector& y) const {
    const State x = state_of(y);
    const State f = derivatives<double>(p_, d_, modes_, x);
    Vector r(ix_.size());
    for (int k = 0; k < ix_.size(); ++k) r[k] = f[ix_.equations[k]] / r_scale_[k];
    if (modes_.swash != Stop::free)
      r[ix_.swash] = (y[ix_.swash] - stop_position(modes_.swash, 0.0, p_.max_swash_angle)) / p_.max_swash_angle;
    if (modes_.spool != Stop::free)
      r[ix_.spool] = (y[ix_.spool] - stop_position(modes_.spool, -p_.spool_travel, p_.spool_travel)) / p_.spool_travel;
    return r;
  }

  Matrix jacobian_of(const Vector& y) const {
    const Jacobian j = jacobian(p_, d_, modes_, state_of(y));
    const int n = ix_.size();
    Matrix out(n, n);
    for (int r = 0; r < n; ++r)
      for (int c = 0; c < n; ++c) out(r, c) = j(ix_.equations[r], ix_.unknowns[c]) / r_scale_[r];
    if (modes_.swash != Stop::free) {
      out.row(ix_.swash).setZero();
      out(ix_.swash, ix_.swash) = 1.0 / p_.max_swash_angle;
    }
    if (modes_.spool != Stop::free) {
      out.row(ix_.spool).setZero();
      out(ix_.spool, ix_.spool) = 1.0 / p_.spool_travel;
    }
    return out;
  }

  // Damped Newton; returns true when the scaled residual falls below tol.
  bool solve(Vector& y, int& iterations, double& final_norm) const {
    constexpr double tolerance = 1e-10;
    Vector r = residual(y);
    double norm = r.lpNorm<Eigen::Infinity>();
    for (int it = 0; it < 60 && norm > tolerance; ++it) {
      ++iterations;
      const Vector step = jacobian_of(y).fullPivLu().solve(-r);
      if (!step.allFinite()) break;
      // Keep the angle where tan() is tame and the search inside sane bounds.
      double lambda = 1.0;
      bool improved = false;
      for (int k = 0; k < 30; ++k, lambda *= 0.5) {
        Vector trial = y + lambda * step;
        if (std::abs(trial[ix_.swash]) > 2.0 * p_.max_swash_angle) continue;
        const Vector rt = residual(trial);
        const double nt = rt.lpNorm<Eigen::Infinity>();
        if (std::isfinite(nt) && nt < (1.0 - 1e-4 * lambda) * norm) {
          y = trial;
          r = rt;
          norm = nt;
          improved = true;
          break;
        }
      }
      if (!improved) break;
    }
    final_norm = norm;
    return norm <= tolerance;
  }

  // A solution only counts if it can really be rested in.
  bool consistent(const Vector& y) const {
    const State x = state_of(y);
    const double angle_slack = 1e-9 * p_.max_swash_angle, spool_slack = 1e-9 * p_.spool_travel;
    const double a = y[ix_.swash], x_s = y[ix_.spool];
    if (modes_.swash == Stop::free && (a < -angle_slack || a > p_.max_swash_angle + angle_slack)) return false;
    if (modes_.spool == Stop::free && std::abs(x_s) > p_.spool_travel + spool_slack) return false;
    if (modes_.swash != Stop::free) {
      const double moment = swash_static_moment<double>(p_, d_, x);
      const double away = modes_.swash == Stop::lower ? moment : -moment;
      if (away > 1e-8 * p_.control_piston_arm * d_.control_area * x_scale_[0] + d_.swash_friction) return false;
    }
    if (modes_.spool != Stop::free) {
      const Flows f = flows<double>(p_, d_, x);
      const double force = spool_static_force<double>(p_, d_, f, x);
      const double away = modes_.spool == Stop::lower ? force : -force;
      if (away > 1e-8 * d_.sensing_area * x_scale_[0] + d_.breakaway_friction) return false;
    }
    return x.allFinite();
  }

  // The generic starting point for this contact combination.
  Vector guess(const InitialCondition* seed) const {
    Vector y;
    if (seed && seed->x.size() >= d_.layout.size) {
      y = unknowns_of(seed->x.head(d_.layout.size));
    } else {
      const InitialCondition full = full_stroke_guess(p_);
      // Control pressure that balances the bias spring at a small angle.
      const double small_angle = 0.02 * p_.max_swash_angle;
      const double bias_moment = p_.bias_arm * (d_.bias_force_at_full_stroke +
                                                d_.bias_rate * p_.bias_arm * (p_.max_swash_angle - small_angle));
      const bool full_stroke = modes_.swash == Stop::upper;
      State x = full.x;
      x[state::discharge_pressure] = full_stroke ? full.x[state::discharge_pressure] : d_.setting;
      x[state::control_pressure] =
          full_stroke ? p_.tank_pressure : bias_moment / (p_.control_piston_arm * d_.control_area);
      if (d_.layout.port_pressure >= 0) x[d_.layout.port_pressure] = x[state::control_pressure];
      if (!full_stroke) {
        // Regulating: the line carries what the valve takes at the setting.
        const double q = orifice_flow(p_.valve_discharge_coefficient, p_.opening * p_.valve_area,
                                      d_.setting - p_.tank_pressure, p_.density, p_.transition_pressure);
        d_.line.set_steady(x, d_.setting, q);
      }
      x[state::swash_angle] = small_angle;
      x[state::spool_position] = 0.0;
      y = unknowns_of(x);
    }
    if (modes_.swash != Stop::free) y[ix_.swash] = stop_position(modes_.swash, 0.0, p_.max_swash_angle);
    if (modes_.spool != Stop::free) y[ix_.spool] = stop_position(modes_.spool, -p_.spool_travel, p_.spool_travel);
    return y;
  }

 private:
  const ModelParameters& p_;
  Derived d_;
  StopModes modes_;
  State x_scale_;
  SteadyIndices ix_;
  Vector r_scale_;
};

// Stop combinations, most plausible first.
std::vector<StopModes> contact_order(const ModelParameters& p, const InitialCondition* seed) {
  std::vector<StopModes> order;
  if (seed) order.push_back(seed->modes);
  const double full_stroke_pressure = full_stroke_guess(p).x[state::discharge_pressure];
  const bool below_setting = full_stroke_pressure < 0.95 * Derived(p).setting;
  const StopModes regulating{Stop::free, Stop::free}, at_full_stroke{Stop::upper, Stop::lower};
  order.push_back(below_setting ? at_full_stroke : regulating);
  order.push_back(below_setting ? regulating : at_full_stroke);
  for (Stop swash : {Stop::free, Stop::upper, Stop::lower})
    for (Stop spool : {Stop::free, Stop::lower, Stop::upper}) order.push_back(StopModes{swash, spool});
  // Keep the first occurrence of each.
  std::vector<StopModes> unique;
  for (const StopModes& m : order)
    if (std::find(unique.begin(), unique.end(), m) == unique.end()) unique.push_back(m);
  return unique;
}

// The steady operating point of a pump with flow ripple is that of its mean
// flow: solve without the ripple and give the shaft angle 0.
ModelParameters mean_flow_model(const ModelParameters& p) {
  ModelParameters q = p;
  q.flow_ripple = false;
  return q;
}

State with_shaft_angle(const State& mean, const ModelParameters& p) {
  const Layout layout = layout_of(p);
  if (layout.shaft_angle < 0) return mean;
  State x = zero_state(layout);
  x.head(mean.size()) = mean;  // the shaft angle is the layout's last state
  x[layout.shaft_angle] = 0.0;
  return x;
}

}  // namespace

const char* to_string(SteadyMethod m) { return m == SteadyMethod::newton ? "newton" : "integration"; }

const char* stop_name(Stop s, bool swash) {
  if (s == Stop::free) return "free";
  if (swash) return s == Stop::lower ? "zero stroke" : "full stroke";
  return s == Stop::lower ? "closed to the line" : "fully open to the line";
}

OperatingPoint steady_state(const ModelParameters& p, const RunSettings& settings,
                            const std::optional<InitialCondition>& guess) {
  if (p.flow_ripple) {
    OperatingPoint op = steady_state(mean_flow_model(p), settings, guess);
    op.condition.x = with_shaft_angle(op.condition.x, p);
    return op;
  }
  OperatingPoint op;
  const InitialCondition* seed = guess ? &*guess : nullptr;
  for (const StopModes& modes : contact_order(p, seed)) {
    const SteadyProblem problem(p, modes);
    // Try the seed and the generic guess for this contact combination.
    for (const InitialCondition* start : {seed, static_cast<const InitialCondition*>(nullptr)}) {
      Vector y = problem.guess(start);
      double norm = 0.0;
      if (problem.solve(y, op.iterations, norm) && problem.consistent(y)) {
        op.condition.x = problem.state_of(y);
        op.condition.modes = modes;
        op.method = SteadyMethod::newton;
        op.converged = true;
        op.residual = norm;
        return op;
      }
      if (!seed) break;
    }
  }
  const SettledStart settled = settle_by_integration(p, settings);
  op.condition = settled.condition;
  op.method = SteadyMethod::integration;
  op.converged = settled.settled;
  op.simulated_time = settled.simulated_time;
  return op;
}

// ---- linearisation ----------------------------------------------------------

namespace {

// Coordinates a stop holds do not respond to small disturbances.
bool held_by_stop(int index, const StopModes& modes) {
  if (modes.swash != Stop::free && (index == state::swash_angle || index == state::swash_velocity)) return true;
  if (modes.spool != Stop::free && (index == state::spool_position || index == state::spool_velocity)) return true;
  return false;
}

}  // namespace

LinearModel linearise(const ModelParameters& p, const InitialCondition& at) {
  // A pump with flow ripple is linearised about its mean flow.
  const ModelParameters q = mean_flow_model(p);
  const Derived d(q);
  const State x = at.x.head(d.layout.size);
  const int size = static_cast<int>(x.size());
  LinearModel m;
  for (int i = 0; i < size; ++i)
    if (!held_by_stop(i, at.modes)) m.states.push_back(i);
  const int n = static_cast<int>(m.states.size());

  // The model's own rates, differentiated with the tangent law's angle u held
  // (A) and with respect to u alone (B), at u = a.
  const double u = x[state::swash_angle];
  const Jacobian j = jacobian(q, d, at.modes, x, &u);
  const State du = flow_angle_sensitivity(q, d, at.modes, x, u);

  const State scale = state_scale(q);
  m.a.resize(n, n);
  m.b = Eigen::VectorXd::Zero(n);
  m.c = Eigen::RowVectorXd::Zero(n);
  m.scale.resize(n);
  for (int r = 0; r < n; ++r) {
    m.scale[r] = scale[m.states[r]];
    for (int c = 0; c < n; ++c) m.a(r, c) = j(m.states[r], m.states[c]);
    m.b[r] = du[m.states[r]];
  }
  // The swashplate on a stop cannot follow the compensator: nothing to open.
  m.loop_active = at.modes.swash == Stop::free;
  if (m.loop_active) {
    const auto angle = std::find(m.states.begin(), m.states.end(), static_cast<int>(state::swash_angle));
    m.c[static_cast<int>(angle - m.states.begin())] = 1.0;  // y = a
  } else {
    m.b.setZero();  // the flow is fixed by the stop; A is then the whole linear model
  }
  return m;
}

std::complex<double> LinearModel::open_loop_response(double omega) const {
  using Complex = std::complex<double>;
  const int n = static_cast<int>(a.rows());
  // In scaled states: S^-1 A S, S^-1 B, C S give the same G(s).
  Eigen::MatrixXcd m(n, n);
  Eigen::VectorXcd rhs(n);
  for (int r = 0; r < n; ++r) {
    for (int c = 0; c < n; ++c) m(r, c) = Complex(-a(r, c) * scale[c] / scale[r], 0.0);
    m(r, r) += Complex(0.0, omega);
    rhs[r] = Complex(b[r] / scale[r], 0.0);
  }
  const Eigen::VectorXcd x = m.partialPivLu().solve(rhs);
  Complex g(0.0, 0.0);
  for (int r = 0; r < n; ++r) g += c[r] * scale[r] * x[r];
  return g;
}

std::complex<double> LinearModel::loop_transfer(double hz) const { return -open_loop_response(two_pi * hz); }

Mode mode_of(std::complex<double> eigenvalue) {
  Mode m;
  m.eigenvalue = eigenvalue;
  const double magnitude = std::abs(eigenvalue);
  m.natural_frequency_hz = magnitude / two_pi;
  m.damped_frequency_hz = std::abs(eigenvalue.imag()) / two_pi;
  m.damping_ratio = magnitude > 0.0 ? -eigenvalue.real() / magnitude : 1.0;
  return m;
}

std::vector<Mode> modes_of(const Eigen::MatrixXd& a, const Eigen::VectorXd& scale) {
  const Eigen::MatrixXd balanced = scale.cwiseInverse().asDiagonal() * a * scale.asDiagonal();
  const Eigen::EigenSolver<Eigen::MatrixXd> solver(balanced, false);
  std::vector<Mode> modes;
  for (int i = 0; i < balanced.rows(); ++i) {
    std::complex<double> lambda = solver.eigenvalues()[i];
    // Real eigenvalues come out with an imaginary part of exactly zero.
    if (std::abs(lambda.imag()) <= 1e-12 * std::abs(lambda)) lambda = {lambda.real(), 0.0};
    modes.push_back(mode_of(lambda));
  }
  std::sort(modes.begin(), modes.end(), [](const Mode& x, const Mode& y) {
    if (x.eigenvalue.real() != y.eigenvalue.real()) return x.eigenvalue.real() > y.eigenvalue.real();
    return x.eigenvalue.imag() > y.eigenvalue.imag();
  });
  return modes;
}

int unstable_count(const std::vector<Mode>& modes) {
  return static_cast<int>(
      std::count_if(modes.begin(), modes.end(), [](const Mode& m) { return m.eigenvalue.real() >= 0.0; }));
}

// ---- margins ----------------------------------------------------------------

namespace {

double degrees(double radians) { return radians * 180.0 / pi; }

// Phase of L at hz, unwrapped to lie within 180 deg of a reference.
double phase_near(const LinearModel& m, double hz, double reference_deg) {
  double ph = degrees(std::arg(m.loop_transfer(hz)));
  while (ph - reference_deg > 180.0) ph -= 360.0;
  while (ph - reference_deg < -180.0) ph += 360.0;
  return ph;
}

// Bisection in log frequency on a sign change of g between lo and hi.
template <class F>
double refine(double lo, double hi, F g) {
  const bool low_negative = g(lo) < 0.0;
  for (int i = 0; i < 100 && hi / lo > 1.0 + 1e-13; ++i) {
    const double mid = std::sqrt(lo * hi);
    ((g(mid) < 0.0) == low_negative ? lo : hi) = mid;
  }
  return std::sqrt(lo * hi);
}

struct LoopSample {
  double hz;
  std::complex<double> l;
};

// Between two samples L may turn quickly (a lightly damped resonance):
// bisect until it turns by at most 20 deg and changes size by at most 40 %,
// so that no crossing or close pass of -1 falls between neighbours.
void refine_between(const LinearModel& m, const LoopSample& a, const LoopSample& b, std::vector<LoopSample>& out,
                    int depth) {
  constexpr double max_turn = 20.0 * pi / 180.0;
  const double max_ratio = std::log(1.4);
  if (depth >= 24 || a.l == 0.0 || b.l == 0.0 || !std::isfinite(std::abs(a.l)) || !std::isfinite(std::abs(b.l))) return;
  const double turn = std::abs(std::arg(b.l / a.l));
  const double ratio = std::abs(std::log(std::abs(b.l) / std::abs(a.l)));
  if (turn <= max_turn && ratio <= max_ratio) return;
  const double hz = std::sqrt(a.hz * b.hz);
  const LoopSample mid{hz, m.loop_transfer(hz)};
  refine_between(m, a, mid, out, depth + 1);
  out.push_back(mid);
  refine_between(m, mid, b, out, depth + 1);
}

std::vector<LoopSample> loop_samples(const LinearModel& m, double from_hz, double to_hz) {
  const int per_decade = 200;
  const int count = std::max(1, static_cast<int>(std::ceil(per_decade * std::log10(to_hz / from_hz))));
  std::vector<LoopSample> out;
  LoopSample previous{from_hz, m.loop_transfer(from_hz)};
  out.push_back(previous);
  for (int i = 1; i <= count; ++i) {
    const double hz = from_hz * std::pow(to_hz / from_hz, static_cast<double>(i) / count);
    const LoopSample next{hz, m.loop_transfer(hz)};
    refine_between(m, previous, next, out, 0);
    out.push_back(next);
    previous = next;
  }
  return out;
}

// 180 deg + phase of L, wrapped into (-180, 180].
double phase_margin_of(std::complex<double> l) {
  double pm = 180.0 + degrees(std::arg(l));
  if (pm > 180.0) pm -= 360.0;
  return pm;
}

}  // namespace

std::vector<BodePoint> loop_bode(const LinearModel& m, double from_hz, double to_hz, int points) {
  std::vector<BodePoint> out;
  points = std::max(points, 2);
  double previous_phase = 0.0;
  for (int i = 0; i < points; ++i) {
    const double hz = from_hz * std::pow(to_hz / from_hz, static_cast<double>(i) / (points - 1));
    const std::complex<double> l = m.loop_transfer(hz);
    const double phase = i == 0 ? degrees(std::arg(l)) : phase_near(m, hz, previous_phase);
    previous_phase = phase;
    out.push_back(BodePoint{hz, 20.0 * std::log10(std::abs(l)), phase});
  }
  return out;
}

LoopMargins loop_margins(const LinearModel& m) {
  LoopMargins margins;
  if (!m.loop_active) return margins;
  const std::vector<LoopSample> samples = loop_samples(m, margin_search_low_hz, margin_search_high_hz);
  const auto log_magnitude = [&](double hz) { return std::log(std::abs(m.loop_transfer(hz))); };
  const auto imaginary = [&](double hz) { return m.loop_transfer(hz).imag(); };
  std::size_t closest = 0;
  for (std::size_t i = 0; i < samples.size(); ++i) {
    if (std::abs(1.0 + samples[i].l) < std::abs(1.0 + samples[closest].l)) closest = i;
    if (i + 1 == samples.size()) break;
    const LoopSample& a = samples[i];
    const LoopSample& b = samples[i + 1];
    if ((std::abs(a.l) < 1.0) != (std::abs(b.l) < 1.0)) {
      const double hz = refine(a.hz, b.hz, log_magnitude);
      margins.gain_crossovers.push_back(GainCrossover{hz, phase_margin_of(m.loop_transfer(hz))});
    }
    // A sign change of Im L with at most 20 deg of turn between neighbours
    // is one crossing of the real axis; the negative half is a phase crossover.
    if ((a.l.imag() < 0.0) != (b.l.imag() < 0.0) && (a.l.real() < 0.0 || b.l.real() < 0.0)) {
      const double hz = refine(a.hz, b.hz, imaginary);
      const std::complex<double> l = m.loop_transfer(hz);
      if (l.real() < 0.0) margins.phase_crossovers.push_back(PhaseCrossover{hz, -20.0 * std::log10(std::abs(l))});
    }
  }
  for (const GainCrossover& g : margins.gain_crossovers)
    if (!margins.phase_margin_deg || g.phase_margin_deg < *margins.phase_margin_deg) {
      margins.phase_margin_deg = g.phase_margin_deg;
      margins.crossover_frequency_hz = g.frequency_hz;
    }
  for (const PhaseCrossover& c : margins.phase_crossovers)
    if (!margins.gain_margin_db || c.gain_margin_db < *margins.gain_margin_db) {
      margins.gain_margin_db = c.gain_margin_db;
      margins.phase_crossover_frequency_hz = c.frequency_hz;
    }

  // Modulus margin: golden-section search in log frequency between the
  // neighbours of the closest sample (the refined grid keeps |1 + L| single-
  // troughed between them).
  if (!samples.empty() && std::isfinite(std::abs(samples[closest].l))) {
    double lo = std::log(samples[closest > 0 ? closest - 1 : 0].hz);
    double hi = std::log(samples[std::min(closest + 1, samples.size() - 1)].hz);
    const auto distance = [&](double log_hz) { return std::abs(1.0 + m.loop_transfer(std::exp(log_hz))); };
    const double ratio = 0.5 * (std::sqrt(5.0) - 1.0);
    double x1 = hi - ratio * (hi - lo), x2 = lo + ratio * (hi - lo);
    double f1 = distance(x1), f2 = distance(x2);
    for (int i = 0; i < 200 && hi - lo > 1e-14; ++i) {
      if (f1 < f2) {
        hi = x2;
        x2 = x1;
        f2 = f1;
        x1 = hi - ratio * (hi - lo);
        f1 = distance(x1);
      } else {
        lo = x1;
        x1 = x2;
        f1 = f2;
        x2 = lo + ratio * (hi - lo);
        f2 = distance(x2);
      }
    }
    double best_hz = std::exp(0.5 * (lo + hi));
    double best = distance(0.5 * (lo + hi));
    if (std::abs(1.0 + samples[closest].l) < best) {  // an end of the band
      best_hz = samples[closest].hz;
      best = std::abs(1.0 + samples[closest].l);
    }
    margins.modulus_margin = best;
    margins.modulus_margin_frequency_hz = best_hz;
  }
  return margins;
}

std::optional<int> nyquist_encirclements(const LinearModel& m) {
  if (!m.loop_active) return 0;  // L = 0: nothing encircles anything
  // Frequencies well below and above every pole of the open and closed loop.
  double low = std::numeric_limits<double>::infinity(), high = 0.0;
  for (const Eigen::MatrixXd& matrix : {m.a, m.closed_loop()})
    for (const Mode& mode : modes_of(matrix, m.scale)) {
      const double size = std::abs(mode.eigenvalue);
      if (size == 0.0) return std::nullopt;  // a pole at s = 0: the contour would need an indentation
      low = std::min(low, size);
      high = std::max(high, size);
    }
  // 1 + L(jw) at w = 0, then on a grid from far below to far above every
  // pole, refined wherever it turns by more than 20 deg.
  const auto value = [&](double omega) { return 1.0 + (-m.open_loop_response(omega)); };
  std::vector<std::complex<double>> z{value(0.0)};
  const double w_low = 1e-4 * low;
  double w_high = 1e4 * high;
  for (int extend = 0; extend < 6 && std::abs(value(w_high) - 1.0) > 1e-3; ++extend) w_high *= 10.0;
  if (std::abs(value(w_high) - 1.0) > 1e-2) return std::nullopt;
  const int count = static_cast<int>(std::ceil(100.0 * std::log10(w_high / w_low)));
  std::function<void(double, std::complex<double>, double, std::complex<double>, int)> between =
      [&](double wa, std::complex<double> za, double wb, std::complex<double> zb, int depth) {
        if (depth >= 30 || std::abs(std::arg(zb / za)) <= 20.0 * pi / 180.0) return;
        const double wm = std::sqrt(wa * wb);
        const std::complex<double> zm = value(wm);
        between(wa, za, wm, zm, depth + 1);
        z.push_back(zm);
        between(wm, zm, wb, zb, depth + 1);
      };
  double w_prev = w_low;
  std::complex<double> z_prev = value(w_low);
  z.push_back(z_prev);
  for (int i = 1; i <= count; ++i) {
    const double w = w_low * std::pow(w_high / w_low, static_cast<double>(i) / count);
    const std::complex<double> zi = value(w);
    between(w_prev, z_prev, w, zi, 0);
    z.push_back(zi);
    w_prev = w;
    z_prev = zi;
  }
  double nearest = std::abs(z.front());
  double turn = 0.0;  // over w from 0 up; the negative half mirrors it (L(-jw) = conj L(jw))
  for (std::size_t i = 1; i < z.size(); ++i) {
    nearest = std::min(nearest, std::abs(z[i]));
    turn += std::arg(z[i] / z[i - 1]);
  }
  if (!(nearest > 1e-9) || !std::isfinite(turn)) return std::nullopt;
  // Whole contour: up the imaginary axis, then the large arc (L ~ 0 there).
  const double total = 2.0 * turn + std::arg(std::conj(z.back()) / z.back());
  const double windings = total / (2.0 * pi);  // counter-clockwise
  const double whole = std::round(windings);
  if (std::abs(windings - whole) > 0.05) return std::nullopt;
  return -static_cast<int>(whole);  // clockwise
}

std::vector<std::string> dry_friction_sources(const ModelParameters& p) {
  const Derived d(p);
  std::vector<std::string> sources;
  char text[96];
  if (d.coulomb_friction > 0.0 || d.breakaway_friction > 0.0) {
    std::snprintf(text, sizeof text, "faults.spool_friction = %.3g N", p.fault_spool_friction);
    sources.push_back(text);
  }
  if (d.swash_friction > 0.0) {
    std::snprintf(text, sizeof text, "pump.swash_friction = %.3g N*m", p.swash_friction);
    sources.push_back(text);
  }
  return sources;
}

std::string listed_dry_friction(const ModelParameters& p) {
  std::string which;
  for (const std::string& source : dry_friction_sources(p)) which += (which.empty() ? "" : ", ") + source;
  return which;
}

bool has_dry_friction(const ModelParameters& p) { return !dry_friction_sources(p).empty(); }

bool dry_friction_dominates(const ModelParameters& p) {
  const Derived d(p);
  const double sensing_force = p.setting * d.sensing_area;
  const double bias_moment = p.bias_arm * p.fault_bias_strength * p.bias_force_at_full_stroke;
  const bool spool = std::max(d.coulomb_friction, d.breakaway_friction) > 0.02 * sensing_force;
  const bool cradle = d.swash_friction > 0.5 * bias_moment;
  return spool || cradle;
}

ModelParameters linearisation_parameters(const ModelParameters& p) {
  ModelParameters q = p;
  q.swash_friction = 0.0;
  q.fault_spool_friction = 0.0;
  return q;
}

namespace {

std::string format(const char* pattern, ...) __attribute__((format(printf, 1, 2)));
std::string format(const char* pattern, ...) {
  char buffer[512];
  va_list args;
  va_start(args, pattern);
  std::vsnprintf(buffer, sizeof buffer, pattern, args);
  va_end(args);
  return buffer;
}

// Why the margins are not stability margins, in plain words; empty when they are.
std::string margins_note(const ModelParameters& p, const StabilityReport& r) {
  std::vector<std::string> reasons;
  const StopModes& modes = r.operating_point.condition.modes;
  if (!r.operating_point.converged)
    reasons.push_back(
        "No steady operating point was found at this opening (the pump may hunt); the model is linearised where "
        "a run towards rest stopped, so neither the modes nor the margins describe a firm operating point.");
  if (!r.model.loop_active)
    reasons.push_back(format(
        "The swashplate rests on its %s stop, so the compensator is not regulating the displacement: the loop is "
        "inactive and no margin applies.",
        stop_name(modes.swash, true)));
  else if (r.open_loop_unstable_poles > 0)
    reasons.push_back(format(
        "With the pump's flow held fixed, the compensator spool and the line are unstable by themselves (%d "
        "unstable pole%s of the opened loop): an inner loop hunts on its own, so these margins are not stability "
        "margins. The eigenvalues decide.",
        r.open_loop_unstable_poles, r.open_loop_unstable_poles == 1 ? "" : "s"));
  if (r.dry_friction_dominates) {
    const std::string which = listed_dry_friction(p);
    reasons.push_back(format(
        "The loop has dry friction (%s): a linear model cannot describe stick-slip. Linearised at rest the friction "
        "acts as a stiff damper, so the modes and margins describe only tiny motions; judge the loop by the "
        "oscillation analysis of a run (each event's oscillation in swashtune-cli run, or the Troubleshooting tab).",
        which.c_str()));
  }
  std::string note;
  for (const std::string& reason : reasons) note += (note.empty() ? "" : " ") + reason;
  return note;
}

}  // namespace

std::vector<std::string> explain_stability(const StabilityReport& r) {
  std::vector<std::string> lines;
  // The verdict comes from the eigenvalues, never from the margins.
  if (r.stable) {
    std::string line = "Stable: every mode of the linearised loop dies away.";
    if (r.dominant)
      line += format(" The least damped oscillates at %.4g Hz with damping ratio %.3f.",
                     r.dominant->damped_frequency_hz, r.dominant->damping_ratio);
    lines.push_back(line);
  } else if (!r.modes.empty()) {
    const Mode& worst = r.modes.front();  // largest real part first
    lines.push_back(worst.oscillatory()
                        ? format("UNSTABLE: an oscillation at %.4g Hz grows (damping ratio %.3f): the pump hunts.",
                                 worst.damped_frequency_hz, worst.damping_ratio)
                        : format("UNSTABLE: a mode grows without oscillating (%.3g 1/s): the operating point "
                                 "cannot be held.",
                                 worst.eigenvalue.real()));
  }
  if (!r.note.empty()) lines.push_back(r.note);
  if (!r.model.loop_active) return lines;
  const LoopMargins& m = r.margins;
  if (!r.margins_apply && (m.gain_margin_db || m.phase_margin_deg))
    lines.push_back("The margins are listed for reference only: here they are not stability margins.");
  if (!r.margins_apply) return lines;

  if (m.gain_margin_db) {
    const double gm = *m.gain_margin_db, factor = std::pow(10.0, std::abs(gm) / 20.0);
    const double hz = *m.phase_crossover_frequency_hz;
    if (gm >= 0.0)
      lines.push_back(
          format("The loop can take %.2g times more gain (%.1f dB) before it hunts, at %.4g Hz.", factor, gm, hz));
    else if (!r.stable)
      lines.push_back(
          format("The loop gain is %.2g times (%.1f dB) too high at %.4g Hz: it hunts; the gain would have "
                 "to fall at least that much before it could be stable.",
                 factor, -gm, hz));
    else
      lines.push_back(
          format("The loop is stable only conditionally: a loop gain %.2g times (%.1f dB) lower, at "
                 "%.4g Hz, would make it hunt.",
                 factor, -gm, hz));
  } else {
    lines.push_back(
        "The phase of the loop never reaches -180 deg between 0.1 Hz and 100 kHz: no gain margin to "
        "quote (more gain alone does not make it hunt).");
  }
  if (m.phase_margin_deg) {
    const double pm = *m.phase_margin_deg, hz = *m.crossover_frequency_hz;
    if (pm >= 0.0)
      lines.push_back(
          format("It can take %.1f deg more phase lag at %.4g Hz before it hunts: an extra delay of "
                 "%.3g ms in the loop would be enough.",
                 pm, hz, pm / (360.0 * hz) * 1e3));
    else if (!r.stable)
      lines.push_back(format("It is %.1f deg short of phase at %.4g Hz, where the loop gain is 1.", -pm, hz));
    else
      lines.push_back(
          format("The loop gain is 1 at %.4g Hz with the phase %.1f deg past -180 deg: the response passes "
                 "round the critical point there, not through it, so the loop is stable only "
                 "conditionally (%.1f deg more phase lead, or %.1f deg more lag, at that frequency would "
                 "make it hunt).",
                 hz, -pm, -pm, 360.0 + pm));
  } else {
    const bool below = std::abs(r.model.loop_transfer(margin_search_low_hz)) < 1.0;
    lines.push_back(below ? "The loop gain stays below 1 between 0.1 Hz and 100 kHz: no phase margin to quote."
                          : "The loop gain stays above 1 between 0.1 Hz and 100 kHz: no phase margin to quote.");
  }
  if (m.modulus_margin)
    lines.push_back(
        format("At its closest, near %.4g Hz, the loop passes within %.2f of the critical point -1: "
               "disturbances near that frequency are amplified up to %.2g times (0.5 or more is usual).",
               *m.modulus_margin_frequency_hz, *m.modulus_margin, 1.0 / *m.modulus_margin));
  return lines;
}

StabilityReport analyse_stability(const ModelParameters& p, const RunSettings& settings,
                                  const std::optional<InitialCondition>& guess) {
  StabilityReport report;
  report.load_opening = p.opening;
  report.dry_friction = has_dry_friction(p);
  report.dry_friction_dominates = dry_friction_dominates(p);
  // Friction that only widens the characteristic is left out of the linear
  // model (linearised at rest it would act as a stiff damper); friction that
  // dominates is kept, and the note says the margins do not apply.
  const ModelParameters linear = report.dry_friction_dominates ? p : linearisation_parameters(p);
  report.operating_point = steady_state(linear, settings, guess);
  report.model = linearise(linear, report.operating_point.condition);
  report.modes = modes_of(report.model.closed_loop(), report.model.scale);
  for (const Mode& mode : report.modes)
    if (mode.oscillatory() && (!report.dominant || mode.damping_ratio < report.dominant->damping_ratio))
      report.dominant = mode;
  report.closed_loop_unstable_poles = unstable_count(report.modes);
  report.open_loop_unstable_poles = unstable_count(modes_of(report.model.a, report.model.scale));
  report.stable = report.closed_loop_unstable_poles == 0;
  report.margins = loop_margins(report.model);
  report.margins_apply = report.model.loop_active && report.open_loop_unstable_poles == 0 &&
                         !report.dry_friction_dominates && report.operating_point.converged;
  report.note = margins_note(p, report);
  report.explanation = explain_stability(report);
  if (const LineElement line(p, p.density, 1e-6 * p.viscosity_grade); line.distributed && report.dominant) {
    const double resolved = line.resolved_frequency(line.wave_speed(p.bulk_modulus, p.density));
    if (report.dominant->damped_frequency_hz > resolved)
      report.explanation.push_back(format(
          "The least damped mode, at %.0f Hz, lies above the %.0f Hz up to which the line's %d reaches place its modes "
          "within 5 %%: its frequency and damping are not resolved. Raise line.reaches (at most 15) and see whether "
          "the verdict holds before acting on it.",
          report.dominant->damped_frequency_hz, resolved, line.reaches));
  }
  if (report.dry_friction && !report.dry_friction_dominates) {
    const std::string which = listed_dry_friction(p);
    report.explanation.push_back(format(
        "Dry friction (%s) is small beside the bias spring and is left out of this linear model: it widens the "
        "pressure-flow characteristic into a hysteresis band and stops very small motions; the modes and margins "
        "are those of motions large enough to slide, about the middle of the band.",
        which.c_str()));
  }
  return report;
}

// ---- steady characteristic ----------------------------------------------------

Characteristic steady_characteristic(const ModelParameters& p, const RunSettings& settings, int points) {
  Characteristic ch;
  points = std::max(points, 2);
  // The steady state of `base` at an opening, from `guess` (then updated to it).
  auto solve_at = [&](const ModelParameters& base, double opening, std::optional<InitialCondition>& guess) {
    ModelParameters q = base;
    q.opening = opening;
    const OperatingPoint op = steady_state(q, settings, guess);
    guess = op.condition;
    const Sample s = make_sample(0.0, op.condition.x, q);
    return CharacteristicPoint{opening,     op.condition.x[state::discharge_pressure], s.pump_flow,
                               s.load_flow, op.condition.x[state::swash_angle],        op.method};
  };
  // Continuation over the openings, each point started from the last.
  auto curve_of = [&](const ModelParameters& base) {
    std::vector<CharacteristicPoint> curve;
    std::optional<InitialCondition> guess;
    for (int i = 0; i < points; ++i) curve.push_back(solve_at(base, static_cast<double>(i) / (points - 1), guess));
    return curve;
  };
  ch.points = curve_of(p);
  ch.deadhead_pressure = ch.points.front().discharge_pressure;

  if (has_dry_friction(p)) {
    ModelParameters branch = p;
    branch.friction_branch = +1;
    ch.rising = curve_of(branch);
    branch.friction_branch = -1;
    ch.falling = curve_of(branch);
    ch.deadhead_hysteresis = ch.rising.front().discharge_pressure - ch.falling.front().discharge_pressure;
  }

  // Cut-in: the pump flow 5 % below the full-stroke flow at that pressure.
  const double full_flow = p.displacement * p.speed / 60.0;
  const double leakage_coefficient = Derived(p).leakage_coefficient;
  auto shortfall = [&](const CharacteristicPoint& c) {
    return c.pump_flow - 0.95 * (full_flow - leakage_coefficient * c.discharge_pressure);
  };
  for (std::size_t i = 0; i + 1 < ch.points.size(); ++i) {
    if ((shortfall(ch.points[i]) < 0.0) != (shortfall(ch.points[i + 1]) < 0.0)) {
      double lo = ch.points[i].load_opening, hi = ch.points[i + 1].load_opening;
      const bool low_is_short = shortfall(ch.points[i]) < 0.0;
      CharacteristicPoint at = ch.points[i];
      std::optional<InitialCondition> guess;
      for (int it = 0; it < 40; ++it) {
        at = solve_at(p, 0.5 * (lo + hi), guess);
        ((shortfall(at) < 0.0) == low_is_short ? lo : hi) = at.load_opening;
      }
      ch.cut_in_pressure = at.discharge_pressure;
      break;
    }
  }
  return ch;
}

// ---- stability map --------------------------------------------------------------

Axis parse_axis(const std::string& text) {
  const std::string where = "--map " + text + ": ";
  const auto equals = text.find('=');
  if (equals == std::string::npos) throw ScenarioError(where + "expected KEY=FROM:TO:N");
  const std::string key = text.substr(0, equals);
  Axis axis;
  axis.spec = find_parameter(key);
  if (!axis.spec || axis.spec->is_flag()) throw ScenarioError(where + "\"" + key + "\" is not a numeric parameter");
  const std::string rest = text.substr(equals + 1);
  const auto c1 = rest.find(':');
  const auto c2 = c1 == std::string::npos ? std::string::npos : rest.find(':', c1 + 1);
  if (c2 == std::string::npos) throw ScenarioError(where + "expected FROM:TO:N after '='");
  double from = 0.0, to = 0.0;
  try {
    from = convert_to(rest.substr(0, c1), axis.spec->unit);
    to = convert_to(rest.substr(c1 + 1, c2 - c1 - 1), axis.spec->unit);
  } catch (const UnitError& e) {
    throw ScenarioError(where + e.what());
  }
  const std::string count_text = rest.substr(c2 + 1);
  char* end = nullptr;
  const long count = std::strtol(count_text.c_str(), &end, 10);
  if (count_text.empty() || *end != '\0' || count < 1 || count > 10000)
    throw ScenarioError(where + "N must be a whole number from 1 to 10000, got \"" + count_text + "\"");
  for (long i = 0; i < count; ++i) {
    const double v = count == 1 ? from : decimal_clean(from + (to - from) * static_cast<double>(i) / (count - 1));
    if (!axis.spec->range.contains(v))
      throw ScenarioError(where + "value " + std::to_string(v) + " is outside " +
                          axis.spec->range.describe(axis.spec->unit));
    axis.values.push_back(v);
  }
  return axis;
}

StabilityMap stability_map(const ModelParameters& p, const RunSettings& settings, const Axis& x, const Axis& y) {
  StabilityMap map{x, y, {}};
  for (double yv : y.values) {
    std::optional<InitialCondition> neighbour;
    for (double xv : x.values) {
      ModelParameters q = p;
      y.spec->set(q, yv);
      x.spec->set(q, xv);
      MapPoint point;
      point.x = xv;
      point.y = yv;
      if (check_consistency(q).empty()) {
        const StabilityReport r = analyse_stability(q, settings, neighbour);
        neighbour = r.operating_point.condition;
        point.solved = r.operating_point.converged;
        point.gain_margin_db = r.margins.gain_margin_db;
        point.phase_margin_deg = r.margins.phase_margin_deg;
        point.crossover_frequency_hz = r.margins.crossover_frequency_hz;
        point.modulus_margin = r.margins.modulus_margin;
        point.margins_apply = r.margins_apply;
        if (r.dominant) {
          point.dominant_frequency_hz = r.dominant->damped_frequency_hz;
          point.dominant_damping_ratio = r.dominant->damping_ratio;
        }
        point.stable = r.stable;
      }
      map.points.push_back(point);
    }
  }
  return map;
}

}  // namespace swashtune
