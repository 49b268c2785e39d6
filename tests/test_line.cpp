// The discharge line given by its geometry, and the distributed line
// (issue 14), checked against outside sources: Korteweg's wave speed,
// Joukowsky's surge, the exact dissipative transfer functions of a laminar
// line (Brown 1962) and a method-of-characteristics solution with Zielke's
// friction (Wylie and Streeter 1993), both computed by the independent
// scipy reference tests/python/line_reference.py into tests/data/line/.
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <algorithm>
#include <boost/numeric/odeint.hpp>
#include <cmath>
#include <complex>
#include <fstream>
#include <map>
#include <sstream>

#include "swashtune/analysis.hpp"
#include "swashtune/model.hpp"
#include "swashtune/scenario.hpp"

using namespace swashtune;

namespace {

const std::string line_data = std::string(SWASHTUNE_SOURCE_DIR) + "/tests/data/line/";

// The reference's line: L = 3.2 m, r = 10 mm, c = 1300 m/s, rho = 870
// kg/m^3, nu = 46e-6 m^2/s (the files' headers), with a rigid wall so that
// c = sqrt(K / rho).
constexpr double length = 3.2, bore = 0.02, wave_speed = 1300.0, density = 870.0, viscosity = 46e-6;
constexpr double bulk_modulus = density * wave_speed * wave_speed;

// The line element alone: node 0 at index 0, its own states after it.
struct LineRig {
  LineElement line;
  Layout layout;
  double node0_volume = 0.0;

  LineRig(int reaches, double nu) {
    ModelParameters p = default_parameters();
    p.line_length = length;
    p.line_bore = bore;
    p.line_wall = static_cast<double>(LineWall::rigid);
    p.line_model = static_cast<double>(LineModel::distributed);
    p.line_reaches = reaches;
    line = LineElement(p, density, nu);
    layout.size = 1;
    line.add_states(layout);
    line.locate(layout);
    node0_volume = 0.5 * line.reach_volume;
  }
  int size() const { return layout.size; }

  // dx/dt with q0 into node 0 (hold_node0: node 0 at a fixed pressure) and
  // q_out leaving node N.
  State rates(const State& x, double q0, double q_out, bool hold_node0) const {
    State dx = State::Zero(size());
    line.rates<double>(
        x, x[0], q_out, [](double p) { return p; },
        [](double, double volume, double q) { return bulk_modulus / volume * q; }, dx);
    dx[0] = hold_node0 ? 0.0 : bulk_modulus / node0_volume * (q0 - x[line.first_flow]);
    return dx;
  }
};

// The 2 x 2 impedance matrix [P0; PL] = Z [Q0; QL] of the linear rig at f.
Eigen::Matrix2cd impedance(const LineRig& rig, double f) {
  const int n = rig.size();
  Eigen::MatrixXd a(n, n);
  const State zero = State::Zero(n);
  for (int j = 0; j < n; ++j) {
    State e = zero;
    e[j] = 1.0;
    a.col(j) = rig.rates(e, 0.0, 0.0, false);  // linear: the column is exact
  }
  Eigen::MatrixXd b(n, 2);
  b.col(0) = rig.rates(zero, 1.0, 0.0, false);
  b.col(1) = rig.rates(zero, 0.0, 1.0, false);
  const std::complex<double> s(0.0, 2.0 * pi * f);
  const Eigen::MatrixXcd m = s * Eigen::MatrixXcd::Identity(n, n) - a.cast<std::complex<double>>();
  const Eigen::MatrixXcd x = m.partialPivLu().solve(b.cast<std::complex<double>>());
  Eigen::Matrix2cd z;
  z.row(0) = x.row(0);
  z.row(1) = x.row(rig.line.first_node + rig.line.reaches - 1);
  // Convention of the reference: QL flows out of the line, Z12 = dP0/dQL.
  return z;
}

double blocked_magnitude(const LineRig& rig, double f) { return std::abs(impedance(rig, f)(0, 0)); }
double open_magnitude(const LineRig& rig, double f) {
  const Eigen::Matrix2cd z = impedance(rig, f);
  return std::abs(z(0, 0) - z(0, 1) * z(1, 0) / z(1, 1));  // PL = 0
}

// The frequencies of the first `count` peaks of |Z| above lo (a scan on a
// log scale, each local maximum refined by golden section).
template <class F>
std::vector<double> peaks_of(F magnitude, double lo, double hi, int count) {
  const int points = 1500;
  const double ratio = std::pow(hi / lo, 1.0 / points);
  std::vector<double> found;
  double before = magnitude(lo), here = magnitude(lo * ratio);
  for (int i = 2; i <= points && static_cast<int>(found.size()) < count; ++i) {
    const double f = lo * std::pow(ratio, i), after = magnitude(f);
    if (here > before && here >= after) {
      double a = f / ratio / ratio, b = f;
      const double g = 0.5 * (std::sqrt(5.0) - 1.0);
      for (int it = 0; it < 60; ++it) {
        const double c = b - g * (b - a), d = a + g * (b - a);
        if (magnitude(c) > magnitude(d))
          b = d;
        else
          a = c;
      }
      found.push_back(0.5 * (a + b));
    }
    before = here;
    here = after;
  }
  return found;
}

struct Peak {
  std::string end;
  int mode;
  double frequency, magnitude;
};

std::vector<Peak> reference_peaks() {
  std::ifstream in(line_data + "brown-peaks.csv");
  std::vector<Peak> out;
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#' || line.rfind("end,", 0) == 0) continue;
    std::stringstream row(line);
    Peak p;
    std::string field;
    std::getline(row, p.end, ',');
    std::getline(row, field, ',');
    p.mode = std::stoi(field);
    std::getline(row, field, ',');
    p.frequency = std::stod(field);
    std::getline(row, field, ',');
    p.magnitude = std::stod(field);
    out.push_back(p);
  }
  return out;
}

// Columns of a reference CSV (after its '#' lines) and a header value
// "NAME = VALUE" from its comments.
struct Table {
  std::map<std::string, std::vector<double>> columns;
  std::string comments;
};

Table read_table(const std::string& path) {
  std::ifstream in(path);
  Table t;
  std::string line;
  std::vector<std::string> names;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    if (line[0] == '#') {
      t.comments += line + "\n";
      continue;
    }
    std::stringstream row(line);
    std::string field;
    if (names.empty()) {
      while (std::getline(row, field, ',')) names.push_back(field);
      continue;
    }
    for (std::size_t k = 0; std::getline(row, field, ','); ++k) t.columns[names.at(k)].push_back(std::stod(field));
  }
  return t;
}

double header_value(const Table& t, const std::string& name) {
  const auto at = t.comments.find(name + " = ");
  if (at == std::string::npos) return std::nan("");
  return std::stod(t.comments.substr(at + name.size() + 3));
}

// The reference's transient cases. "reservoir": node 0 held at 100 bar, the
// valve closing linearly from 2 ms to 3 ms; "source": a constant 1.35e-3
// m^3/s into node 0, the valve closing to half from 2 ms to 3 ms. Returns
// the pump-end and valve-end pressures at the reference's sample times.
struct Ends {
  std::vector<double> pump, valve;
};

Ends transient_run(const LineRig& rig, double valve_area, const std::vector<double>& times, bool source) {
  using Vec = std::vector<double>;
  const double p0 = 100e5, q_source = 1.35e-3, tau_end = source ? 0.5 : 0.0;
  auto tau = [=](double t) { return t < 2e-3 ? 1.0 : t < 3e-3 ? 1.0 - (1.0 - tau_end) * (t - 2e-3) / 1e-3 : tau_end; };
  auto valve_flow = [&](double p, double t) {
    return valve_area * tau(t) * (p >= 0 ? 1.0 : -1.0) * std::sqrt(2.0 * std::abs(p) / density);
  };
  // Steady start: the reservoir's flow is where the valve passes what the
  // line's laminar drop leaves (bisection); the source's pump-end pressure
  // is the valve's pressure for its flow plus that drop.
  const double drop_per_flow = rig.line.friction_gain * rig.line.reaches;
  double q = q_source, pump_end = 0.0;
  if (source) {
    pump_end = density / 2.0 * std::pow(q / valve_area, 2) + drop_per_flow * q;
  } else {
    double lo = 0.0, hi = 1e-2;
    for (int i = 0; i < 200; ++i) {
      const double mid = 0.5 * (lo + hi);
      (valve_flow(p0 - drop_per_flow * mid, 0.0) > mid ? lo : hi) = mid;
    }
    q = 0.5 * (lo + hi);
    pump_end = p0;
  }
  State x0 = State::Zero(rig.size());
  x0[0] = pump_end;
  rig.line.set_steady(x0, pump_end, q);
  Vec x(x0.data(), x0.data() + x0.size());
  const int valve_node = rig.line.first_node + rig.line.reaches - 1;
  auto system = [&](const Vec& y, Vec& dy, double t) {
    const State st = Eigen::Map<const Eigen::VectorXd>(y.data(), static_cast<Eigen::Index>(y.size()));
    const State d = rig.rates(st, q_source, valve_flow(st[valve_node], t), !source);
    dy.assign(d.data(), d.data() + d.size());
  };
  namespace ode = boost::numeric::odeint;
  Ends out;
  double t = 0.0;
  auto stepper = ode::make_controlled(1e-10, 1e-8, ode::runge_kutta_dopri5<Vec>());
  for (double t_next : times) {
    if (t_next > t) ode::integrate_adaptive(stepper, system, x, t, t_next, 1e-6);
    t = t_next;
    out.pump.push_back(x[0]);
    out.valve.push_back(x[valve_node]);
  }
  return out;
}

struct Agreement {
  double rms = 0.0, worst = 0.0;
};

Agreement agreement(const std::vector<double>& ours, const std::vector<double>& theirs) {
  Agreement a;
  double sum = 0.0;
  for (std::size_t i = 0; i < ours.size(); ++i) {
    a.worst = std::max(a.worst, std::abs(ours[i] - theirs[i]));
    sum += (ours[i] - theirs[i]) * (ours[i] - theirs[i]);
  }
  a.rms = std::sqrt(sum / static_cast<double>(ours.size()));
  return a;
}

}  // namespace

// Korteweg (1878): a thin-walled tube of bore D, wall e and modulus E slows
// the waves to c = sqrt(K / rho / (1 + K D / (E e))). For oil of 1.6 GPa and
// 870 kg/m^3 in a 20 x 2 mm steel tube (206 GPa): 1356.1 m/s rigid,
// 1306.3 m/s in the tube (the formula evaluated with /usr/bin/python3).
TEST(LineGeometry, KortewegWaveSpeedAndVolumeFromTheGeometry) {
  ModelParameters p = default_parameters();
  p.line_length = 3.2;
  p.line_bore = 0.02;
  const LineElement steel(p, 870.0, 46e-6);
  EXPECT_NEAR(steel.volume(), 1.00531e-3, 1e-8);  // pi/4 (0.02 m)^2 3.2 m
  EXPECT_NEAR(steel.wave_speed(1.6e9, 870.0), 1306.34, 0.01);
  p.line_wall = static_cast<double>(LineWall::rigid);
  EXPECT_NEAR(LineElement(p, 870.0, 46e-6).wave_speed(1.6e9, 870.0), 1356.13, 0.01);
  // The lumped model takes the geometry's volume with the pump's outlet
  // volume, and the wall's compliance over the line's part of it.
  p.line_wall = static_cast<double>(LineWall::steel);
  const Derived d(p);
  EXPECT_NEAR(d.line_volume, steel.volume() + p.pump_outlet_volume, 1e-15);
  EXPECT_NEAR(d.line_wall, 0.02 / (206e9 * 2e-3), 1e-20);
  EXPECT_NEAR(d.pump_end_wall, d.line_wall * steel.volume() / d.line_volume, 1e-20);
}

TEST(LineGeometry, RefusesAVolumeAndAGeometryTogetherAndHalfAGeometry) {
  const std::string base = "[line]\nlength = \"3.2 m\"\nbore = \"20 mm\"\n";
  try {
    parse_scenario(base + "volume = \"1 L\"\n", "both.toml");
    FAIL() << "no error";
  } catch (const ScenarioError& e) {
    EXPECT_NE(std::string(e.what()).find("both.toml:4: line.volume and line.length and line.bore are all given"),
              std::string::npos)
        << e.what();
  }
  try {
    parse_scenario("[line]\nlength = \"3.2 m\"\n", "half.toml");
    FAIL() << "no error";
  } catch (const ScenarioError& e) {
    EXPECT_NE(std::string(e.what()).find("line.length is given without line.bore"), std::string::npos) << e.what();
  }
  try {
    parse_scenario("[line]\nmodel = \"waves\"\n", "model.toml");
    FAIL() << "no error";
  } catch (const ScenarioError& e) {
    EXPECT_NE(std::string(e.what()).find("expected \"lumped\" or \"distributed\""), std::string::npos) << e.what();
  }
  try {
    parse_scenario("[line]\nmodel = \"distributed\"\n", "nogeometry.toml");
    FAIL() << "no error";
  } catch (const ScenarioError& e) {
    EXPECT_NE(std::string(e.what()).find("needs the line's geometry"), std::string::npos) << e.what();
  }
  const Scenario s = parse_scenario(base + "model = \"distributed\"\nwall = \"hose\"\n", "ok.toml");
  EXPECT_EQ(s.parameters.line_wall, static_cast<double>(LineWall::hose));
  EXPECT_EQ(s.parameters.line_model, static_cast<double>(LineModel::distributed));
}

// Resonance peaks of the segmented line against Brown's exact laminar line
// (brown-peaks.csv): the half-wave modes with the valve end blocked and the
// quarter-wave modes with it at constant pressure. The error grows with the
// mode (the segmented line's dispersion) and falls with more reaches.
TEST(DistributedLine, ResonancesAgainstTheExactLaminarLine) {
  const std::vector<Peak> reference = reference_peaks();
  ASSERT_EQ(reference.size(), 10u);
  for (int reaches : {8, 15}) {
    const LineRig rig(reaches, viscosity);
    const std::vector<double> blocked = peaks_of([&](double f) { return blocked_magnitude(rig, f); }, 20.0, 1500.0, 5);
    const std::vector<double> open = peaks_of([&](double f) { return open_magnitude(rig, f); }, 20.0, 1500.0, 5);
    ASSERT_EQ(blocked.size(), 5u);
    ASSERT_EQ(open.size(), 5u);
    double worst_first = 0.0, worst = 0.0, worst_height = 0.0;
    for (const Peak& r : reference) {
      const double f = (r.end == "blocked" ? blocked : open)[r.mode - 1];
      const double height = (r.end == "blocked" ? blocked_magnitude(rig, f) : open_magnitude(rig, f)) / r.magnitude - 1;
      const double error = f / r.frequency - 1.0;
      std::printf("%2d reaches, %-7s mode %d: %8.2f Hz against %8.2f Hz (%+.2f %%), peak |Z| %+.1f %%\n", reaches,
                  r.end.c_str(), r.mode, f, r.frequency, 100 * error, 100 * height);
      worst = std::max(worst, std::abs(error));
      if (r.mode <= 2) {
        worst_first = std::max(worst_first, std::abs(error));
        worst_height = std::max(worst_height, std::abs(height));
      }
    }
    std::printf("%2d reaches: worst frequency error %.2f %% over five modes, %.2f %% over the first two "
                "(their peak heights within %.0f %%)\n",
                reaches, 100 * worst, 100 * worst_first, 100 * worst_height);
    // Dispersion of N reaches, (2N/pi) sin(k pi/(2N)) - 1 at the 5th
    // half-wave mode: -15 % (N = 8) and -4.5 % (N = 15); friction shifts
    // each mode by 0.6-1.9 % (the reference's peaks).
    EXPECT_LT(worst, reaches == 8 ? 0.17 : 0.06);
    EXPECT_LT(worst_first, reaches == 8 ? 0.03 : 0.012);
    // The heights of the first two peaks measure the damping: within 3.1 %
    // (8) and 2.3 % (15) with the five fitted exponentials; Trikha's three
    // left them 25 % too high.
    EXPECT_LT(worst_height, 0.05);
  }
}

// A valve closing in 1 ms (< 2L/c = 4.9 ms) at the end of a line fed from a
// reservoir: the surge against Joukowsky's rho c dv, and the valve-end
// pressure against the method of characteristics with Zielke's friction.
TEST(DistributedLine, SurgeAgainstJoukowskyAndTheMethodOfCharacteristics) {
  const Table lossless = read_table(line_data + "moc-reservoir-lossless.csv");
  const Table zielke = read_table(line_data + "moc-reservoir.csv");
  const double area = 0.25 * pi * bore * bore;
  for (int reaches : {8, 15}) {
    // Lossless: nu = 0 removes the friction.
    const LineRig ideal(reaches, 0.0);
    const std::vector<double>& t = lossless.columns.at("t_s");
    const std::vector<double> p = transient_run(ideal, header_value(lossless, "CdA"), t, false).valve;
    const double q0 = 1.35e-3, steady = p.front();
    double highest = steady;
    for (std::size_t i = 0; i < t.size() && t[i] < 3e-3 + 2 * length / wave_speed; ++i) highest = std::max(highest, p[i]);
    const double joukowsky = density * wave_speed * q0 / area;
    std::printf("%2d reaches, lossless: surge %.2f bar against Joukowsky's %.2f bar (%+.1f %%)\n", reaches,
                (highest - steady) / 1e5, joukowsky / 1e5, 100 * ((highest - steady) / joukowsky - 1.0));
    EXPECT_LT(std::abs((highest - steady) / joukowsky - 1.0), reaches == 8 ? 0.1 : 0.06);  // achieved: 7.3 %, 4.0 % (the segmented line rings above the sharp front)

    const LineRig real(reaches, viscosity);
    const std::vector<double>& tz = zielke.columns.at("t_s");
    const std::vector<double> pz = transient_run(real, header_value(zielke, "CdA"), tz, false).valve;
    const std::vector<double>& moc = zielke.columns.at("p_valve_Pa");
    double worst = 0.0, sum = 0.0, peak_ours = 0.0, peak_moc = 0.0;
    for (std::size_t i = 0; i < tz.size(); ++i) {
      worst = std::max(worst, std::abs(pz[i] - moc[i]));
      sum += (pz[i] - moc[i]) * (pz[i] - moc[i]);
      peak_ours = std::max(peak_ours, pz[i]);
      peak_moc = std::max(peak_moc, moc[i]);
    }
    const double rms = std::sqrt(sum / tz.size());
    std::printf("%2d reaches, Zielke friction: valve end against the MOC: peak %.2f bar against %.2f bar, rms %.2f bar, "
                "worst %.2f bar over %.0f ms\n",
                reaches, peak_ours / 1e5, peak_moc / 1e5, rms / 1e5, worst / 1e5, 1e3 * tz.back());
    EXPECT_LT(rms, reaches == 8 ? 8e5 : 4e5);  // achieved: 6.9 bar, 3.0 bar
  }
}

// The valve-slam pump on a 3.2 m, 20 mm steel line at no flow: the
// linearised loop's least damped mode lies among the line's upper modes.
// With 8 reaches that is above the band they resolve, and the report says
// so; with 15 the band reaches higher.
TEST(DistributedLine, StabilityReportSaysWhenAModeLiesAboveTheResolvedBand) {
  Scenario s = load_scenario(std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/valve-slam.toml");
  ModelParameters& p = s.parameters;
  p.line_length = 3.2;
  p.line_bore = 0.02;
  p.line_model = static_cast<double>(LineModel::distributed);
  p.opening = 0.0;
  const LineElement line(p, p.density, 1e-6 * p.viscosity_grade);
  const double c = line.wave_speed(p.bulk_modulus, p.density);
  EXPECT_NEAR(line.resolved_frequency(c), 0.5513 * 16 / pi * c / 6.4, 1e-9);
  const StabilityReport report = analyse_stability(p, s.settings);
  ASSERT_TRUE(report.dominant);
  std::string text;
  for (const std::string& line_of_text : report.explanation) text += line_of_text + "\n";
  std::printf("8 reaches: least damped mode %.0f Hz, damping %.4f; resolved band %.0f Hz\n",
              report.dominant->damped_frequency_hz, report.dominant->damping_ratio, line.resolved_frequency(c));
  EXPECT_GT(report.dominant->damped_frequency_hz, line.resolved_frequency(c));
  EXPECT_NE(text.find("lies above the"), std::string::npos) << text;
  EXPECT_NE(text.find("Raise line.reaches"), std::string::npos) << text;
}

// A flow source (the pump at full stroke) into the line, the valve closing
// to half in 1 ms: both ends against the method of characteristics.
TEST(DistributedLine, FlowSourceAndHalfClosureAgainstTheMethodOfCharacteristics) {
  const Table moc = read_table(line_data + "moc-source.csv");
  const std::vector<double>& t = moc.columns.at("t_s");
  for (int reaches : {8, 15}) {
    const LineRig rig(reaches, viscosity);
    const Ends ends = transient_run(rig, header_value(moc, "CdA"), t, true);
    const Agreement pump = agreement(ends.pump, moc.columns.at("p_pump_Pa"));
    const Agreement valve = agreement(ends.valve, moc.columns.at("p_valve_Pa"));
    const double start = moc.columns.at("p_pump_Pa").front();
    std::printf("%2d reaches, source case over %.0f ms: pump end rms %.2f bar (worst %.2f), valve end rms %.2f bar "
                "(worst %.2f); start %.4f bar against %.4f bar\n",
                reaches, 1e3 * t.back(), pump.rms / 1e5, pump.worst / 1e5, valve.rms / 1e5, valve.worst / 1e5,
                ends.pump.front() / 1e5, start / 1e5);
    EXPECT_NEAR(ends.pump.front(), start, 1.0);  // the same steady state: Hagen-Poiseuille and the orifice law
    // Achieved: 0.95 and 0.94 bar (8 reaches), 0.42 and 0.39 bar (15).
    EXPECT_LT(pump.rms, reaches == 8 ? 1.5e5 : 0.7e5);
    EXPECT_LT(valve.rms, reaches == 8 ? 1.5e5 : 0.7e5);
  }
}

// The whole input impedance P0/Q0 (valve end blocked) against Brown's, up
// to the second half-wave mode: complex relative error, at each frequency.
TEST(DistributedLine, InputImpedanceCurveAgainstTheExactLaminarLine) {
  const Table brown = read_table(line_data + "brown-impedance.csv");
  const std::vector<double>& f = brown.columns.at("f_Hz");
  for (int reaches : {8, 15}) {
    const LineRig rig(reaches, viscosity);
    std::vector<double> errors;
    for (std::size_t i = 0; i < f.size(); ++i) {
      if (f[i] > 450.0) break;
      const std::complex<double> exact(brown.columns.at("Z11_re")[i], brown.columns.at("Z11_im")[i]);
      errors.push_back(std::abs(impedance(rig, f[i])(0, 0) - exact) / std::abs(exact));
    }
    std::vector<double> sorted = errors;
    std::sort(sorted.begin(), sorted.end());
    const double median = sorted[sorted.size() / 2], p90 = sorted[sorted.size() * 9 / 10];
    std::printf("%2d reaches, |Z11| 5-450 Hz (%zu frequencies): median error %.2f %%, 90th percentile %.2f %%, "
                "worst %.1f %% (at a resonance, where a small shift is a large error)\n",
                reaches, errors.size(), 100 * median, 100 * p90, 100 * sorted.back());
    // Achieved: median 0.14 % and 0.11 %; 90th percentile 31 % and 7.5 %
    // (near the two resonances, the frequency shifts above).
    EXPECT_LT(median, 0.005);
    EXPECT_LT(p90, reaches == 8 ? 0.45 : 0.11);
  }
}

// The line's description and any value that adds or removes a part of the
// model cannot change during a run: an event on them is refused by name.
TEST(LineGeometry, EventsCannotReshapeTheLineOrAddAPart) {
  auto message = [](const std::string& text) {
    try {
      parse_scenario(text, "events.toml");
    } catch (const ScenarioError& e) {
      return std::string(e.what());
    }
    return std::string();
  };
  const std::string line = "[line]\nlength = \"3.2 m\"\nbore = \"20 mm\"\nmodel = \"distributed\"\n";
  const std::string length_event = message(line + "[[events]]\nat = \"0.1 s\"\nset = \"line.length\"\nto = \"4 m\"\n");
  EXPECT_NE(length_event.find("describes the line, which is fixed during a run"), std::string::npos) << length_event;
  EXPECT_NE(length_event.find("events.toml:"), std::string::npos) << length_event;
  const std::string orifice_event =
      message("[compensator]\ncontrol_orifice = \"none\"\n[[events]]\nat = \"0.1 s\"\nset = "
              "\"compensator.control_orifice\"\nto = \"2 mm\"\n");
  EXPECT_NE(orifice_event.find("adds or removes a part of the model"), std::string::npos) << orifice_event;
  // An event on a value that keeps the parts still loads.
  EXPECT_EQ(message(line + "[[events]]\nat = \"0.1 s\"\nset = \"load.opening\"\nto = 0.0\n"), "");
}

// The Jacobian the stiff solver and the stability analysis use is automatic
// differentiation of the model; with the line's states it must still equal
// central differences of the right-hand side in the line's rows and
// columns (a sum started from an
// automatic-differentiation zero once dropped the friction's derivatives).
TEST(DistributedLine, JacobianAgreesWithCentralDifferences) {
  Scenario s = load_scenario(std::string(SWASHTUNE_SOURCE_DIR) + "/scenarios/valve-slam.toml");
  ModelParameters& p = s.parameters;
  p.line_length = 3.2;
  p.line_bore = 0.02;
  p.line_model = static_cast<double>(LineModel::distributed);
  p.line_reaches = 4;
  p.opening = 0.0;  // regulating: every pressure well away from the air's knee at atmospheric
  const OperatingPoint op = steady_state(p, s.settings);
  const Derived d(p);
  State x = op.condition.x;
  const StopModes free_modes{};
  const Jacobian jac = jacobian(p, d, free_modes, x);
  const State scale = state_scale(p);
  double worst = 0.0;
  std::pair<int, int> worst_at{-1, -1};
  for (int j = 0; j < x.size(); ++j) {
    const double h = 1e-8 * scale[j];  // small: the friction tanh is steep at rest
    State up = x, down = x;
    up[j] += h;
    down[j] -= h;
    const State column = (derivatives<double>(p, d, free_modes, up) - derivatives<double>(p, d, free_modes, down)) / (2 * h);
    for (int i = 0; i < x.size(); ++i) {
      // Every row but the released air's, whose switches between release
      // and absorption are too sharp for differences.
      if (i == d.layout.line_air || i == d.layout.chamber_air || i == d.layout.port_air) continue;
      const double size = std::abs(column[i]) + std::abs(jac(i, j));
      // Relative to the largest entry of the row, in scaled units.
      double row = 0.0;
      for (int k = 0; k < x.size(); ++k) row = std::max(row, std::abs(jac(i, k)) * scale[k]);
      if (row > 0.0 && size > 0.0) {
        const double e = std::abs(column[i] - jac(i, j)) * scale[j] / row;
        if (e > worst) {
          worst = e;
          worst_at = {i, j};
        }
      }
    }
  }
  std::printf("%d states: worst difference between the automatic and the central-difference Jacobian %.2e "
              "(of each row's largest scaled entry), at d(rate %d)/d(state %d)\n",
              static_cast<int>(x.size()), worst, worst_at.first, worst_at.second);
  EXPECT_LT(worst, 3e-7);  // achieved: 2.9e-8
}
