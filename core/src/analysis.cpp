#include "swashtune/analysis.hpp"

#include <Eigen/Dense>
#include <Eigen/Eigenvalues>
#include <algorithm>
#include <array>
#include <cmath>
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

LinearModel linearise(const ModelParameters& p, const InitialCondition& at) {
  LinearModel m;
  // A pump with flow ripple is linearised about its mean flow.
  const ModelParameters q = mean_flow_model(p);
  const Derived d(q);
  const State x = at.x.head(d.layout.size);
  m.states = {state::discharge_pressure, state::control_pressure};
  if (at.modes.swash == Stop::free) {
    m.states.push_back(state::swash_angle);
    m.states.push_back(state::swash_velocity);
  }
  if (at.modes.spool == Stop::free) {
    m.states.push_back(state::spool_position);
    m.states.push_back(state::spool_velocity);
  }
  for (int i = state::core_size; i < d.layout.size; ++i) m.states.push_back(i);
  const int n = static_cast<int>(m.states.size());
  const Jacobian j = jacobian(q, d, at.modes, x);
  const State scale = state_scale(q);
  m.a.resize(n, n);
  m.b = Eigen::VectorXd::Zero(n);
  m.c = Eigen::RowVectorXd::Zero(n);
  m.scale.resize(n);
  for (int r = 0; r < n; ++r) {
    m.scale[r] = scale[m.states[r]];
    for (int c = 0; c < n; ++c) m.a(r, c) = j(m.states[r], m.states[c]);
  }
  m.c[0] = 1.0;  // y = p_d
  m.loop_active = at.modes.spool == Stop::free;
  if (m.loop_active) {
    // u acts on the sensing area in place of p_d: split A_s/m_s off the
    // closed-loop Jacobian's p_d column into B C.
    const int v =
        static_cast<int>(std::find(m.states.begin(), m.states.end(), state::spool_velocity) - m.states.begin());
    m.b[v] = d.sensing_area / p.spool_mass;
    m.a(v, 0) -= m.b[v];
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

// ---- margins ----------------------------------------------------------------

namespace {

std::complex<double> loop_at(const LinearModel& m, double hz) { return -m.open_loop_response(two_pi * hz); }

double degrees(double radians) { return radians * 180.0 / pi; }

// Phase of L at hz, unwrapped to lie within 180 deg of a reference.
double phase_near(const LinearModel& m, double hz, double reference_deg) {
  double ph = degrees(std::arg(loop_at(m, hz)));
  while (ph - reference_deg > 180.0) ph -= 360.0;
  while (ph - reference_deg < -180.0) ph += 360.0;
  return ph;
}

// Bisection in log frequency on a sign change of g between lo and hi.
template <class F>
double refine(double lo, double hi, F g) {
  double g_lo = g(lo);
  for (int i = 0; i < 100 && hi / lo > 1.0 + 1e-12; ++i) {
    const double mid = std::sqrt(lo * hi);
    const double g_mid = g(mid);
    if ((g_mid < 0.0) == (g_lo < 0.0)) {
      lo = mid;
      g_lo = g_mid;
    } else {
      hi = mid;
    }
  }
  return std::sqrt(lo * hi);
}

}  // namespace

std::vector<BodePoint> loop_bode(const LinearModel& m, double from_hz, double to_hz, int points) {
  std::vector<BodePoint> out;
  points = std::max(points, 2);
  double previous_phase = 0.0;
  for (int i = 0; i < points; ++i) {
    const double hz = from_hz * std::pow(to_hz / from_hz, static_cast<double>(i) / (points - 1));
    const std::complex<double> l = loop_at(m, hz);
    const double phase = i == 0 ? degrees(std::arg(l)) : phase_near(m, hz, previous_phase);
    previous_phase = phase;
    out.push_back(BodePoint{hz, 20.0 * std::log10(std::abs(l)), phase});
  }
  return out;
}

LoopMargins loop_margins(const LinearModel& m) {
  LoopMargins margins;
  if (!m.loop_active) return margins;
  // 200 points a decade keeps the phase change between neighbours well
  // below 180 deg even for lightly damped resonances.
  const int decades = static_cast<int>(std::ceil(std::log10(margin_search_high_hz / margin_search_low_hz)));
  const std::vector<BodePoint> bode = loop_bode(m, margin_search_low_hz, margin_search_high_hz, 200 * decades + 1);
  for (std::size_t i = 0; i + 1 < bode.size(); ++i) {
    const BodePoint& a = bode[i];
    const BodePoint& b = bode[i + 1];
    if (!margins.crossover_frequency_hz && a.magnitude_db >= 0.0 && b.magnitude_db < 0.0) {
      const double hz = refine(a.frequency_hz, b.frequency_hz, [&](double f) { return std::abs(loop_at(m, f)) - 1.0; });
      margins.crossover_frequency_hz = hz;
      margins.phase_margin_deg = 180.0 + phase_near(m, hz, a.phase_deg);
    }
    if (!margins.phase_crossover_frequency_hz && (a.phase_deg + 180.0) * (b.phase_deg + 180.0) <= 0.0 &&
        a.phase_deg != b.phase_deg) {
      const double reference = a.phase_deg;
      const double hz =
          refine(a.frequency_hz, b.frequency_hz, [&](double f) { return phase_near(m, f, reference) + 180.0; });
      margins.phase_crossover_frequency_hz = hz;
      margins.gain_margin_db = -20.0 * std::log10(std::abs(loop_at(m, hz)));
    }
  }
  return margins;
}

StabilityReport analyse_stability(const ModelParameters& p, const RunSettings& settings,
                                  const std::optional<InitialCondition>& guess) {
  StabilityReport report;
  report.load_opening = p.opening;
  report.operating_point = steady_state(p, settings, guess);
  report.model = linearise(p, report.operating_point.condition);
  report.modes = modes_of(report.model.closed_loop(), report.model.scale);
  for (const Mode& mode : report.modes)
    if (mode.oscillatory() && (!report.dominant || mode.damping_ratio < report.dominant->damping_ratio))
      report.dominant = mode;
  report.margins = loop_margins(report.model);
  if (report.model.loop_active)
    for (const Mode& mode : modes_of(report.model.a, report.model.scale))
      if (mode.eigenvalue.real() >= 0.0) ++report.open_loop_unstable_poles;
  report.stable = std::all_of(report.modes.begin(), report.modes.end(),
                              [](const Mode& mode) { return mode.eigenvalue.real() < 0.0; });
  return report;
}

// ---- steady characteristic ----------------------------------------------------

Characteristic steady_characteristic(const ModelParameters& p, const RunSettings& settings, int points) {
  Characteristic ch;
  points = std::max(points, 2);
  std::optional<InitialCondition> previous;
  auto solve_at = [&](double opening) {
    ModelParameters q = p;
    q.opening = opening;
    const OperatingPoint op = steady_state(q, settings, previous);
    previous = op.condition;
    const Sample s = make_sample(0.0, op.condition.x, q);
    return CharacteristicPoint{opening,     op.condition.x[state::discharge_pressure], s.pump_flow,
                               s.load_flow, op.condition.x[state::swash_angle],        op.method};
  };
  for (int i = 0; i < points; ++i) ch.points.push_back(solve_at(static_cast<double>(i) / (points - 1)));
  ch.deadhead_pressure = ch.points.front().discharge_pressure;

  // Cut-in: the pump flow 5 % below the full-stroke flow at that pressure.
  const double full_flow = p.displacement * p.speed / 60.0;
  auto shortfall = [&](const CharacteristicPoint& c) {
    return c.pump_flow - 0.95 * (full_flow - Derived(p).leakage_coefficient * c.discharge_pressure);
  };
  for (std::size_t i = 0; i + 1 < ch.points.size(); ++i) {
    if ((shortfall(ch.points[i]) < 0.0) != (shortfall(ch.points[i + 1]) < 0.0)) {
      double lo = ch.points[i].load_opening, hi = ch.points[i + 1].load_opening;
      const bool low_is_short = shortfall(ch.points[i]) < 0.0;
      CharacteristicPoint at = ch.points[i];
      previous = std::nullopt;
      for (int it = 0; it < 40; ++it) {
        at = solve_at(0.5 * (lo + hi));
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
    const double v = count == 1 ? from : from + (to - from) * static_cast<double>(i) / (count - 1);
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
