// What a recording from a machine says: the part analysed, the piston ripple
// (with the pump's piston count and shaft speed), the recorded events with
// the same figures a simulated run gets, and whether the pressure hunts.
// Reads a file in passes through the streaming reader, so memory does not
// grow with its length.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "swashtune/field_trace.hpp"
#include "swashtune/metrics.hpp"
#include "swashtune/oscillation.hpp"

namespace swashtune {

struct FieldAnalysisOptions {
  std::optional<double> from, to;                    // s, the recording's time; default: all of it
  std::optional<double> event_threshold;             // Pa; default: see default_event_threshold()
  std::optional<double> pistons;                     // piston count, for the pumping frequency
  std::optional<double> speed;                       // rev/min, shaft speed
  std::string ripple_source;                         // where pistons and speed came from, for the report
  int harmonics = 5;                                 // of the pumping frequency, removed and reported
  double hold = 0.02;                                // s, averaging window of the event detector
  double smoothing = 0.5e-3;                         // s, averaging of the pressure for the event figures
  std::size_t block_samples = std::size_t{1} << 18;  // longest piece analysed at once
};

// Above this an oscillation whose source is unknown may be piston ripple
// rather than hunting: an industrial piston pump of 7 to 11 pistons at 1000
// to 3000 rpm pumps at about 120 to 550 Hz (common practice), while
// compensator hunting is mostly slower. Below it a sustained oscillation is
// called hunting unless the shaft speed shows it to be the pump's.
inline constexpr double kPossiblyRippleAboveHz = 200.0;

struct RippleHarmonic {
  int order = 1;
  double frequency_hz = 0.0;
  double amplitude = 0.0;  // Pa, of that component (half its peak-to-peak)
};

struct RippleReport {
  bool known = false;  // piston count and shaft speed given
  double pistons = 0.0, speed_rpm = 0.0;
  std::string source;
  double nominal_hz = 0.0;   // pistons x speed / 60
  double measured_hz = 0.0;  // found in the recording near the nominal (0: none found)
  std::vector<RippleHarmonic> harmonics;
  double peak_to_peak = 0.0;  // Pa, of the ripple waveform (all harmonics)
  bool removed = false;       // subtracted before the event figures and the hunting diagnosis
  std::string note;
};

enum class FieldVerdict { settled, settling, decaying_slowly, hunting, possibly_ripple, too_short };
const char* to_string(FieldVerdict v);  // "settled", ..., "hunting", "possibly ripple", "too short to tell"

// One stretch of the analysed part and what its pressure does.
struct FieldStretch {
  std::string what;  // "before the first event", "after event 2, from its peak", "from 12.5 s"
  double from = 0.0, to = 0.0;
  std::size_t samples = 0;
  OscillationReport oscillation;  // of the pressure with the ripple removed (when known)
  FieldVerdict verdict = FieldVerdict::settled;
  std::string why;          // for possibly ripple and hunting: the reason
  double mean_speed = 0.0;  // rev/min, when the recording has a speed column (else 0)
};

// A fall or rise of the pressure larger than the threshold.
struct FieldEvent {
  int number = 0;
  double time = 0.0;        // s, where the pressure leaves its level
  double window_end = 0.0;  // s: the next event, the end of the part, or the longest piece
  bool rise = true;
  bool window_capped = false;  // the window was cut at block_samples
  EventMetrics figures;        // the v2 pressure figures (metrics' pressure_figures); no swash figures
  double lowest = 0.0;         // Pa, the lowest of the pressure used for the figures
  double highest_sample = 0.0, lowest_sample = 0.0;  // Pa, raw, in the window
  FieldStretch after;                                // from the peak (rise) or trough (fall) to the window's end
};

struct FieldAnalysis {
  FieldReadReport reading;  // how the file was read (all of it)
  double from = 0.0, to = 0.0;
  std::size_t samples = 0;                          // in the analysed part
  double mean = 0.0, minimum = 0.0, maximum = 0.0;  // Pa, of the analysed part, as recorded
  double noise = 0.0;                               // Pa, standard deviation of the measurement noise
  double mean_speed = 0.0;                          // rev/min, 0 when none recorded
  double event_threshold = 0.0;                     // Pa
  std::string threshold_source;                     // "--event-threshold" or how the default was found
  std::size_t gaps_in_part = 0;
  RippleReport ripple;
  std::vector<FieldEvent> events;
  std::vector<FieldStretch> stretches;  // in time order: quiet stretches and the after-parts of events
  std::vector<std::string> notes;
};

// Default threshold: 5 % of the highest recorded pressure, at least ten noise
// deviations and 0.1 bar.
double default_event_threshold(double highest_pressure, double noise);

// The noise of a recording (Pa): the spread (MAD) of the pseudo-residuals of
// a local cubic through every five consecutive samples, as `field` reports
// it. Ripple and other fast, smooth motion shows in it only in part.
double measurement_noise(const std::vector<double>& time, const std::vector<double>& pressure);

// Analyses a file (three streaming passes: levels and noise; events;
// ripple, figures and oscillation piece by piece). Throws FieldTraceError
// for a bad file or bad options (naming the option).
FieldAnalysis analyse_field_file(const std::string& path, const FieldTraceOptions& read,
                                 const FieldAnalysisOptions& options);
// The same for a recording already in memory.
FieldAnalysis analyse_field_trace(const FieldTrace& trace, const FieldAnalysisOptions& options);

// The report as JSON (SI).
std::string field_analysis_json(const FieldAnalysis& a);

// Removes the piston ripple (the pumping frequency f and its harmonics) from
// y(t) in place, and reports it: the frequency is refined near f_guess
// (+-search), then harmonics are fitted by least squares in pieces of eight
// ripple periods (with a slow line, and linear drift of each harmonic's
// amplitude and phase) to y less its average over one ripple period; pieces
// where a fast transient spoils the fit take the ripple of their neighbours.
struct RippleFit {
  double frequency_hz = 0.0;
  bool found = false;             // a spectral peak stood out near f_guess
  std::vector<double> amplitude;  // Pa per harmonic (median over the pieces)
  double peak_to_peak = 0.0;      // Pa (median over the pieces)
  std::size_t pieces = 0, rejected = 0;
};
RippleFit remove_ripple(const std::vector<double>& t, std::vector<double>& y, double f_guess, int harmonics,
                        double search = 0.06);

}  // namespace swashtune
