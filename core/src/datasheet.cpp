#include "swashtune/datasheet.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <unsupported/Eigen/LevenbergMarquardt>

#include "fit_search.hpp"
#include "swashtune/analysis.hpp"
#include "swashtune/simulator.hpp"
#include "swashtune/units.hpp"

namespace swashtune {

const char* key_of(Figure f) {
  switch (f) {
    case Figure::off_stroke:
      return "off_stroke";
    case Figure::on_stroke:
      return "on_stroke";
    case Figure::droop:
      return "droop";
    case Figure::deadhead:
      return "deadhead";
    case Figure::cut_in:
      return "cut_in";
    case Figure::peak:
      return "peak";
  }
  return "?";
}

const char* description_of(Figure f) {
  switch (f) {
    case Figure::off_stroke:
      return "off-stroke time: from the start of the valve's closure to the swash below 10 % of full stroke";
    case Figure::on_stroke:
      return "on-stroke time: from the start of the valve's reopening to the swash above 90 % of full stroke";
    case Figure::droop:
      return "droop: (deadhead - cut-in) / setting";
    case Figure::deadhead:
      return "deadhead pressure: the steady pressure with the load valve shut";
    case Figure::cut_in:
      return "cut-in pressure: where the pump's flow is 5 % below its full-stroke flow";
    case Figure::peak:
      return "slam peak: the highest pressure after the closure";
  }
  return "?";
}

const char* unit_of(Figure f) {
  switch (f) {
    case Figure::off_stroke:
    case Figure::on_stroke:
      return "s";
    case Figure::droop:
      return "1";
    default:
      return "Pa";
  }
}

std::optional<double> DataSheetFigures::value(Figure f) const {
  switch (f) {
    case Figure::off_stroke:
      return off_stroke;
    case Figure::on_stroke:
      return on_stroke;
    case Figure::droop:
      return droop;
    case Figure::deadhead:
      return deadhead;
    case Figure::cut_in:
      return cut_in;
    case Figure::peak:
      return peak;
  }
  return std::nullopt;
}

namespace {

bool wants(const std::vector<Figure>& figures, std::initializer_list<Figure> any) {
  for (Figure f : any)
    if (std::find(figures.begin(), figures.end(), f) != figures.end()) return true;
  return false;
}

}  // namespace

DataSheetFigures datasheet_figures(const Scenario& scenario, const DataSheetTest& test,
                                   const std::vector<Figure>& figures) {
  DataSheetFigures out;
  const ModelParameters& p = scenario.parameters;
  const double full = p.max_swash_angle;
  if (wants(figures, {Figure::off_stroke, Figure::on_stroke, Figure::peak})) {
    Scenario s = scenario;
    s.events.clear();
    const double reopen_at = test.closing_at + test.hold;
    s.events.push_back(Event{test.closing_at, "load.opening", 0.0, test.valve_time, 0});
    s.events.push_back(Event{reopen_at, "load.opening", p.opening, test.valve_time, 0});
    s.settings.duration = reopen_at + test.recover;
    s.settings.sample_interval = test.sample_interval;
    // The crossings, interpolated between the samples either side.
    bool first = true;
    double t_before = 0.0, f_before = 0.0;
    RunOptions options;
    options.max_trace_samples = 16;
    options.stream = [&](const Sample& x) {
      const double f = x.x[state::swash_angle] / full;
      if (first) {
        out.start_stroke = f;
        first = false;
      }
      const auto crossing = [&](double level) { return t_before + (level - f_before) / (f - f_before) * (x.time - t_before); };
      // Only a crossing counts: a swash already below 10 % (or above 90 %)
      // when the valve moves gives no time (and no division by a flat step).
      if (!out.off_stroke && x.time > test.closing_at && x.time <= reopen_at && f < 0.1 && f_before >= 0.1)
        out.off_stroke = std::max(crossing(0.1), test.closing_at) - test.closing_at;
      if (!out.on_stroke && x.time > reopen_at && f > 0.9 && f_before <= 0.9)
        out.on_stroke = std::max(crossing(0.9), reopen_at) - reopen_at;
      t_before = x.time;
      f_before = f;
    };
    const RunResult run = run_scenario(s, options);
    if (!run.windows.empty()) out.peak = run.windows.front().peak_pressure();
  }
  if (wants(figures, {Figure::droop, Figure::cut_in})) {
    const Characteristic ch = steady_characteristic(p, scenario.settings, 11);
    out.deadhead = ch.deadhead_pressure;
    out.cut_in = ch.cut_in_pressure;
    if (out.cut_in) out.droop = (out.deadhead - *out.cut_in) / p.setting;
  } else if (wants(figures, {Figure::deadhead})) {
    ModelParameters shut = p;
    shut.opening = 0.0;
    out.deadhead = steady_state(shut, scenario.settings).condition.x[state::discharge_pressure];
  }
  return out;
}

// ---- targets -------------------------------------------------------------------

namespace {

Dimension dimension_of(Figure f) {
  switch (f) {
    case Figure::off_stroke:
    case Figure::on_stroke:
      return dim::time;
    case Figure::droop:
      return dim::none;
    default:
      return dim::pressure;
  }
}

const char* example_of(Figure f) {
  switch (f) {
    case Figure::off_stroke:
      return "35ms";
    case Figure::on_stroke:
      return "90ms";
    case Figure::droop:
      return "3%";
    default:
      return "212bar";
  }
}

std::string trimmed(const std::string& s) {
  const auto b = s.find_first_not_of(" \t");
  if (b == std::string::npos) return "";
  return s.substr(b, s.find_last_not_of(" \t") - b + 1);
}

double figure_quantity(const std::string& text, Figure f, const std::string& where) {
  Quantity q;
  try {
    q = parse_quantity_relaxed(text);
  } catch (const UnitError& e) {
    throw ScenarioError(where + ": " + e.what() + "; write it as, e.g., " + key_of(f) + "=" + example_of(f));
  }
  if (!q.has_unit)
    throw ScenarioError(where + ": \"" + text + "\" has no unit; write it as, e.g., " + key_of(f) + "=" +
                        example_of(f));
  if (q.unit.dimension != dimension_of(f))
    throw ScenarioError(where + ": \"" + text + "\" is a " + dimension_name(q.unit.dimension) + ", but " + key_of(f) +
                        " is a " + (f == Figure::droop ? std::string("percentage") : dimension_name(dimension_of(f))) +
                        "; e.g. " + key_of(f) + "=" + example_of(f));
  return q.si();
}

}  // namespace

std::vector<FigureTarget> parse_targets(const std::string& text, const std::string& option) {
  std::vector<FigureTarget> out;
  std::string rest = text;
  std::vector<std::string> items;
  while (true) {
    const auto comma = rest.find(',');
    items.push_back(trimmed(rest.substr(0, comma)));
    if (comma == std::string::npos) break;
    rest = rest.substr(comma + 1);
  }
  std::string known;
  for (Figure f : all_figures) known += std::string(known.empty() ? "" : ", ") + key_of(f);
  for (const std::string& item : items) {
    const std::string where = option + " " + item;
    if (item.empty()) throw ScenarioError(option + " \"" + text + "\": an empty item; separate figures by single commas");
    const auto equals = item.find('=');
    if (equals == std::string::npos)
      throw ScenarioError(where + ": expected FIGURE=VALUE, e.g. off_stroke=35ms (figures: " + known + ")");
    const std::string key = trimmed(item.substr(0, equals));
    std::optional<Figure> figure;
    for (Figure f : all_figures)
      if (key == key_of(f)) figure = f;
    if (!figure) throw ScenarioError(where + ": \"" + key + "\" is not a data-sheet figure; the figures are " + known);
    for (const FigureTarget& t : out)
      if (t.figure == *figure) throw ScenarioError(where + ": " + key + " is given twice");
    FigureTarget target;
    target.figure = *figure;
    std::string value = item.substr(equals + 1);
    const auto pm = value.find("+-");
    if (pm != std::string::npos) {
      target.tolerance = figure_quantity(trimmed(value.substr(pm + 2)), *figure, where);
      target.tolerance_given = true;
      value = value.substr(0, pm);
    }
    target.value = figure_quantity(trimmed(value), *figure, where);
    const bool pressure = dimension_of(*figure) == dim::pressure;
    if (!target.tolerance_given) target.tolerance = (pressure ? 0.01 : 0.10) * std::abs(target.value);
    if (!(target.tolerance > 0.0))
      throw ScenarioError(where + ": the tolerance must be above zero; give one, e.g. " + key + "=" +
                          trimmed(value) + "+-" + example_of(*figure));
    if (!pressure && target.value < 0.0) throw ScenarioError(where + ": " + key + " cannot be negative");
    out.push_back(target);
  }
  return out;
}

double chi_square_99(int k) {
  if (k <= 0) return 0.0;
  if (k == 1) return 6.634896601021214;  // (Phi^-1(0.995))^2
  if (k == 2) return -2.0 * std::log(0.01);
  const double z = 2.3263478740408408;  // Phi^-1(0.99)
  const double a = 2.0 / (9.0 * k);
  return k * std::pow(1.0 - a + z * std::sqrt(a), 3);
}

// ---- the fit -------------------------------------------------------------------

namespace {

using fitting::Cancelled;
using fitting::FreeParameter;
using fitting::number;

// A figure the test did not reach (the swash never crossed, or no cut-in)
// counts this many tolerances off: far, but finite, so the search steps back.
constexpr double kMissingFigure = 100.0;

class FigureResiduals : public Eigen::DenseFunctor<double> {
 public:
  FigureResiduals(const Scenario& scenario, std::vector<FreeParameter> free, std::vector<FigureTarget> targets,
                  const DataSheetTest& test, const FitProgress& progress)
      : Eigen::DenseFunctor<double>(static_cast<int>(free.size()),
                                    static_cast<int>(std::max(free.size(), targets.size()))),
        scenario_(scenario),
        free_(std::move(free)),
        targets_(std::move(targets)),
        test_(test),
        progress_(progress) {
    for (const FigureTarget& t : targets_) figures_.push_back(t.figure);
  }

  Scenario with(const InputType& theta) const {
    Scenario s = scenario_;
    for (std::size_t i = 0; i < free_.size(); ++i) free_[i].spec->set(s.parameters, free_[i].value(theta[i]));
    return s;
  }

  DataSheetFigures figures_at(const InputType& theta) const { return datasheet_figures(with(theta), test_, figures_); }

  // Misses in tolerances; rows past the targets (fewer targets than free
  // parameters) are zero, so the search can run and the SVD shows what the
  // figures leave open.
  int operator()(const InputType& theta, ValueType& residual) {
    residual = ValueType::Zero(values());
    const DataSheetFigures f = figures_at(theta);
    for (std::size_t i = 0; i < targets_.size(); ++i) {
      const std::optional<double> v = f.value(targets_[i].figure);
      residual[static_cast<Eigen::Index>(i)] =
          v ? (*v - targets_[i].value) / targets_[i].tolerance : kMissingFigure;
    }
    ++simulations_;
    const double rms = std::sqrt(residual.squaredNorm() / static_cast<double>(targets_.size()));
    if (rms < best_rms_) {
      best_rms_ = rms;
      best_theta_ = theta;
    }
    if (rms < overall_rms_) {
      overall_rms_ = rms;
      overall_theta_ = theta;
    }
    if (progress_ && !progress_(simulations_, rms)) throw Cancelled{};
    return 0;
  }

  // Central differences: the figures come from crossing times and a
  // bisection, so the one-sided error of forward differences matters more
  // here than for a trace.
  int df(const InputType& theta, JacobianType& jacobian) {
    ValueType up, down;
    jacobian.resize(values(), inputs());
    for (int j = 0; j < inputs(); ++j) {
      InputType t = theta;
      const double h = 2e-3;
      t[j] = theta[j] + h;
      (*this)(t, up);
      t[j] = theta[j] - h;
      (*this)(t, down);
      jacobian.col(j) = (up - down) / (2.0 * h);
    }
    return 0;
  }

  void restart_tracking() {
    best_rms_ = std::numeric_limits<double>::infinity();
    best_theta_ = InputType();
  }
  int simulations() const { return simulations_; }
  double best_rms() const { return best_rms_; }
  const InputType& best_theta() const { return best_theta_; }
  double overall_rms() const { return overall_rms_; }
  const InputType& overall_theta() const { return overall_theta_; }
  const std::vector<FreeParameter>& free() const { return free_; }

 private:
  const Scenario& scenario_;
  std::vector<FreeParameter> free_;
  std::vector<FigureTarget> targets_;
  std::vector<Figure> figures_;
  DataSheetTest test_;
  const FitProgress& progress_;
  int simulations_ = 0;
  double best_rms_ = std::numeric_limits<double>::infinity();
  InputType best_theta_;
  double overall_rms_ = std::numeric_limits<double>::infinity();
  InputType overall_theta_;
};

// A figure in the unit a person reads it in.
std::string shown(Figure f, double v) {
  if (dimension_of(f) == dim::time) return number(1e3 * v, 4) + " ms";
  if (f == Figure::droop) return number(100.0 * v, 3) + " %";
  return number(v / 1e5, 5) + " bar";
}

// The remaining Gauss-Newton step (in standard errors) above which a search
// that met a criterion is called stalled, as for the trace fit.
constexpr double kStalledStep = 0.2;
// Two parameters whose estimates correlate more than this are determined
// only as a combination.
constexpr double kCombinationOnly = 0.99;

}  // namespace

DataSheetFitResult fit_to_datasheet(const Scenario& scenario, const DataSheetFitOptions& options,
                                    const FitProgress& progress) {
  if (options.targets.empty()) throw ScenarioError("fit --target: name at least one data-sheet figure");
  if (options.free_keys.empty()) throw ScenarioError("fit --target: name at least one parameter to estimate (--free)");
  if (options.starts < 1) throw ScenarioError("fit: the number of starts must be at least 1");
  const std::vector<FreeParameter> free = fitting::free_parameters(options.free_keys, scenario.parameters, "fit");
  const int n = static_cast<int>(free.size());
  const int m = static_cast<int>(options.targets.size());

  DataSheetFitResult result;
  result.test = options.test;
  FigureResiduals residuals(scenario, free, options.targets, options.test, progress);

  // The test starts at full flow, or the off-stroke time means nothing.
  std::vector<Figure> wanted;
  for (const FigureTarget& t : options.targets) wanted.push_back(t.figure);
  const DataSheetFigures initial = datasheet_figures(scenario, options.test, wanted);
  const bool transient = wants(wanted, {Figure::off_stroke, Figure::on_stroke, Figure::peak});
  if (transient && initial.start_stroke < 0.95)
    throw ScenarioError("fit --target: the data-sheet test starts at the scenario's load.opening (" +
                        number(scenario.parameters.opening, 3) + "), where the pump is at " +
                        number(100.0 * initial.start_stroke, 3) +
                        " % of full stroke; it needs full flow: open load.opening further or raise "
                        "compensator.setting");

  const double ftol = 1e-10, xtol = 1e-8;
  const std::vector<Eigen::VectorXd> start_points = fitting::start_points(free, options.starts);
  Eigen::LevenbergMarquardtSpace::Status status{};
  const auto search = [&](Eigen::VectorXd theta) {
    residuals.restart_tracking();
    Eigen::LevenbergMarquardt<FigureResiduals> lm(residuals);
    lm.setMaxfev(options.max_iterations * (2 * n + 1));
    lm.setXtol(xtol);
    lm.setFtol(ftol);
    status = lm.minimize(theta);
  };
  int best = -1;
  try {
    for (std::size_t k = 0; k < start_points.size(); ++k) {
      const int before = residuals.simulations();
      search(start_points[k]);
      FitStart start;
      for (int i = 0; i < n; ++i) {
        start.start.push_back(free[i].value(start_points[k][i]));
        start.end.push_back(free[i].value(residuals.best_theta()[i]));
      }
      start.rms = residuals.best_rms();
      start.stop = fitting::stop_of(status);
      start.simulations = residuals.simulations() - before;
      start.criterion = fitting::criterion_of(status, ftol, xtol, start.simulations);
      result.starts.push_back(start);
      if (best < 0 || start.rms < result.starts[best].rms) best = static_cast<int>(k);
    }
  } catch (const Cancelled&) {
    result.cancelled = true;
    result.message = "cancelled; the best values so far are reported";
  }
  Eigen::VectorXd theta = residuals.overall_theta();

  // Covariance of the estimates from the targets' tolerances: cov = (J^T
  // J)^-1 with the misses already in tolerances (linearised least squares),
  // through an SVD so that what the figures leave open shows as a vanishing
  // singular value.
  Eigen::MatrixXd covariance = Eigen::MatrixXd::Constant(n, n, std::numeric_limits<double>::infinity());
  Eigen::VectorXd at_solution;
  double remaining_step = 0.0;
  int rank = 0;
  // Directions of the free parameters (in theta: relative changes) along
  // which a 100 % move changes the figures by less than one tolerance: the
  // figures do not determine them. Each with its singular value.
  std::vector<std::pair<Eigen::VectorXd, double>> weak;
  const auto assess = [&] {
    Eigen::MatrixXd jacobian;
    residuals(theta, at_solution);
    residuals.df(theta, jacobian);
    const Eigen::JacobiSVD<Eigen::MatrixXd> svd(jacobian, Eigen::ComputeThinU | Eigen::ComputeThinV);
    const Eigen::VectorXd sv = svd.singularValues();
    const double cutoff = std::max(1e-8 * sv.maxCoeff(), 1e-12);
    Eigen::VectorXd inverse_square(sv.size());
    double projected = 0.0;
    rank = 0;
    weak.clear();
    const Eigen::MatrixXd v = svd.matrixV();
    for (int k = 0; k < sv.size(); ++k) {
      const bool seen = sv[k] > cutoff;
      rank += seen;
      inverse_square[k] = seen ? 1.0 / (sv[k] * sv[k]) : 0.0;
      // What is left to gain along a determined direction; along a weak one
      // the gain needs a step beyond where the linearisation holds.
      if (sv[k] >= 1.0) projected += std::pow(svd.matrixU().col(k).dot(at_solution), 2);
      else weak.emplace_back(v.col(k), sv[k]);
    }
    covariance = v * inverse_square.asDiagonal() * v.transpose();
    for (int k = 0; k < sv.size(); ++k)
      if (sv[k] <= cutoff)
        for (int i = 0; i < n; ++i)
          if (v(i, k) * v(i, k) > 1e-12) covariance(i, i) = std::numeric_limits<double>::infinity();
    remaining_step = std::sqrt(projected);
  };
  if (!result.cancelled) {
    try {
      assess();
      FitStart& chosen = result.starts[static_cast<std::size_t>(best)];
      for (int again = 0; again < 2 && remaining_step > kStalledStep && chosen.stop != FitStop::iteration_limit;
           ++again) {
        const int before = residuals.simulations();
        search(theta);
        theta = residuals.overall_theta();
        chosen.simulations += residuals.simulations() - before;
        chosen.stop = fitting::stop_of(status);
        chosen.criterion = fitting::criterion_of(status, ftol, xtol, chosen.simulations) + "; continued " +
                           std::to_string(again + 1) + " time(s) from where it stalled";
        for (int i = 0; i < n; ++i) chosen.end[static_cast<std::size_t>(i)] = free[i].value(theta[i]);
        chosen.rms = residuals.overall_rms();
        assess();
      }
    } catch (const Cancelled&) {
      result.cancelled = true;
      result.message = "cancelled; the best values so far are reported";
      theta = residuals.overall_theta();
    }
  }
  result.simulations = residuals.simulations();
  result.fitted = residuals.with(theta);

  for (int i = 0; i < n; ++i) {
    const FreeParameter& f = free[i];
    FittedParameter out;
    out.key = std::string(f.spec->key);
    out.initial = f.initial;
    out.value = f.value(theta[i]);
    out.standard_error = std::sqrt(covariance(i, i)) * f.slope(theta[i]);
    const double relative = out.standard_error / std::max(std::abs(out.value), 1e-300);
    if (!std::isfinite(out.standard_error) || relative > 1.0) {
      out.identifiable = false;
      out.note = "not determined by these figures";
    } else if (out.value <= f.spec->range.min || out.value >= f.spec->range.max) {
      out.note = "at the limit of its valid range";
    }
    result.parameters.push_back(out);
  }
  // The figures at the start and at the solution.
  const DataSheetFigures achieved = residuals.figures_at(theta);
  for (const FigureTarget& t : options.targets) {
    FigureResult r;
    r.target = t;
    r.initial = initial.value(t.figure);
    r.achieved = achieved.value(t.figure);
    r.normalised_miss = r.achieved ? (*r.achieved - t.value) / t.tolerance : kMissingFigure;
    r.met = std::abs(r.normalised_miss) <= 1.0;
    result.figures.push_back(r);
  }
  if (result.cancelled) return result;

  FitStart& chosen = result.starts[static_cast<std::size_t>(best)];
  result.stop = chosen.stop;
  if (result.stop != FitStop::iteration_limit && remaining_step > kStalledStep) result.stop = FitStop::stalled;
  result.converged =
      result.stop == FitStop::gradient || result.stop == FitStop::step || result.stop == FitStop::cost_change;
  result.message = result.converged ? "converged (" + chosen.criterion + ")"
                   : result.stop == FitStop::stalled
                       ? "stalled (" + chosen.criterion + "), the minimum still " + number(remaining_step, 2) +
                             " tolerances away: not converged"
                       : "not converged (" + chosen.criterion + ")";

  // What the figures leave open.
  if (m < n)
    result.undetermined.push_back(std::to_string(m) + " figure" + (m == 1 ? "" : "s") + " cannot determine " +
                                  std::to_string(n) + " parameters: at most " + std::to_string(m) +
                                  " can be fitted; fix the others or give more figures");
  for (const FittedParameter& p : result.parameters)
    if (!p.identifiable) {
      const double relative = std::abs(p.standard_error / p.value);
      result.undetermined.push_back(
          p.key + " is not determined by these figures (standard error " +
          (!std::isfinite(relative) ? std::string("unbounded")
           : relative > 10.0        ? std::string("more than 10 times its value")
                                    : number(100.0 * relative, 3) + " % of its value") +
          ")");
    }
  // The combinations the figures cannot see, as relative changes of the
  // parameters (the largest part first), when more than one parameter takes part.
  for (const auto& weak_direction : weak) {
    const Eigen::VectorXd& direction = weak_direction.first;
    const double singular = weak_direction.second;
    std::vector<int> order(n);
    for (int i = 0; i < n; ++i) order[i] = i;
    std::sort(order.begin(), order.end(), [&](int a, int b) { return std::abs(direction[a]) > std::abs(direction[b]); });
    const int sign = direction[order[0]] > 0 ? 1 : -1;
    std::ostringstream o;
    int parts = 0;
    for (int i : order) {
      if (std::abs(direction[i]) < 0.1) continue;
      const double percent = 10.0 * sign * direction[i] / std::abs(direction[order[0]]);
      o << (parts ? ", " : "") << (percent > 0 ? "+" : "") << number(percent, 2) << " % " << free[i].spec->key;
      ++parts;
    }
    if (parts < 2) continue;
    result.undetermined.push_back("the figures cannot tell apart the change " + o.str() +
                                  " from no change (a 100 % move that way shifts them by " + number(singular, 2) +
                                  " tolerances)");
  }
  for (int i = 0; i < n; ++i)
    for (int j = i + 1; j < n; ++j) {
      if (!result.parameters[i].identifiable || !result.parameters[j].identifiable) continue;
      const double r = covariance(i, j) / std::sqrt(covariance(i, i) * covariance(j, j));
      if (std::abs(r) > kCombinationOnly)
        result.undetermined.push_back("only a combination of " + result.parameters[i].key + " and " +
                                      result.parameters[j].key + " is well determined (correlation " +
                                      number(r, 4) + "): the figures cannot tell them apart");
    }

  // Do the starts agree?
  std::string disagree;
  for (std::size_t k = 0; k < result.starts.size(); ++k) {
    FitStart& st = result.starts[k];
    for (int i = 0; i < n; ++i) {
      const FittedParameter& p = result.parameters[static_cast<std::size_t>(i)];
      if (p.identifiable && std::abs(st.end[i] - p.value) > kSameMinimum * p.standard_error)
        st.same_minimum = false;
    }
    if (!st.same_minimum) {
      result.starts_agree = false;
      std::ostringstream o;
      o << (disagree.empty() ? "" : "; ") << "start " << k + 1 << " ended at";
      for (int i = 0; i < n; ++i) o << (i ? "," : "") << " " << result.parameters[i].key << " " << number(st.end[i], 4);
      o << " (rms miss " << number(st.rms, 3) << " tolerances)";
      disagree += o.str();
    }
  }
  if (result.starts.size() > 1)
    result.starts_note = result.starts_agree
                             ? "all " + std::to_string(result.starts.size()) + " starts ended in the same minimum"
                             : "the starts disagree (local minima): " + disagree + "; the least miss is reported";

  result.all_met = std::all_of(result.figures.begin(), result.figures.end(), [](const FigureResult& r) { return r.met; });
  if (m > rank && rank > 0) {
    result.degrees_of_freedom = m - rank;
    result.chi_square = at_solution.head(m).squaredNorm();
    result.consistent = *result.chi_square <= chi_square_99(result.degrees_of_freedom);
  }
  std::ostringstream v;
  if (result.all_met)
    v << "the fitted values meet every figure within its tolerance";
  else {
    v << "cannot meet";
    bool first = true;
    for (const FigureResult& r : result.figures)
      if (!r.met) {
        v << (first ? " " : "; ") << key_of(r.target.figure) << " (target " << shown(r.target.figure, r.target.value)
          << " +- " << shown(r.target.figure, r.target.tolerance) << ", closest "
          << (r.achieved ? shown(r.target.figure, *r.achieved) : std::string("not reached in the test")) << ")";
        first = false;
      }
    v << " with these free parameters inside their valid ranges";
  }
  if (result.chi_square && !result.consistent)
    v << "; the figures disagree with one another on this model: chi-square " << number(*result.chi_square, 3)
      << " for " << result.degrees_of_freedom << " degree(s) of freedom, above its 99th percentile "
      << number(chi_square_99(result.degrees_of_freedom), 3);
  if (result.undetermined.empty())
    v << "; the figures determine every free parameter";
  else
    v << "; what the figures leave open: " << result.undetermined.front()
      << (result.undetermined.size() > 1 ? " (and more, listed)" : "");
  v << ". The values are the model's reading of published figures, not measurements of this pump";
  result.verdict_text = v.str();
  return result;
}

}  // namespace swashtune
