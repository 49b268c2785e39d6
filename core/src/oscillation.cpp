// Oscillation analysis of a sampled signal (see oscillation.hpp).
//
// Outline:
//  1. Resample the analysed part of the stretch onto a uniform grid (linear
//     interpolation; a uniformly sampled signal maps onto itself).
//  2. Estimate the noise from the raw samples: each sample minus the cubic
//     through its four neighbours, normalised, spread by the MAD.
//  3. Remove a least-squares line; find the dominant period from the highest
//     local maximum of the Hann-windowed, zero-padded periodogram.
//  4. Band-pass: subtract a centred moving average over one period (follows a
//     slow drift, cancels the oscillation) and smooth with a moving average
//     over an eighth of a period (against noise).
//  5. Upward zero crossings with hysteresis (a few noise deviations) split the
//     signal into cycles. A cycle counts when its peak-to-peak (max - min,
//     corrected for the filter's gain) clears the floor: the option, or ten
//     deviations of the filtered noise. The counted cycles must be of much
//     the same length (an oscillation repeats itself); their mean length is
//     the period.
//  6. A weighted least-squares line through the logarithm of each cycle's
//     amplitude (of the sinusoid fitted to it, which averages the noise out)
//     against time gives the envelope's growth rate, hence the logarithmic
//     decrement and the damping ratio.
//
// Sources: logarithmic decrement and damping ratio, W. T. Thomson and
// M. D. Dahleh, Theory of Vibration with Applications; Hann window, F. J.
// Harris, "On the use of windows for harmonic analysis with the discrete
// Fourier transform", Proc. IEEE 66 (1978); quadratic peak interpolation,
// J. O. Smith III, Spectral Audio Signal Processing; moving-average filters
// and their frequency response, S. W. Smith, The Scientist and Engineer's
// Guide to Digital Signal Processing, ch. 15; noise from pseudo-residuals,
// T. Gasser, L. Sroka and C. Jennen-Steinmetz, "Residual variance and
// residual pattern in nonlinear regression", Biometrika 73 (1986); MAD scale
// 1.4826, P. J. Rousseeuw and C. Croux, JASA 88 (1993).
#include "swashtune/oscillation.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <complex>
#include <iomanip>
#include <sstream>
#include <stdexcept>
#include <string>
#include <unsupported/Eigen/FFT>

namespace swashtune {
namespace {

constexpr double two_pi = 6.28318530717958647692;

// An oscillation needs this many samples per period to be measured (the
// smoothing and the peak picking need a few samples per half cycle) ...
constexpr double min_samples_per_period = 8.0;
// ... and this many periods in the analysed stretch: the band-pass filter
// eats one period, and two whole cycles must remain.
constexpr double min_periods = 3.0;
// Width of the smoothing moving average, as a fraction of the period: its
// gain at the oscillation is sinc(pi/8) ~ 0.97 (corrected for below).
constexpr double smoothing_fraction = 1.0 / 8.0;
// Hysteresis of the zero-crossing detector, in standard deviations of the
// noise left after filtering, and as a fraction of the largest excursion (so
// that round-off on a clean, long-decayed signal makes no crossings).
constexpr double hysteresis_noise_multiple = 3.0;
constexpr double hysteresis_relative = 1e-3;
// A cycle counts as oscillation when its peak-to-peak is at least this many
// standard deviations of the filtered noise: a hysteresis "cycle" of pure
// noise spans at least 2 x 3 deviations, rarely 10.
constexpr double settled_noise_multiple = 10.0;
// Cycles of an oscillation scatter in length by less than this fraction
// (robust standard deviation over the median); single cycles further than
// the tolerance from the median are a missed crossing and are dropped.
constexpr double cycle_length_scatter = 0.1;
constexpr double cycle_length_tolerance = 0.25;
// The reported peak-to-peak is the mean over this many last cycles.
constexpr int amplitude_cycles = 3;
// 1.4826 x MAD is the standard deviation of normally distributed data.
constexpr double mad_to_sigma = 1.4826;

std::string number(double v) {
  std::ostringstream out;
  out << std::setprecision(12) << v;
  return out.str();
}

void check_input(const std::vector<double>& t, const std::vector<double>& y, std::optional<double> t_from,
                 std::optional<double> t_to, const OscillationOptions& options) {
  const std::string where = "analyse_oscillation: ";
  if (t.size() != y.size())
    throw std::invalid_argument(where + "t and y differ in size (" + std::to_string(t.size()) + " and " +
                                std::to_string(y.size()) + " values)");
  for (std::size_t i = 0; i < t.size(); ++i) {
    if (!std::isfinite(t[i])) throw std::invalid_argument(where + "t[" + std::to_string(i) + "] is not finite");
    if (i > 0 && !(t[i] > t[i - 1]))
      throw std::invalid_argument(where + "t must be strictly increasing, but t[" + std::to_string(i) +
                                  "] = " + number(t[i]) + " follows " + number(t[i - 1]));
  }
  if ((t_from && !std::isfinite(*t_from)) || (t_to && !std::isfinite(*t_to)))
    throw std::invalid_argument(where + "the bounds of the stretch must be finite");
  if (t_from && t_to && !(*t_from < *t_to))
    throw std::invalid_argument(where + "the stretch is empty: t_from = " + number(*t_from) +
                                " is not before t_to = " + number(*t_to));
  if (!(options.skip_fraction >= 0.0 && options.skip_fraction < 1.0))
    throw std::invalid_argument(where + "skip_fraction must lie in [0, 1)");
  if (!(options.sustained_damping >= 0.0 && options.slow_decay_damping >= options.sustained_damping))
    throw std::invalid_argument(where + "need 0 <= sustained_damping <= slow_decay_damping");
  if (std::isnan(options.amplitude_floor)) throw std::invalid_argument(where + "amplitude_floor is NaN");
}

double median(std::vector<double> v) {
  const auto middle = v.begin() + static_cast<std::ptrdiff_t>(v.size() / 2);
  std::nth_element(v.begin(), middle, v.end());
  if (v.size() % 2 == 1) return *middle;
  return 0.5 * (*middle + *std::max_element(v.begin(), middle));
}

}  // namespace

// Standard deviation of white noise on samples first..last. Each sample is
// compared with the cubic through its two neighbours on either side, which
// follows any smooth signal to fourth order in the sample interval; the
// difference has variance sigma^2 (1 + sum of squared Lagrange weights). A
// robust spread (MAD) ignores the odd spike.
double noise_level(const std::vector<double>& t, const std::vector<double>& y, std::size_t first, std::size_t last) {
  if (last < first + 4) return 0.0;
  std::vector<double> residuals;
  for (std::size_t i = first + 2; i + 2 <= last; ++i) {
    const std::size_t nodes[4] = {i - 2, i - 1, i + 1, i + 2};
    double prediction = 0.0;
    double weight_squares = 0.0;
    for (std::size_t a : nodes) {
      double weight = 1.0;  // Lagrange basis polynomial of node a at t[i]
      for (std::size_t b : nodes)
        if (b != a) weight *= (t[i] - t[b]) / (t[a] - t[b]);
      prediction += weight * y[a];
      weight_squares += weight * weight;
    }
    residuals.push_back((y[i] - prediction) / std::sqrt(1.0 + weight_squares));
  }
  const double centre = median(residuals);
  for (double& r : residuals) r = std::abs(r - centre);
  return mad_to_sigma * median(residuals);
}

namespace {

// y on n points equally spaced from t[first] to t[last] (n = the number of
// samples there), by linear interpolation.
std::vector<double> resample(const std::vector<double>& t, const std::vector<double>& y, std::size_t first,
                             std::size_t last, double dt) {
  const std::size_t n = last - first + 1;
  std::vector<double> out(n);
  std::size_t j = first;
  for (std::size_t k = 0; k < n; ++k) {
    const double tk = k + 1 == n ? t[last] : t[first] + static_cast<double>(k) * dt;
    while (j + 1 < last && t[j + 1] <= tk) ++j;
    const double f = std::clamp((tk - t[j]) / (t[j + 1] - t[j]), 0.0, 1.0);
    out[k] = y[j] + f * (y[j + 1] - y[j]);
  }
  return out;
}

// x minus its least-squares straight line (against the sample index).
std::vector<double> remove_line(std::vector<double> x) {
  const double n = static_cast<double>(x.size());
  const double k_mean = 0.5 * (n - 1.0);
  double x_mean = 0.0;
  for (double v : x) x_mean += v / n;
  double sxy = 0.0;
  double sxx = 0.0;
  for (std::size_t k = 0; k < x.size(); ++k) {
    sxy += (static_cast<double>(k) - k_mean) * (x[k] - x_mean);
    sxx += (static_cast<double>(k) - k_mean) * (static_cast<double>(k) - k_mean);
  }
  const double slope = sxy / sxx;
  for (std::size_t k = 0; k < x.size(); ++k) x[k] -= x_mean + slope * (static_cast<double>(k) - k_mean);
  return x;
}

// Frequency (Hz) of the highest local maximum of the periodogram between
// min_periods cycles per stretch and min_samples_per_period samples per
// cycle; none when the band holds no local maximum. The Hann window keeps the
// leakage of a residual drift away from the oscillation; zero padding to four
// times the length and a parabola through the log power place the peak
// between bins. A local maximum, not the band's maximum, so that the skirt of
// a drift at the low edge is not taken for an oscillation.
std::optional<double> dominant_frequency(const std::vector<double>& x, double dt) {
  const std::size_t n = x.size();
  // Zero padding to four times the length places the peak between bins; a
  // long stretch has fine bins already, and twice keeps its memory bounded.
  const std::size_t padding = n > (std::size_t{1} << 16) ? 2 : 4;
  std::size_t nfft = 1;
  while (nfft < padding * n) nfft *= 2;
  std::vector<double> windowed(nfft, 0.0);
  for (std::size_t k = 0; k < n; ++k)
    windowed[k] = x[k] * 0.5 * (1.0 - std::cos(two_pi * static_cast<double>(k) / static_cast<double>(n - 1)));
  Eigen::FFT<double> fft;
  std::vector<std::complex<double>> spectrum;
  fft.fwd(spectrum, windowed);

  const auto lowest = static_cast<std::size_t>(std::ceil(min_periods * static_cast<double>(nfft) / n));
  const auto highest = static_cast<std::size_t>(std::floor(static_cast<double>(nfft) / min_samples_per_period));
  std::size_t peak = 0;
  for (std::size_t k = std::max<std::size_t>(lowest, 1); k <= highest && k + 1 < nfft; ++k) {
    const double p = std::norm(spectrum[k]);
    if (p > std::norm(spectrum[k - 1]) && p >= std::norm(spectrum[k + 1]) &&
        (peak == 0 || p > std::norm(spectrum[peak])))
      peak = k;
  }
  if (peak == 0 || !(std::norm(spectrum[peak]) > 0.0)) return std::nullopt;

  double offset = 0.0;
  const double a = std::log(std::norm(spectrum[peak - 1]));
  const double b = std::log(std::norm(spectrum[peak]));
  const double c = std::log(std::norm(spectrum[peak + 1]));
  if (std::isfinite(a) && std::isfinite(c) && a - 2.0 * b + c < 0.0) offset = 0.5 * (a - c) / (a - 2.0 * b + c);
  return (static_cast<double>(peak) + offset) / (static_cast<double>(nfft) * dt);
}

int odd_near(double samples) { return 2 * static_cast<int>(std::max(0.0, std::floor(0.5 * samples))) + 1; }

// Centred moving average over `width` (odd) samples where the window fits:
// out[k] averages x[k .. k + width - 1] and belongs to x[k + width / 2].
std::vector<double> moving_average(const std::vector<double>& x, int width) {
  const auto w = static_cast<std::size_t>(width);
  if (x.size() < w) return {};
  std::vector<double> out(x.size() - w + 1);
  double sum = 0.0;
  for (std::size_t k = 0; k < w; ++k) sum += x[k];
  out[0] = sum / width;
  for (std::size_t k = 1; k < out.size(); ++k) {
    sum += x[k + w - 1] - x[k - 1];
    out[k] = sum / width;
  }
  return out;
}

// Band-pass: x minus its moving average over one period (removes the mean
// however it drifts, keeps the oscillation), then smoothed. out[k] belongs
// to x[k + filter_delay(period, smoothing)].
std::vector<double> band_pass(const std::vector<double>& x, int period, int smoothing) {
  const std::vector<double> mean = moving_average(x, period);
  std::vector<double> detrended(mean.size());
  for (std::size_t k = 0; k < mean.size(); ++k) detrended[k] = x[k + static_cast<std::size_t>(period / 2)] - mean[k];
  return moving_average(detrended, smoothing);
}

std::size_t filter_delay(int period, int smoothing) { return static_cast<std::size_t>(period / 2 + smoothing / 2); }

// Standard deviation of band-passed white noise of unit deviation: the root
// sum of squares of the filter's impulse response.
double band_pass_noise_gain(int period, int smoothing) {
  std::vector<double> impulse(2 * static_cast<std::size_t>(period + smoothing) + 1, 0.0);
  impulse[impulse.size() / 2] = 1.0;
  double sum = 0.0;
  for (double v : band_pass(impulse, period, smoothing)) sum += v * v;
  return std::sqrt(sum);
}

// Gain of a centred moving average over `width` samples for a sinusoid of
// `radians` per sample (Smith, ch. 15).
double moving_average_gain(int width, double radians) {
  return std::sin(0.5 * width * radians) / (width * std::sin(0.5 * radians));
}

// Schmitt trigger: an upward crossing counts once the signal has been below
// -hysteresis and then rises above +hysteresis; it is placed where the signal
// last passed zero on the way up (linear interpolation, in samples).
std::vector<double> upward_crossings(const std::vector<double>& s, double hysteresis) {
  std::vector<double> up;
  bool below = false;  // since the last upward crossing
  double last_up = 0.0;
  for (std::size_t k = 1; k < s.size(); ++k) {
    if (s[k - 1] <= 0.0 && s[k] > 0.0) last_up = static_cast<double>(k - 1) + s[k - 1] / (s[k - 1] - s[k]);
    if (s[k] < -hysteresis) below = true;
    if (below && s[k] > hysteresis) {
      up.push_back(last_up);
      below = false;
    }
  }
  return up;
}

// Extreme of s near sample k: the vertex of the parabola through k and its
// neighbours (Smith III), when k is an extreme of the three.
double refined_extreme(const std::vector<double>& s, std::size_t k) {
  if (k == 0 || k + 1 >= s.size()) return s[k];
  const double a = s[k - 1];
  const double b = s[k];
  const double c = s[k + 1];
  const double curvature = a - 2.0 * b + c;
  const bool is_extreme = (b >= a && b >= c && curvature < 0.0) || (b <= a && b <= c && curvature > 0.0);
  return is_extreme ? b - (c - a) * (c - a) / (8.0 * curvature) : b;
}

// One cycle of the filtered signal, from an upward zero crossing to the next
// (in samples of the filtered signal).
struct Cycle {
  double start = 0.0;
  double end = 0.0;
  double peak_to_peak = 0.0;  // max - min
  double fundamental = 0.0;   // peak-to-peak of the least-squares sinusoid
  double length() const { return end - start; }
};

// Peak-to-peak of the sinusoid c + a cos + b sin of one cycle's length fitted
// to its samples by least squares. Unlike max - min, which picks the largest
// noise excursion, it averages the noise out over the cycle: the envelope fit
// uses it, so that the small cycles at the end of a decay are not inflated.
double fundamental_peak_to_peak(const std::vector<double>& s, std::size_t begin, std::size_t end, double start,
                                double length) {
  const auto n = static_cast<Eigen::Index>(end - begin + 1);
  Eigen::MatrixX3d basis(n, 3);
  Eigen::VectorXd values(n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const auto k = begin + static_cast<std::size_t>(i);
    const double phase = two_pi * (static_cast<double>(k) - start) / length;
    basis.row(i) << 1.0, std::cos(phase), std::sin(phase);
    values[i] = s[k];
  }
  const Eigen::Vector3d c = basis.colPivHouseholderQr().solve(values);
  return 2.0 * std::hypot(c[1], c[2]);
}

std::vector<Cycle> split_into_cycles(const std::vector<double>& s, const std::vector<double>& up) {
  std::vector<Cycle> cycles;
  for (std::size_t j = 1; j < up.size(); ++j) {
    const auto begin = static_cast<std::size_t>(std::ceil(up[j - 1]));
    const auto end = std::min(static_cast<std::size_t>(std::floor(up[j])), s.size() - 1);
    std::size_t high = begin;
    std::size_t low = begin;
    for (std::size_t k = begin; k <= end; ++k) {
      if (s[k] > s[high]) high = k;
      if (s[k] < s[low]) low = k;
    }
    cycles.push_back({up[j - 1], up[j], refined_extreme(s, high) - refined_extreme(s, low),
                      fundamental_peak_to_peak(s, begin, end, up[j - 1], up[j] - up[j - 1])});
  }
  return cycles;
}

double median_length(const std::vector<Cycle>& cycles) {
  std::vector<double> lengths;
  for (const Cycle& c : cycles) lengths.push_back(c.length());
  return median(lengths);
}

// An oscillation repeats itself: the cycles must have much the same length
// (band-passed noise or a wandering mean makes cycles of any length). Drops
// the odd cycle far from the median (a missed crossing) and returns the mean
// length of the rest, weighted by amplitude squared since noise shifts a
// crossing by about noise / slope; none when the lengths scatter or fewer
// than two cycles remain.
std::optional<double> regular_period(std::vector<Cycle>& cycles) {
  if (cycles.size() < 2) return std::nullopt;
  const double typical = median_length(cycles);
  std::vector<double> deviations;
  for (const Cycle& c : cycles) deviations.push_back(std::abs(c.length() - typical));
  if (mad_to_sigma * median(deviations) > cycle_length_scatter * typical) return std::nullopt;
  const auto odd = [&](const Cycle& c) { return std::abs(c.length() - typical) > cycle_length_tolerance * typical; };
  cycles.erase(std::remove_if(cycles.begin(), cycles.end(), odd), cycles.end());
  if (cycles.size() < 2) return std::nullopt;
  double sum = 0.0;
  double weights = 0.0;
  for (const Cycle& c : cycles) {
    const double w = c.fundamental * c.fundamental;
    sum += w * c.length();
    weights += w;
  }
  return sum / weights;
}

// Least-squares line ln(pp) = a + b t weighted by pp^2: the variance of
// ln(pp) under additive noise goes as 1 / pp^2, so the small late cycles of a
// decay do not dominate. Returns b.
double envelope_growth_rate(const std::vector<double>& times, const std::vector<double>& pp) {
  double w_sum = 0.0;
  double t_mean = 0.0;
  double l_mean = 0.0;
  for (std::size_t k = 0; k < pp.size(); ++k) {
    const double w = pp[k] * pp[k];
    w_sum += w;
    t_mean += w * times[k];
    l_mean += w * std::log(pp[k]);
  }
  t_mean /= w_sum;
  l_mean /= w_sum;
  double stt = 0.0;
  double stl = 0.0;
  for (std::size_t k = 0; k < pp.size(); ++k) {
    const double w = pp[k] * pp[k];
    stt += w * (times[k] - t_mean) * (times[k] - t_mean);
    stl += w * (times[k] - t_mean) * (std::log(pp[k]) - l_mean);
  }
  return stl / stt;
}

}  // namespace

const char* to_string(OscillationKind kind) {
  switch (kind) {
    case OscillationKind::settled:
      return "settled";
    case OscillationKind::settling:
      return "settling";
    case OscillationKind::decaying_slowly:
      return "decaying slowly";
    case OscillationKind::sustained:
      return "sustained oscillation";
  }
  return "unknown";
}

OscillationReport analyse_oscillation(const std::vector<double>& t, const std::vector<double>& y,
                                      std::optional<double> t_from, std::optional<double> t_to,
                                      const OscillationOptions& options) {
  check_input(t, y, t_from, t_to, options);

  // The stretch, then its analysed part after the skipped start.
  const auto lower = t_from ? std::lower_bound(t.begin(), t.end(), *t_from) : t.begin();
  const auto upper = t_to ? std::upper_bound(t.begin(), t.end(), *t_to) : t.end();
  const std::ptrdiff_t in_stretch = std::max<std::ptrdiff_t>(upper - lower, 0);
  if (in_stretch < 8)
    throw std::invalid_argument("analyse_oscillation: " + std::to_string(in_stretch) +
                                " samples in the stretch, need at least 8");
  const auto stretch_first = static_cast<std::size_t>(lower - t.begin());
  const std::size_t last = static_cast<std::size_t>(upper - t.begin()) - 1;
  for (std::size_t i = stretch_first; i <= last; ++i)
    if (!std::isfinite(y[i]))
      throw std::invalid_argument("analyse_oscillation: y[" + std::to_string(i) + "] is not finite");
  const double skip_to = t[stretch_first] + options.skip_fraction * (t[last] - t[stretch_first]);
  const auto first = static_cast<std::size_t>(std::lower_bound(lower, upper, skip_to) - t.begin());

  OscillationReport report;
  report.analysed_from = t[first];
  report.analysed_to = t[last];
  report.analysed_samples = last + 1 - first;
  report.noise = noise_level(t, y, first, last);
  if (last < first + 1) {
    report.mean = y[last];
    return report;
  }
  const double dt = (t[last] - t[first]) / static_cast<double>(last - first);
  const std::vector<double> uniform = resample(t, y, first, last, dt);
  for (double v : uniform) report.mean += v / static_cast<double>(uniform.size());
  if (uniform.size() < 8) return report;

  const std::vector<double> x = remove_line(uniform);
  const std::optional<double> frequency = dominant_frequency(x, dt);
  if (!frequency) return report;
  const int period = odd_near(1.0 / (*frequency * dt));
  const int smoothing = odd_near(smoothing_fraction * period);
  const std::vector<double> s = band_pass(x, period, smoothing);
  if (s.size() < 3) return report;

  const double filtered_noise = report.noise * band_pass_noise_gain(period, smoothing);
  double largest = 0.0;
  for (double v : s) largest = std::max(largest, std::abs(v));
  const double hysteresis = std::max(hysteresis_noise_multiple * filtered_noise, hysteresis_relative * largest);
  std::vector<Cycle> cycles = split_into_cycles(s, upward_crossings(s, hysteresis));
  if (cycles.size() < 2) return report;

  // Undo the band-pass filter's gain at the oscillation's frequency. Cycles
  // below the floor (the option, or the swing of the filtered noise) are no
  // oscillation worth the name: the tail of a decay lost in the noise, or
  // noise alone; they neither count nor enter the envelope fit.
  const double radians = two_pi / median_length(cycles);
  const double gain = std::abs((1.0 - moving_average_gain(period, radians)) * moving_average_gain(smoothing, radians));
  const double smallest = std::max(options.amplitude_floor, settled_noise_multiple * filtered_noise / gain);
  for (Cycle& c : cycles) {
    c.peak_to_peak /= gain;
    c.fundamental /= gain;
  }
  cycles.erase(std::remove_if(cycles.begin(), cycles.end(), [&](const Cycle& c) { return c.peak_to_peak < smallest; }),
               cycles.end());
  const std::optional<double> cycle_length = regular_period(cycles);
  if (!cycle_length) return report;

  std::vector<double> times;
  std::vector<double> envelope;
  for (const Cycle& c : cycles) {
    const double middle = 0.5 * (c.start + c.end) + static_cast<double>(filter_delay(period, smoothing));
    times.push_back(t[first] + middle * dt);
    envelope.push_back(c.fundamental);
  }

  const double period_s = *cycle_length * dt;
  report.frequency_hz = 1.0 / period_s;
  const std::size_t last_few = std::min<std::size_t>(amplitude_cycles, cycles.size());
  for (std::size_t k = cycles.size() - last_few; k < cycles.size(); ++k)
    report.peak_to_peak += cycles[k].peak_to_peak / static_cast<double>(last_few);
  report.cycles = static_cast<int>(cycles.size());
  report.growth_rate = envelope_growth_rate(times, envelope);
  report.log_decrement = -report.growth_rate * period_s;
  const double d = report.log_decrement;
  report.damping_ratio = d / std::sqrt(two_pi * two_pi + d * d);  // Thomson & Dahleh
  if (report.damping_ratio >= options.slow_decay_damping)
    report.kind = OscillationKind::settling;
  else if (report.damping_ratio >= options.sustained_damping)
    report.kind = OscillationKind::decaying_slowly;
  else
    report.kind = OscillationKind::sustained;
  return report;
}

}  // namespace swashtune
