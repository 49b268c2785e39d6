// Analysis of a recorded pressure (see field_analysis.hpp).
//
// Three passes over the rows, each through the streaming reader, so that a
// file of any length is analysed in memory bounded by one piece:
//  1. levels: the analysed part's samples, mean, extremes, mean speed, and
//     the measurement noise (pseudo-residuals of a local cubic, Gasser et
//     al. 1986, on a reservoir sample, Vitter 1985, spread by the MAD);
//  2. events: the mean over the hold window after each instant minus the
//     mean over the hold window before it (a two-window step detector); a
//     peak of its size above the threshold is an event, which starts where
//     the pressure last sat within its old level's band;
//  3. pieces: the stretch before the first event and each event's window (to
//     the next event), at most block_samples each: the ripple is removed,
//     the event figures are taken (metrics' pressure_figures on an EventWindow, the v2
//     definitions) and the oscillation analysed, from the event's peak on.
#include "swashtune/field_analysis.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <complex>
#include <functional>
#include <limits>
#include <numeric>
#include <random>
#include <sstream>
#include <unsupported/Eigen/FFT>

#include "swashtune/results_io.hpp"

namespace swashtune {

const char* to_string(FieldVerdict v) {
  switch (v) {
    case FieldVerdict::settled:
      return "settled";
    case FieldVerdict::settling:
      return "settling";
    case FieldVerdict::decaying_slowly:
      return "decaying slowly";
    case FieldVerdict::hunting:
      return "hunting";
    case FieldVerdict::possibly_ripple:
      return "possibly ripple";
    case FieldVerdict::too_short:
      return "too short to tell";
  }
  return "?";
}

double default_event_threshold(double highest_pressure, double noise) {
  return std::max({0.05 * std::abs(highest_pressure), 10.0 * noise, 1e4});
}

namespace {

constexpr double two_pi = 6.28318530717958647692;
constexpr double mad_to_sigma = 1.4826;  // Rousseeuw & Croux 1993
constexpr std::size_t kReservoir = std::size_t{1} << 16;
constexpr std::size_t kShortest = 16;  // samples a stretch needs to be analysed
// Ripple: a harmonic within this fraction of k f counts as the ripple.
constexpr double kHarmonicTolerance = 0.03;
// Ripple: fitted in pieces of this many periods.
constexpr double kRipplePeriodsPerPiece = 8.0;
// A piece whose fit leaves more than this many times the median residual
// holds a transient; it takes its neighbours' ripple.
constexpr double kTransientResidual = 3.0;

using Replay = std::function<FieldReadReport(const FieldRowSink&)>;

double median_of(std::vector<double> v) {
  if (v.empty()) return 0.0;
  const auto middle = v.begin() + static_cast<std::ptrdiff_t>(v.size() / 2);
  std::nth_element(v.begin(), middle, v.end());
  if (v.size() % 2 == 1) return *middle;
  return 0.5 * (*middle + *std::max_element(v.begin(), middle));
}

std::string fixed(double v, int decimals) {
  std::ostringstream o;
  o.setf(std::ios::fixed);
  o.precision(decimals);
  o << v;
  return o.str();
}

std::string seconds_text(double s) {
  std::ostringstream o;
  o.precision(6);
  o << s;
  return o.str() + " s";
}

// ---------------------------------------------------------------- pass 1

// The middle sample of five less the cubic through the other four, scaled
// so that white noise of deviation sigma gives residuals of deviation sigma
// (Gasser, Sroka & Jennen-Steinmetz 1986).
double pseudo_residual(const double t[5], const double y[5]) {
  const int nodes[4] = {0, 1, 3, 4};
  double prediction = 0.0, weight_squares = 0.0;
  for (int a : nodes) {
    double w = 1.0;
    for (int b : nodes)
      if (b != a) w *= (t[2] - t[b]) / (t[a] - t[b]);
    prediction += w * y[a];
    weight_squares += w * w;
  }
  return (y[2] - prediction) / std::sqrt(1.0 + weight_squares);
}

double spread_by_mad(const std::vector<double>& residuals) {
  if (residuals.size() < 5) return 0.0;
  const double centre = median_of(residuals);
  std::vector<double> deviation(residuals.size());
  for (std::size_t i = 0; i < residuals.size(); ++i) deviation[i] = std::abs(residuals[i] - centre);
  return mad_to_sigma * median_of(deviation);
}

class Levels {
 public:
  explicit Levels(const FieldAnalysisOptions& o) : options_(o), random_(1) {}

  bool operator()(const FieldRow& r) {
    if (options_.from && r.time < *options_.from) return true;
    if (options_.to && r.time > *options_.to) return false;
    const double p = r[FieldChannel::pressure];
    if (samples == 0) first = r.time;
    last = r.time;
    ++samples;
    sum += p;
    minimum = std::min(minimum, p);
    maximum = std::max(maximum, p);
    const double n = r[FieldChannel::speed];
    if (!std::isnan(n)) {
      speed_sum += n;
      ++speeds;
    }
    // Pseudo-residual of the middle of the last five samples.
    window_t_[filled_ % 5] = r.time;
    window_y_[filled_ % 5] = p;
    if (++filled_ >= 5) {
      double t[5], y[5];
      for (int k = 0; k < 5; ++k) {
        t[k] = window_t_[(filled_ + static_cast<std::size_t>(k)) % 5];
        y[k] = window_y_[(filled_ + static_cast<std::size_t>(k)) % 5];
      }
      keep(pseudo_residual(t, y));
    }
    return true;
  }

  double noise() const { return spread_by_mad(reservoir_); }

  std::size_t samples = 0, speeds = 0;
  double first = 0.0, last = 0.0, sum = 0.0, speed_sum = 0.0;
  double minimum = std::numeric_limits<double>::infinity(), maximum = -std::numeric_limits<double>::infinity();

 private:
  // Vitter's algorithm R: every residual has the same chance to be kept.
  void keep(double residual) {
    if (reservoir_.size() < kReservoir) {
      reservoir_.push_back(residual);
    } else {
      const std::uint64_t j = std::uniform_int_distribution<std::uint64_t>(0, seen_)(random_);
      if (j < kReservoir) reservoir_[j] = residual;
    }
    ++seen_;
  }

  const FieldAnalysisOptions& options_;
  std::mt19937_64 random_;
  std::vector<double> reservoir_;
  std::uint64_t seen_ = 0;
  double window_t_[5] = {}, window_y_[5] = {};
  std::size_t filled_ = 0;
};

// ---------------------------------------------------------------- pass 2

struct Detected {
  double start = 0.0;     // s, where the pressure left its level
  double detected = 0.0;  // s, the largest step of the two-window means
  bool rise = true;
};

class EventDetector {
 public:
  EventDetector(const FieldAnalysisOptions& o, std::size_t hold_samples, double threshold)
      : options_(o), h_(hold_samples), threshold_(threshold), t_(2 * hold_samples), y_(2 * hold_samples) {}

  bool operator()(const FieldRow& r) {
    if (options_.from && r.time < *options_.from) return true;
    if (options_.to && r.time > *options_.to) return false;
    push(r.time, r[FieldChannel::pressure]);
    return true;
  }

  std::vector<Detected> finish() {
    if (active_) close();
    return std::move(events_);
  }

 private:
  // Logical index k (0 = oldest of the 2h held).
  std::size_t at(std::size_t k) const { return (head_ + k) % (2 * h_); }

  void push(double t, double y) {
    if (count_ < 2 * h_) {
      t_[count_] = t;
      y_[count_] = y;
      if (++count_ < 2 * h_) return;
      head_ = 0;
      recompute();
    } else {
      const std::size_t oldest = at(0), middle = at(h_);
      before_ += y_[middle] - y_[oldest];
      after_ += y - y_[middle];
      t_[oldest] = t;
      y_[oldest] = y;
      head_ = (head_ + 1) % (2 * h_);
      if (++since_recompute_ >= 65536) recompute();  // keep round-off from piling up
    }
    examine();
  }

  void recompute() {
    before_ = after_ = 0.0;
    for (std::size_t k = 0; k < h_; ++k) before_ += y_[at(k)];
    for (std::size_t k = h_; k < 2 * h_; ++k) after_ += y_[at(k)];
    since_recompute_ = 0;
  }

  void examine() {
    const double n = static_cast<double>(h_);
    const double step = (after_ - before_) / n;
    const double t_middle = t_[at(h_)];
    // After an event, wait until its transient has passed: the step measure
    // below half the threshold for a whole hold window (ringing and hunting
    // are not new events).
    if (settling_) {
      if (std::abs(step) >= 0.5 * threshold_) quiet_since_ = t_middle;
      if (t_middle - quiet_since_ < hold_time()) return;
      settling_ = false;
    }
    const bool rise = step > 0.0;
    if (!active_) {
      if (std::abs(step) <= threshold_) return;
      active_ = true;
      best_ = {};
      best_size_ = 0.0;
      best_.rise = rise;
    }
    if (rise != best_.rise || std::abs(step) < 0.5 * threshold_) {
      close();
      return;
    }
    if (std::abs(step) > best_size_) {
      best_size_ = std::abs(step);
      best_.detected = t_middle;
      best_.start = departure();
    }
  }

  // The last sample before the middle that sits within the band of the
  // level before (median of the before window, +-4 robust deviations or 5 %
  // of the threshold).
  double departure() const {
    std::vector<double> before(h_);
    for (std::size_t k = 0; k < h_; ++k) before[k] = y_[at(k)];
    const double level = median_of(before);
    for (double& v : before) v = std::abs(v - level);
    const double band = std::max(4.0 * mad_to_sigma * median_of(before), 0.05 * threshold_);
    for (std::size_t k = h_; k-- > 0;)
      if (std::abs(y_[at(k)] - level) <= band) return std::max(t_[at(k)], last_detected_);
    return std::max(t_[at(0)], last_detected_);
  }

  void close() {
    active_ = false;
    if (best_size_ > threshold_) {
      events_.push_back(best_);
      last_detected_ = best_.detected;
      settling_ = true;
      quiet_since_ = t_[at(h_)];
    }
  }

  double hold_time() const { return t_[at(2 * h_ - 1)] - t_[at(h_)]; }

  const FieldAnalysisOptions& options_;
  std::size_t h_;
  double threshold_;
  std::vector<double> t_, y_;
  std::size_t count_ = 0, head_ = 0, since_recompute_ = 0;
  double before_ = 0.0, after_ = 0.0;
  bool active_ = false;
  Detected best_;
  double best_size_ = 0.0;
  bool settling_ = false;
  double quiet_since_ = 0.0;
  double last_detected_ = -std::numeric_limits<double>::infinity();
  std::vector<Detected> events_;
};

}  // namespace

// ---------------------------------------------------------------- ripple

namespace {

// The average of y over [t - w/2, t + w/2] at every sample, for y linear
// between samples (the exact integral), shrunk at the ends to what exists.
std::vector<double> moving_average_over(const std::vector<double>& t, const std::vector<double>& y, double w) {
  const std::size_t n = t.size();
  std::vector<double> integral(n, 0.0);
  for (std::size_t i = 1; i < n; ++i) integral[i] = integral[i - 1] + 0.5 * (y[i] + y[i - 1]) * (t[i] - t[i - 1]);
  // Integral from t[0] to x, x inside [t[j], t[j+1]].
  auto integral_at = [&](double x, std::size_t& j) {
    while (j + 2 < n && t[j + 1] < x) ++j;
    const double dx = std::clamp(x - t[j], 0.0, t[j + 1] - t[j]);
    const double slope = (y[j + 1] - y[j]) / (t[j + 1] - t[j]);
    return integral[j] + dx * (y[j] + 0.5 * slope * dx);
  };
  std::vector<double> out(n);
  std::size_t lo = 0, hi = 0;
  for (std::size_t i = 0; i < n; ++i) {
    const double a = std::max(t[i] - 0.5 * w, t.front());
    const double b = std::min(t[i] + 0.5 * w, t.back());
    out[i] = b > a ? (integral_at(b, hi) - integral_at(a, lo)) / (b - a) : y[i];
  }
  return out;
}

// Frequency of the highest local maximum of the Hann-windowed periodogram in
// [f_lo, f_hi] (parabolic interpolation of the log power, J. O. Smith III),
// when it stands out: above 20 times the band's median power.
std::optional<double> spectral_peak(const std::vector<double>& y, double dt, double f_lo, double f_hi) {
  const std::size_t n = y.size();
  std::size_t nfft = 1;
  while (nfft < 2 * n) nfft *= 2;
  const double mean = std::accumulate(y.begin(), y.end(), 0.0) / static_cast<double>(n);
  std::vector<double> windowed(nfft, 0.0);
  for (std::size_t k = 0; k < n; ++k)
    windowed[k] = (y[k] - mean) * 0.5 * (1.0 - std::cos(two_pi * static_cast<double>(k) / static_cast<double>(n - 1)));
  Eigen::FFT<double> fft;
  std::vector<std::complex<double>> spectrum;
  fft.fwd(spectrum, windowed);
  const double df = 1.0 / (static_cast<double>(nfft) * dt);
  const auto lo = static_cast<std::size_t>(std::max(1.0, std::floor(f_lo / df)));
  const auto hi = std::min(static_cast<std::size_t>(std::ceil(f_hi / df)), nfft / 2 - 1);
  if (hi < lo + 2) return std::nullopt;
  std::vector<double> band;
  std::size_t peak = 0;
  for (std::size_t k = lo; k <= hi; ++k) {
    band.push_back(std::norm(spectrum[k]));
    if (k > lo && k < hi && std::norm(spectrum[k]) >= std::norm(spectrum[k - 1]) &&
        std::norm(spectrum[k]) >= std::norm(spectrum[k + 1]) &&
        (peak == 0 || std::norm(spectrum[k]) > std::norm(spectrum[peak])))
      peak = k;
  }
  if (peak == 0 || !(std::norm(spectrum[peak]) > 20.0 * median_of(band))) return std::nullopt;
  const double a = std::log(std::norm(spectrum[peak - 1]));
  const double b = std::log(std::norm(spectrum[peak]));
  const double c = std::log(std::norm(spectrum[peak + 1]));
  double offset = 0.0;
  if (std::isfinite(a) && std::isfinite(c) && a - 2.0 * b + c < 0.0) offset = 0.5 * (a - c) / (a - 2.0 * b + c);
  return (static_cast<double>(peak) + offset) * df;
}

}  // namespace

RippleFit remove_ripple(const std::vector<double>& t, std::vector<double>& y, double f_guess, int harmonics,
                        double search) {
  RippleFit fit;
  const std::size_t n = t.size();
  fit.frequency_hz = f_guess;
  if (n < 64 || !(f_guess > 0.0) || harmonics < 1) return fit;
  const double dt = (t.back() - t.front()) / static_cast<double>(n - 1);
  const double nyquist = 0.5 / dt;
  int k_max = std::min(harmonics, static_cast<int>(std::floor(0.9 * nyquist / (f_guess * (1.0 + search)))));
  if (k_max < 1) return fit;

  // The frequency: the fundamental's peak near the guess, else the strongest
  // harmonic's, divided by its order.
  for (int k = 1; k <= k_max && !fit.found; ++k) {
    if (const std::optional<double> f =
            spectral_peak(y, dt, k * f_guess * (1.0 - search), k * f_guess * (1.0 + search))) {
      fit.frequency_hz = *f / k;
      fit.found = true;
    }
  }
  const double f = fit.frequency_hz;
  k_max = std::min(harmonics, static_cast<int>(std::floor(0.9 * nyquist / f)));
  if (k_max < 1) return fit;
  const double period = 1.0 / f;
  const std::vector<double> slow = moving_average_over(t, y, period);

  const auto per_piece = static_cast<std::size_t>(std::round(kRipplePeriodsPerPiece * period / dt));
  const std::size_t unknowns = 2 + 4 * static_cast<std::size_t>(k_max);
  const std::size_t length = std::max(per_piece, 3 * unknowns);
  if (n < length) return fit;
  const std::size_t pieces = n / length;

  // Each piece is fitted in its own time, delta = t - t_begin, so that the
  // pieces of an evenly sampled stretch share one basis and one QR
  // factorisation; the harmonics' phasors are carried to absolute time to
  // be passed between pieces.
  struct Piece {
    std::size_t begin, end;
    Eigen::VectorXd c;  // coefficients in the piece's own time
    double residual = 0.0;
    bool good = true;
  };
  const auto fill_basis = [&](std::size_t begin, std::size_t end, Eigen::MatrixXd& basis) {
    const auto m = static_cast<Eigen::Index>(end - begin);
    const double half = std::max(0.5 * (t[end - 1] - t[begin]), 1e-300);
    basis.resize(m, static_cast<Eigen::Index>(unknowns));
    for (Eigen::Index i = 0; i < m; ++i) {
      const double delta = t[begin + static_cast<std::size_t>(i)] - t[begin];
      const double tau = delta / half - 1.0;
      basis(i, 0) = 1.0;
      basis(i, 1) = tau;
      const std::complex<double> turn = std::polar(1.0, two_pi * f * delta);
      std::complex<double> z = turn;
      for (int k = 0; k < k_max; ++k, z *= turn) {
        basis(i, 2 + 4 * k) = z.real();
        basis(i, 3 + 4 * k) = z.imag();
        basis(i, 4 + 4 * k) = tau * z.real();
        basis(i, 5 + 4 * k) = tau * z.imag();
      }
    }
  };
  // Evenly sampled: every sample where the first sample and dt put it.
  const auto even = [&](std::size_t begin, std::size_t end) {
    for (std::size_t s = begin; s < end; ++s)
      if (std::abs(t[s] - t[begin] - static_cast<double>(s - begin) * dt) > 1e-3 * dt) return false;
    return true;
  };
  std::vector<Piece> all;
  Eigen::MatrixXd basis, shared_basis;
  Eigen::ColPivHouseholderQR<Eigen::MatrixXd> shared;
  std::size_t shared_length = 0;
  Eigen::VectorXd target;
  for (std::size_t j = 0; j < pieces; ++j) {
    const std::size_t begin = j * length;
    const std::size_t end = j + 1 == pieces ? n : begin + length;
    const auto m = static_cast<Eigen::Index>(end - begin);
    target.resize(m);
    for (Eigen::Index i = 0; i < m; ++i) {
      const std::size_t s = begin + static_cast<std::size_t>(i);
      target[i] = y[s] - slow[s];
    }
    Piece p{begin, end, {}};
    const Eigen::MatrixXd* used = &basis;
    if (end - begin == length && even(begin, end)) {
      if (shared_length != length) {
        fill_basis(begin, end, shared_basis);
        shared.compute(shared_basis);
        shared_length = length;
      }
      p.c = shared.solve(target);
      used = &shared_basis;
    } else {
      fill_basis(begin, end, basis);
      p.c = basis.colPivHouseholderQr().solve(target);
    }
    p.residual = std::sqrt((*used * p.c - target).squaredNorm() / static_cast<double>(m));
    all.push_back(std::move(p));
  }
  std::vector<double> residuals;
  for (const Piece& p : all) residuals.push_back(p.residual);
  const double typical = median_of(residuals);
  for (Piece& p : all) p.good = !(p.residual > kTransientResidual * typical);
  // A harmonic's phasor in absolute time (a cos + b sin of k w delta is
  // Re[(a - i b) exp(i k w delta)]), and back into another piece's own time.
  const auto absolute = [&](const Piece& p, int k) {
    return std::complex<double>(p.c[2 + 4 * k], -p.c[3 + 4 * k]) * std::polar(1.0, -two_pi * (k + 1) * f * t[p.begin]);
  };
  // A piece with a transient takes the mean ripple (no drift) of its nearest
  // good neighbours on either side.
  for (std::size_t j = 0; j < all.size(); ++j) {
    if (all[j].good) continue;
    ++fit.rejected;
    std::vector<const Piece*> neighbours;
    for (std::size_t l = j; l-- > 0;)
      if (all[l].good) {
        neighbours.push_back(&all[l]);
        break;
      }
    for (std::size_t l = j + 1; l < all.size(); ++l)
      if (all[l].good) {
        neighbours.push_back(&all[l]);
        break;
      }
    Eigen::VectorXd c = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(unknowns));
    for (int k = 0; k < k_max && !neighbours.empty(); ++k) {
      std::complex<double> phasor = 0.0;
      for (const Piece* q : neighbours) phasor += absolute(*q, k);
      phasor /= static_cast<double>(neighbours.size());
      const std::complex<double> local = phasor * std::polar(1.0, two_pi * (k + 1) * f * t[all[j].begin]);
      c[2 + 4 * k] = local.real();
      c[3 + 4 * k] = -local.imag();
    }
    all[j].c = c;
  }
  fit.pieces = all.size();
  // Subtract the harmonics (not the line) and measure them on the good pieces.
  std::vector<std::vector<double>> amplitudes(static_cast<std::size_t>(k_max));
  std::vector<double> peak_to_peaks;
  for (const Piece& p : all) {
    const double half = std::max(0.5 * (t[p.end - 1] - t[p.begin]), 1e-300);
    for (std::size_t s = p.begin; s < p.end; ++s) {
      const double delta = t[s] - t[p.begin];
      const double tau = delta / half - 1.0;
      const std::complex<double> turn = std::polar(1.0, two_pi * f * delta);
      std::complex<double> z = turn;
      double ripple = 0.0;
      for (int k = 0; k < k_max; ++k, z *= turn)
        ripple +=
            (p.c[2 + 4 * k] + tau * p.c[4 + 4 * k]) * z.real() + (p.c[3 + 4 * k] + tau * p.c[5 + 4 * k]) * z.imag();
      y[s] -= ripple;
    }
    if (!p.good) continue;
    for (int k = 0; k < k_max; ++k)
      amplitudes[static_cast<std::size_t>(k)].push_back(std::hypot(p.c[2 + 4 * k], p.c[3 + 4 * k]));
    double high = -std::numeric_limits<double>::infinity(), low = -high;
    for (int i = 0; i < 256; ++i) {
      const double phase = two_pi * i / 256.0;
      double v = 0.0;
      for (int k = 0; k < k_max; ++k)
        v += p.c[2 + 4 * k] * std::cos((k + 1) * phase) + p.c[3 + 4 * k] * std::sin((k + 1) * phase);
      high = std::max(high, v);
      low = std::min(low, v);
    }
    peak_to_peaks.push_back(high - low);
  }
  for (const auto& a : amplitudes) fit.amplitude.push_back(median_of(a));
  fit.peak_to_peak = median_of(peak_to_peaks);
  return fit;
}

namespace {

// ---------------------------------------------------------------- pass 3

// Centred moving average over `width` (odd) samples, shrunk at the ends.
std::vector<double> smooth(const std::vector<double>& y, std::size_t width) {
  if (width <= 1) return y;
  const std::size_t half = width / 2;
  std::vector<double> prefix(y.size() + 1, 0.0);
  for (std::size_t i = 0; i < y.size(); ++i) prefix[i + 1] = prefix[i] + y[i];
  std::vector<double> out(y.size());
  for (std::size_t i = 0; i < y.size(); ++i) {
    const std::size_t a = i >= half ? i - half : 0;
    const std::size_t b = std::min(y.size(), i + half + 1);
    out[i] = (prefix[b] - prefix[a]) / static_cast<double>(b - a);
  }
  return out;
}

struct Context {
  const FieldAnalysisOptions* options = nullptr;
  bool ripple_known = false;
  double ripple_hz = 0.0;  // the latest measured (or the nominal)
  int harmonics = 0;
  std::optional<double> speed;  // rev/min given (not recorded)
  double noise = 0.0;
  double dt = 0.0;
  std::size_t hold_samples = 1;
};

// What a stretch's oscillation means. Without the pump's piston count and
// speed a sustained oscillation above kPossiblyRippleAboveHz, or at a whole
// multiple of the shaft frequency, may be ripple, not hunting.
FieldVerdict verdict_of(const OscillationReport& o, const Context& c, double mean_speed, std::string& why) {
  switch (o.kind) {
    case OscillationKind::settled:
      return FieldVerdict::settled;
    case OscillationKind::settling:
      return FieldVerdict::settling;
    case OscillationKind::decaying_slowly:
      return FieldVerdict::decaying_slowly;
    case OscillationKind::sustained:
      break;
  }
  const double f = o.frequency_hz;
  const double nyquist = 0.5 / c.dt;
  if (c.ripple_known) {
    for (int k = 1; k <= c.harmonics; ++k) {
      const double h = k * c.ripple_hz;
      if (std::abs(f - h) < kHarmonicTolerance * h) {
        why =
            "what is left of the ripple at " + fixed(h, 1) + " Hz (" + std::to_string(k) + " x the pumping frequency)";
        return FieldVerdict::settled;
      }
      if (h > nyquist) {  // aliased: the logger cannot see it as what it is
        double alias = std::fmod(h, 2.0 * nyquist);
        if (alias > nyquist) alias = 2.0 * nyquist - alias;
        if (std::abs(f - alias) < kHarmonicTolerance * h) {
          why = fixed(f, 1) + " Hz is where the ripple at " + fixed(h, 1) + " Hz falls when sampled at " +
                fixed(2.0 * nyquist, 0) + " Hz (aliasing)";
          return FieldVerdict::possibly_ripple;
        }
      }
    }
    why = "sustained oscillation at " + fixed(f, 1) + " Hz, not at the pumping frequency " + fixed(c.ripple_hz, 1) +
          " Hz or its harmonics";
    return FieldVerdict::hunting;
  }
  const double speed = c.speed ? *c.speed : mean_speed;
  if (speed > 0.0) {
    const double shaft = speed / 60.0;
    const double ratio = f / shaft;
    const double k = std::round(ratio);
    if (k >= 3.0 && std::abs(ratio - k) < kHarmonicTolerance * k) {
      why = fixed(f, 1) + " Hz is " + fixed(k, 0) + " x the shaft frequency (" + fixed(speed, 0) +
            " rpm): the pumping frequency of a " + fixed(k, 0) +
            "-piston pump, or a harmonic; give --pistons to tell ripple from hunting";
      return FieldVerdict::possibly_ripple;
    }
  }
  if (f > kPossiblyRippleAboveHz) {
    why = fixed(f, 1) + " Hz is above " + fixed(kPossiblyRippleAboveHz, 0) +
          " Hz, where piston ripple lies; give --pistons and --speed (or --scenario) to tell ripple from hunting";
    return FieldVerdict::possibly_ripple;
  }
  why = "sustained oscillation at " + fixed(f, 1) + " Hz";
  return FieldVerdict::hunting;
}

// The pieces of pass 3: a boundary list splits the analysed part; each
// stretch between boundaries is cut into pieces of at most block_samples.
class Pieces {
 public:
  Pieces(FieldAnalysis& a, Context& c, const std::vector<Detected>& events) : a_(a), c_(c), events_(events) {
    boundaries_.push_back(a.from);
    for (const Detected& e : events) boundaries_.push_back(e.start);
  }

  bool operator()(const FieldRow& r) {
    const FieldAnalysisOptions& o = *c_.options;
    if (o.from && r.time < *o.from) return true;
    if (o.to && r.time > *o.to) return false;
    while (segment_ + 1 < boundaries_.size() && r.time >= boundaries_[segment_ + 1]) {
      flush(true);
      ++segment_;
      continuation_ = false;
    }
    if (t_.size() >= o.block_samples) {
      flush(false);
      continuation_ = true;
    }
    t_.push_back(r.time);
    p_.push_back(r[FieldChannel::pressure]);
    const double n = r[FieldChannel::speed];
    if (!std::isnan(n)) speed_.push_back(n);
    return true;
  }

  void finish() { flush(true); }

  std::vector<std::vector<double>> ripple_amplitudes;  // per piece
  std::vector<double> ripple_peak_to_peaks, ripple_frequencies, ripple_weights;

 private:
  void flush(bool segment_ends) {
    if (!t_.empty()) process(segment_ends);
    t_.clear();
    p_.clear();
    speed_.clear();
  }

  FieldStretch analyse(const std::vector<double>& t, const std::vector<double>& y, std::size_t first,
                       std::string what) {
    FieldStretch s;
    s.what = std::move(what);
    s.from = t[first];
    s.to = t.back();
    s.samples = t.size() - first;
    if (!speed_.empty()) s.mean_speed = std::accumulate(speed_.begin(), speed_.end(), 0.0) / speed_.size();
    if (s.samples < kShortest) {
      s.verdict = FieldVerdict::too_short;
      s.why = std::to_string(s.samples) + " samples; at least " + std::to_string(kShortest) + " are needed";
      return s;
    }
    s.oscillation = analyse_oscillation(t, y, t[first], t.back());
    s.verdict = verdict_of(s.oscillation, c_, s.mean_speed, s.why);
    return s;
  }

  void process(bool segment_ends) {
    (void)segment_ends;
    std::vector<double> clean = p_;
    if (c_.ripple_known) {
      const RippleFit fit = remove_ripple(t_, clean, c_.ripple_hz, c_.harmonics);
      if (fit.found) {
        c_.ripple_hz = fit.frequency_hz;
        ripple_frequencies.push_back(fit.frequency_hz);
        ripple_weights.push_back(static_cast<double>(t_.size()));
      }
      if (!fit.amplitude.empty() && fit.pieces > fit.rejected) {
        ripple_amplitudes.push_back(fit.amplitude);
        ripple_peak_to_peaks.push_back(fit.peak_to_peak);
      }
    }
    const bool event_window = segment_ > 0 && !continuation_;
    if (!event_window) {
      std::string what = segment_ == 0 ? (events_.empty() ? "the analysed part" : "before the first event")
                                       : "after event " + std::to_string(segment_);
      if (continuation_) what += " (continued)";
      a_.stretches.push_back(analyse(t_, clean, 0, what));
    } else {
      event(clean);
    }
    // The level just before the next event: the end of this piece.
    const std::size_t keep = std::min(c_.hold_samples, clean.size());
    tail_.assign(clean.end() - static_cast<std::ptrdiff_t>(keep), clean.end());
  }

  void event(const std::vector<double>& clean) {
    const Detected& d = events_[segment_ - 1];
    FieldEvent e;
    e.number = static_cast<int>(segment_);
    e.time = d.start;
    e.rise = d.rise;
    e.window_end = t_.back();
    e.window_capped = t_.size() >= c_.options->block_samples;
    const double dt = c_.dt > 0.0 ? c_.dt : (t_.back() - t_.front()) / std::max<std::size_t>(1, t_.size() - 1);
    const auto width = static_cast<std::size_t>(std::max(3.0, std::round(c_.options->smoothing / dt))) | 1u;
    const std::vector<double> figure = smooth(clean, width);
    const double initial =
        tail_.empty() ? figure.front() : std::accumulate(tail_.begin(), tail_.end(), 0.0) / tail_.size();
    const std::size_t last_part = std::max<std::size_t>(1, std::min(c_.hold_samples, figure.size() / 10));
    const double final_value =
        std::accumulate(figure.end() - static_cast<std::ptrdiff_t>(last_part), figure.end(), 0.0) / last_part;
    const auto extreme = static_cast<std::size_t>(
        (d.rise ? std::max_element(figure.begin(), figure.end()) : std::min_element(figure.begin(), figure.end())) -
        figure.begin());
    e.after = analyse(t_, clean, extreme,
                      "after event " + std::to_string(segment_) + ", from its " + (d.rise ? "peak" : "trough"));
    // The v2 figures by metrics' own code: an EventWindow fed with the
    // cleaned, averaged pressure; initial and final are averages; the
    // oscillation at the end is this stretch's, with the verdict's reading
    // (hunting and possibly ripple oscillate, what is left of a removed ripple
    // does not). The band is widened to three deviations of the noise left
    // after the averaging, and by half a possible ripple that was not removed.
    double scale = 0.0;
    for (double v : figure) scale = std::max(scale, std::abs(v));
    EventWindow window(d.start, t_.back(), std::max(scale, 1.0), 1.0, OscillationOptions{});
    for (std::size_t i = 0; i < figure.size(); ++i) window.observe(t_[i], figure[i], 0.0, false);
    window.finish();
    // What the window ends in: hunting (or a possible ripple) lasts to the
    // end; a decaying oscillation is judged by its last quarter, since the
    // stretch's report speaks of its largest cycles.
    OscillationReport at_end = e.after.oscillation;
    if (e.after.verdict == FieldVerdict::settling || e.after.verdict == FieldVerdict::decaying_slowly) {
      const std::size_t quarter = extreme + 3 * (t_.size() - extreme) / 4;
      at_end = OscillationReport{};
      if (t_.size() - quarter >= kShortest) {
        std::string why;
        const OscillationReport tail = analyse_oscillation(t_, clean, t_[quarter], t_.back());
        if (verdict_of(tail, c_, 0.0, why) != FieldVerdict::settled) at_end = tail;
      }
    } else if (e.after.verdict == FieldVerdict::settled || e.after.verdict == FieldVerdict::too_short) {
      at_end.kind = OscillationKind::settled;
    }
    double floor = 3.0 * c_.noise / std::sqrt(static_cast<double>(width));
    if (e.after.verdict == FieldVerdict::possibly_ripple) floor += 0.5 * e.after.oscillation.peak_to_peak;
    e.figures.time = d.start;
    e.figures.window_end = t_.back();
    e.figures.target = "recorded pressure";
    pressure_figures(window, initial, final_value, at_end, floor, e.figures);
    e.figures.oscillation = e.after.oscillation;
    e.figures.oscillation_from = e.after.from;
    e.figures.oscillation_to = e.after.to;
    e.lowest = window.lowest_pressure();
    e.highest_sample = *std::max_element(p_.begin(), p_.end());
    e.lowest_sample = *std::min_element(p_.begin(), p_.end());
    a_.events.push_back(e);
    a_.stretches.push_back(e.after);
  }

  FieldAnalysis& a_;
  Context& c_;
  const std::vector<Detected>& events_;
  std::vector<double> boundaries_;
  std::size_t segment_ = 0;
  bool continuation_ = false;
  std::vector<double> t_, p_, speed_, tail_;
};

FieldAnalysis analyse(const Replay& replay, const FieldAnalysisOptions& options) {
  if (options.from && options.to && !(*options.from < *options.to)) throw FieldTraceError("--from must be before --to");
  if (options.event_threshold && !(*options.event_threshold > 0.0))
    throw FieldTraceError("--event-threshold must be a positive pressure, e.g. --event-threshold 20bar");
  if (options.pistons &&
      !(*options.pistons >= 1.0 && *options.pistons <= 99.0 && *options.pistons == std::round(*options.pistons)))
    throw FieldTraceError("--pistons must be a whole number of pistons, e.g. --pistons 9");
  if (options.speed && !(*options.speed > 0.0))
    throw FieldTraceError("--speed must be a positive shaft speed, e.g. --speed 1800rpm");
  if (options.harmonics < 1 || options.harmonics > 50) throw FieldTraceError("harmonics must be from 1 to 50");
  if (options.block_samples < 1024) throw FieldTraceError("block_samples must be at least 1024");

  FieldAnalysis a;
  Levels levels(options);
  a.reading = replay(std::ref(levels));
  const FieldReadReport& r = a.reading;
  if (levels.samples < 2)
    throw FieldTraceError(r.source + ": " + std::to_string(levels.samples) +
                          " sample(s) between --from and --to; the recording runs from " + seconds_text(r.first_time) +
                          " to " + seconds_text(r.last_time));
  a.from = levels.first;
  a.to = levels.last;
  a.samples = levels.samples;
  a.mean = levels.sum / static_cast<double>(levels.samples);
  a.minimum = levels.minimum;
  a.maximum = levels.maximum;
  a.noise = levels.noise();
  if (levels.speeds > 0) a.mean_speed = levels.speed_sum / static_cast<double>(levels.speeds);
  if (options.from && *options.from < r.first_time)
    a.notes.push_back("--from is before the recording starts (" + seconds_text(r.first_time) + ")");
  if (options.to && *options.to > r.last_time)
    a.notes.push_back("--to is after the recording ends (" + seconds_text(r.last_time) + ")");
  for (const FieldGap& g : r.gap_list)
    if (g.to >= a.from && g.from <= a.to) ++a.gaps_in_part;
  if (r.gaps > r.gap_list.size()) a.gaps_in_part += r.gaps - r.gap_list.size();  // not listed: counted as inside
  if (a.gaps_in_part > 0)
    a.notes.push_back(std::to_string(a.gaps_in_part) + " gap(s) in the analysed part (the largest " +
                      fixed(1e3 * (r.largest_gap.to - r.largest_gap.from), 3) + " ms, before line " +
                      std::to_string(r.largest_gap.line) + "); the analysis interpolates across them");

  Context c;
  c.options = &options;
  c.noise = a.noise;
  c.dt = r.nominal_interval > 0.0 ? r.nominal_interval : (a.to - a.from) / static_cast<double>(a.samples - 1);
  c.hold_samples = std::max<std::size_t>(5, static_cast<std::size_t>(std::round(options.hold / c.dt)));
  c.speed = options.speed;
  c.harmonics = options.harmonics;

  RippleReport& ripple = a.ripple;
  if (options.pistons && options.speed) {
    ripple.known = true;
    ripple.pistons = *options.pistons;
    ripple.speed_rpm = *options.speed;
    ripple.source = options.ripple_source;
    ripple.nominal_hz = *options.pistons * *options.speed / 60.0;
    c.ripple_known = true;
    c.ripple_hz = ripple.nominal_hz;
    if (ripple.nominal_hz * 1.06 > 0.45 / c.dt) {
      ripple.note = "the pumping frequency " + fixed(ripple.nominal_hz, 1) + " Hz is above half the sample rate (" +
                    fixed(0.5 / c.dt, 0) + " Hz): the ripple cannot be seen as what it is, nor removed";
      c.ripple_known = false;
      c.harmonics = 0;
    }
  } else if (options.pistons || options.speed) {
    ripple.note = options.pistons ? "--pistons without --speed: the pumping frequency is not known"
                                  : "--speed without --pistons: the pumping frequency is not known";
  }

  if (options.event_threshold) {
    a.event_threshold = *options.event_threshold;
    a.threshold_source = "--event-threshold";
  } else {
    a.event_threshold = default_event_threshold(std::max(std::abs(a.maximum), std::abs(a.minimum)), a.noise);
    a.threshold_source = "default: 5 % of the highest pressure, at least ten noise deviations";
  }

  EventDetector detector(options, c.hold_samples, a.event_threshold);
  replay(std::ref(detector));
  const std::vector<Detected> found = detector.finish();

  Pieces pieces(a, c, found);
  replay(std::ref(pieces));
  pieces.finish();

  if (ripple.known) {
    ripple.removed = c.ripple_known;
    if (!pieces.ripple_frequencies.empty()) {
      double sum = 0.0, weights = 0.0;
      for (std::size_t i = 0; i < pieces.ripple_frequencies.size(); ++i) {
        sum += pieces.ripple_weights[i] * pieces.ripple_frequencies[i];
        weights += pieces.ripple_weights[i];
      }
      ripple.measured_hz = sum / weights;
    } else if (ripple.removed) {
      ripple.note = "no component stands out near " + fixed(ripple.nominal_hz, 1) +
                    " Hz; the nominal frequency was used to remove what there is";
    }
    const double f = ripple.measured_hz > 0.0 ? ripple.measured_hz : ripple.nominal_hz;
    if (!pieces.ripple_amplitudes.empty()) {
      std::size_t orders = 0;
      for (const auto& v : pieces.ripple_amplitudes) orders = std::max(orders, v.size());
      for (std::size_t k = 0; k < orders; ++k) {
        std::vector<double> values;
        for (const auto& v : pieces.ripple_amplitudes)
          if (k < v.size()) values.push_back(v[k]);
        ripple.harmonics.push_back({static_cast<int>(k + 1), (k + 1) * f, median_of(values)});
      }
      ripple.peak_to_peak = median_of(pieces.ripple_peak_to_peaks);
    }
  }

  // An oscillation whose frequency follows the shaft speed is the pump's.
  if (!c.ripple_known) {
    std::vector<const FieldStretch*> sustained;
    for (const FieldStretch& s : a.stretches)
      if ((s.verdict == FieldVerdict::hunting || s.verdict == FieldVerdict::possibly_ripple) && s.mean_speed > 0.0)
        sustained.push_back(&s);
    if (sustained.size() >= 2) {
      double low_speed = 1e300, high_speed = 0.0, low_ratio = 1e300, high_ratio = 0.0;
      for (const FieldStretch* s : sustained) {
        low_speed = std::min(low_speed, s->mean_speed);
        high_speed = std::max(high_speed, s->mean_speed);
        const double ratio = s->oscillation.frequency_hz / s->mean_speed;
        low_ratio = std::min(low_ratio, ratio);
        high_ratio = std::max(high_ratio, ratio);
      }
      if (high_speed > 1.02 * low_speed && high_ratio < 1.01 * low_ratio) {
        for (FieldStretch& s : a.stretches)
          if (s.verdict == FieldVerdict::hunting || s.verdict == FieldVerdict::possibly_ripple) {
            s.verdict = FieldVerdict::possibly_ripple;
            s.why = "the frequency moves with the shaft speed (" + fixed(low_speed, 0) + " to " + fixed(high_speed, 0) +
                    " rpm, frequency over speed the same within 1 %): piston ripple, not hunting";
          }
        for (FieldEvent& e : a.events)
          if (e.after.verdict == FieldVerdict::hunting) {
            e.after.verdict = FieldVerdict::possibly_ripple;
            e.after.why = "the frequency moves with the shaft speed";
          }
      }
    }
  }
  return a;
}

}  // namespace

FieldAnalysis analyse_field_file(const std::string& path, const FieldTraceOptions& read,
                                 const FieldAnalysisOptions& options) {
  return analyse([&](const FieldRowSink& sink) { return scan_field_trace(path, read, sink); }, options);
}

FieldAnalysis analyse_field_trace(const FieldTrace& trace, const FieldAnalysisOptions& options) {
  if (trace.time.size() != trace.pressure.size() || trace.time.size() < 2)
    throw FieldTraceError(trace.source + ": a recording needs at least two samples of time and pressure");
  return analyse(
      [&](const FieldRowSink& sink) {
        FieldRow row;
        for (std::size_t i = 0; i < trace.time.size(); ++i) {
          row.line = i + 1;
          row.time = trace.time[i];
          for (FieldChannel c : kAllFieldChannels) {
            const std::vector<double>& v = trace.channel(c);
            row.value[index_of(c)] = i < v.size() ? v[i] : std::numeric_limits<double>::quiet_NaN();
          }
          if (!sink(row)) break;
        }
        FieldReadReport report = trace.report;
        if (report.source.empty()) report.source = trace.source;
        if (report.kept == 0) {
          report.kept = report.rows = trace.time.size();
          report.first_time = trace.time.front();
          report.last_time = trace.time.back();
        }
        return report;
      },
      options);
}

namespace {

std::string optional_json(const std::optional<double>& v) { return v ? json_number(*v) : "null"; }

std::string stretch_json(const FieldStretch& s) {
  std::ostringstream o;
  o << "{ \"what\": " << json_string(s.what) << ", \"from_s\": " << json_number(s.from)
    << ", \"to_s\": " << json_number(s.to) << ", \"samples\": " << s.samples
    << ", \"verdict\": " << json_string(to_string(s.verdict)) << ", \"why\": " << json_string(s.why)
    << ", \"oscillation\": " << oscillation_json(s.oscillation) << " }";
  return o.str();
}

}  // namespace

std::string field_analysis_json(const FieldAnalysis& a) {
  const FieldReadReport& r = a.reading;
  const FieldLayout& l = r.layout;
  std::ostringstream o;
  o << "{\n  \"source\": " << json_string(r.source) << ",\n";
  o << "  \"reading\": { \"rows\": " << r.rows << ", \"kept\": " << r.kept << ", \"repeated_stamps\": " << r.repeated
    << ", \"gaps\": " << r.gaps << ", \"nominal_interval_s\": " << json_number(r.nominal_interval)
    << ", \"first_time_s\": " << json_number(r.first_time) << ", \"last_time_s\": " << json_number(r.last_time)
    << ", \"time_format\": " << json_string(l.time_format) << ", \"clock_start\": " << json_string(l.clock_start)
    << ", \"atmospheric_pressure_Pa\": " << json_number(l.atmospheric_pressure) << ",\n    \"columns\": {";
  bool first = true;
  if (!l.time_header.empty()) {
    o << " \"time\": " << json_string(l.time_header);
    first = false;
  }
  for (FieldChannel c : kAllFieldChannels)
    if (l.has(c)) {
      o << (first ? " " : ", ") << json_string(channel_name(c))
        << ": { \"header\": " << json_string(l.header[index_of(c)])
        << ", \"unit\": " << json_string(l.unit[index_of(c)])
        << ", \"absolute\": " << (l.absolute[index_of(c)] ? "true" : "false") << " }";
      first = false;
    }
  o << " },\n    \"repeated_lines\": [";
  for (std::size_t i = 0; i < r.repeated_lines.size(); ++i) o << (i ? ", " : "") << r.repeated_lines[i];
  o << "],\n    \"gap_list\": [";
  for (std::size_t i = 0; i < r.gap_list.size(); ++i)
    o << (i ? ", " : "") << "{ \"line\": " << r.gap_list[i].line << ", \"from_s\": " << json_number(r.gap_list[i].from)
      << ", \"to_s\": " << json_number(r.gap_list[i].to) << " }";
  o << "],\n    \"notes\": [";
  for (std::size_t i = 0; i < r.notes.size(); ++i) o << (i ? ", " : "") << json_string(r.notes[i]);
  o << "] },\n";
  o << "  \"analysed\": { \"from_s\": " << json_number(a.from) << ", \"to_s\": " << json_number(a.to)
    << ", \"samples\": " << a.samples << ", \"mean_Pa\": " << json_number(a.mean)
    << ", \"minimum_Pa\": " << json_number(a.minimum) << ", \"maximum_Pa\": " << json_number(a.maximum)
    << ", \"noise_Pa\": " << json_number(a.noise) << ", \"gaps\": " << a.gaps_in_part << " },\n";
  const RippleReport& rp = a.ripple;
  o << "  \"ripple\": { \"known\": " << (rp.known ? "true" : "false") << ", \"pistons\": " << json_number(rp.pistons)
    << ", \"speed_rpm\": " << json_number(rp.speed_rpm) << ", \"source\": " << json_string(rp.source)
    << ", \"nominal_frequency_Hz\": " << json_number(rp.nominal_hz)
    << ", \"measured_frequency_Hz\": " << json_number(rp.measured_hz)
    << ", \"peak_to_peak_Pa\": " << json_number(rp.peak_to_peak) << ", \"removed\": " << (rp.removed ? "true" : "false")
    << ", \"note\": " << json_string(rp.note) << ", \"harmonics\": [";
  for (std::size_t i = 0; i < rp.harmonics.size(); ++i)
    o << (i ? ", " : "") << "{ \"order\": " << rp.harmonics[i].order
      << ", \"frequency_Hz\": " << json_number(rp.harmonics[i].frequency_hz)
      << ", \"amplitude_Pa\": " << json_number(rp.harmonics[i].amplitude) << " }";
  o << "] },\n";
  o << "  \"event_threshold_Pa\": " << json_number(a.event_threshold)
    << ",\n  \"event_threshold_source\": " << json_string(a.threshold_source) << ",\n  \"events\": [";
  for (std::size_t i = 0; i < a.events.size(); ++i) {
    const FieldEvent& e = a.events[i];
    const EventMetrics& f = e.figures;
    o << (i ? ",\n    " : "\n    ") << "{ \"number\": " << e.number << ", \"time_s\": " << json_number(e.time)
      << ", \"direction\": " << json_string(e.rise ? "rise" : "fall")
      << ", \"window_end_s\": " << json_number(e.window_end)
      << ", \"window_capped\": " << (e.window_capped ? "true" : "false")
      << ", \"initial_Pa\": " << json_number(f.initial_discharge_pressure)
      << ", \"final_Pa\": " << json_number(f.final_discharge_pressure) << ", \"change_Pa\": " << json_number(f.change)
      << ", \"band_Pa\": " << json_number(f.band)
      << ", \"peak_discharge_pressure_Pa\": " << json_number(f.peak_discharge_pressure)
      << ", \"lowest_Pa\": " << json_number(e.lowest) << ", \"highest_sample_Pa\": " << json_number(e.highest_sample)
      << ", \"lowest_sample_Pa\": " << json_number(e.lowest_sample)
      << ", \"overshoot_percent\": " << optional_json(f.overshoot_percent)
      << ", \"undershoot_percent\": " << optional_json(f.undershoot_percent)
      << ", \"settling_time_s\": " << optional_json(f.settling_time) << ", \"note\": " << json_string(f.note)
      << ",\n      \"after\": " << stretch_json(e.after) << " }";
  }
  o << (a.events.empty() ? "" : "\n  ") << "],\n  \"stretches\": [";
  for (std::size_t i = 0; i < a.stretches.size(); ++i) o << (i ? ",\n    " : "\n    ") << stretch_json(a.stretches[i]);
  o << (a.stretches.empty() ? "" : "\n  ") << "],\n  \"notes\": [";
  for (std::size_t i = 0; i < a.notes.size(); ++i) o << (i ? ", " : "") << json_string(a.notes[i]);
  o << "]\n}\n";
  return o.str();
}

double measurement_noise(const std::vector<double>& time, const std::vector<double>& pressure) {
  std::vector<double> residuals;
  const std::size_t n = std::min(time.size(), pressure.size());
  if (n >= 5) residuals.reserve(n - 4);
  for (std::size_t i = 0; i + 4 < n; ++i) residuals.push_back(pseudo_residual(&time[i], &pressure[i]));
  return spread_by_mad(residuals);
}

}  // namespace swashtune
