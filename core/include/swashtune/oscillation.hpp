// Is a signal settling, decaying slowly, or hunting? Frequency, peak-to-peak
// amplitude and decay or growth rate of the oscillation in a stretch of a
// uniformly or non-uniformly sampled signal, robust to measurement noise and
// to a drifting mean. Used on simulated traces and on field recordings alike.
#pragma once

#include <optional>
#include <string>
#include <vector>

namespace swashtune {

enum class OscillationKind {
  settled,          // no oscillation worth the name (below the noise / amplitude floor)
  settling,         // oscillation dying out: damping ratio >= slow_decay_damping
  decaying_slowly,  // dying out, but slowly: 0 < damping ratio < slow_decay_damping
  sustained,        // constant or growing amplitude: hunting, a limit cycle
};

const char* to_string(OscillationKind kind);  // "settled", "settling", "decaying slowly", "sustained oscillation"

struct OscillationOptions {
  // Oscillations smaller than this peak-to-peak (in the signal's units) count
  // as settled; <= 0: derived from the noise estimate only.
  double amplitude_floor = 0.0;
  // Damping ratio below which a decaying oscillation is "decaying slowly".
  double slow_decay_damping = 0.05;
  // |damping ratio| below this counts as sustained (neither decaying nor growing).
  double sustained_damping = 0.005;
  // Fraction of the stretch skipped at its start, where a step or the event
  // itself would spoil the envelope fit. Nothing by default: a caller that
  // skips says so (the report states the part analysed).
  double skip_fraction = 0.0;
};

struct OscillationReport {
  OscillationKind kind = OscillationKind::settled;
  double frequency_hz = 0.0;   // of the dominant oscillation (0 when settled)
  double peak_to_peak = 0.0;   // mean over the last cycles, signal units
  double growth_rate = 0.0;    // 1/s of the envelope, exp(growth_rate t): < 0 decays
  double log_decrement = 0.0;  // ln(x_n / x_{n+1}) per cycle, from the envelope fit
  double damping_ratio = 0.0;  // d / sqrt(4 pi^2 + d^2) (Thomson & Dahleh); < 0 grows
  int cycles = 0;              // whole cycles analysed
  double noise = 0.0;          // estimated noise level (standard deviation), signal units
  double mean = 0.0;           // mean level over the analysed part
  // The part analysed: the stretch less the skipped start.
  double analysed_from = 0.0, analysed_to = 0.0;
  std::size_t analysed_samples = 0;
};

// Standard deviation of white measurement noise on y(t), samples first..last
// (inclusive), from the pseudo-residuals of a local cubic (Gasser, Sroka and
// Jennen-Steinmetz 1986) spread by the MAD; 0 for fewer than five samples.
double noise_level(const std::vector<double>& t, const std::vector<double>& y, std::size_t first, std::size_t last);

// Analyses y(t) over [t_from, t_to] (the whole signal when the bounds are
// not given). t must be increasing. Throws std::invalid_argument for bad
// input (sizes differ, fewer than 8 points in the stretch, non-increasing t).
OscillationReport analyse_oscillation(const std::vector<double>& t, const std::vector<double>& y,
                                      std::optional<double> t_from = std::nullopt,
                                      std::optional<double> t_to = std::nullopt,
                                      const OscillationOptions& options = {});

}  // namespace swashtune
