// Multisine: many bin-exact tones played at once over one period of N samples, and the
// analysis of a two-channel capture of P whole periods of it (a whole sweep in one capture).
//
// Grids (which bins of the N-point period carry a tone):
//   harmonic  bins step, 2 step, ..., K step (a flat comb);
//   log       requested log-spaced frequencies rounded to the nearest bin; where two would
//             share a bin the higher one moves up to the next free bin, so the low tones
//             stay distinct (they sit on consecutive bins at the bottom of the range);
//   odd_odd   like log, but only bins b with b mod 4 == 1. Even-order products of two
//             tones land on b1 +- b2 mod 4 in {0, 2} (even bins); odd-order products of
//             three on b1 +- b2 +- b3 mod 4 in {1, 3}: the part on bins == 3 mod 4 is
//             seen on unexcited bins. So even bins show even-order distortion, bins
//             == 3 mod 4 odd-order distortion, and neither is hidden under a tone.
// Unexcited bins show the noise floor (and the non-linearity) beside the tones.
//
// Phases: Schroeder's phi_n = -pi n (n - 1) / K (IEEE Trans. IT-16(1), 1970) for a flat
// harmonic comb (tone_plan.hpp); for log and sparse grids, where Schroeder's rule assumes
// a comb it does not have, an iterative clip-and-project search (in the spirit of Van der
// Ouderaa, Schoukens and Renneboog, IEEE Trans. IM-37(1), 1988, "peak factor
// minimization"): starting from Schroeder's general rule on the real bins (a sweep that
// dwells on each tone in proportion to its power), clip the period at 50 % rising to 90 %
// of its peak, take the phases of its spectrum at the excited bins, restore the
// amplitudes, repeat; the best period seen is kept. 60 log tones 20 Hz .. 20 kHz: 2.54
// after 1000 passes, against 4.33 with Schroeder's index rule on the same grid.
//
// Analysis: each period of each channel goes through one FFT (FFTW, rectangular: the
// tones are bin-exact). Per excited bin the complex peak amplitudes A (node A) and B
// (node B) per period, their means, the ratio B/A and two Type A estimates of the ratio:
//   spread  from the period-to-period scatter of the ratio (s / sqrt(P), P - 1 degrees of
//           freedom): sees everything that changes between periods, drift included, and
//           noise common to both channels cancels in it as it does in the ratio;
//   noise   from the noise of the mean spectrum on the unexcited bins next to the tone
//           (many degrees of freedom even for P = 2), propagated to the ratio: assumes the
//           noise is smooth in frequency, and counts distortion on those bins as noise.
// The server's readings use the spread (as a stepped reading does); the noise estimate
// serves short captures and the non-linearity figure.
#pragma once

#include <complex>
#include <cstddef>
#include <span>
#include <vector>

namespace tb::dsp {

enum class MultisineGrid { harmonic, log, odd_odd };

struct MultisineConfig {
  double sample_rate_hz = 48000;  ///< > 0
  MultisineGrid grid = MultisineGrid::log;
  /// Samples per period; 0 = choose: the smallest multiple of fs / 100 (10 ms steps) whose
  /// bin width fs / N is at most the lowest frequency / 4, so the lowest tone lands within
  /// 12.5 % of its request; odd_odd, whose usable bins are 4 apart, at most f_lo / 8;
  /// harmonic: N = round(fs * bin_step / f_lo_hz), the first tone on f_lo. At most 4 s.
  std::size_t period_len = 0;
  /// log, odd_odd: tones wanted from f_lo_hz to f_hi_hz, 0 < f_lo < f_hi < fs / 2.
  double f_lo_hz = 20, f_hi_hz = 20000;
  /// log, odd_odd: the frequencies wanted, ascending; when given they replace f_lo_hz,
  /// f_hi_hz and tones (a stepped sweep's plan played as one multisine).
  std::vector<double> requested_hz{};
  std::size_t tones = 60;    ///< log/odd_odd: tones wanted; harmonic: K (bins step .. K step)
  std::size_t bin_step = 1;  ///< harmonic only, >= 1
  /// Relative amplitude per tone (one entry per tone of the grid), > 0; empty = flat.
  std::vector<double> shape{};
  double peak_fs = 0.5;                 ///< peak of the whole period, full-scale units, (0, 1]
  std::size_t crest_iterations = 1000;  ///< clip-and-project passes (log, odd_odd grids)
};

struct MultisineTone {
  std::size_t bin = 0;      ///< 1 <= bin < N / 2
  double freq_hz = 0;       ///< bin * fs / N
  double amplitude_fs = 0;  ///< peak, full-scale units
  double phase_rad = 0;     ///< of cos(2 pi f t + phase)
};

struct MultisineDesign {
  double sample_rate_hz = 0;
  std::size_t period_len = 0;
  MultisineGrid grid = MultisineGrid::log;
  std::vector<MultisineTone> tones;   ///< ascending bin
  std::vector<double> period;         ///< one period, peak == peak_fs
  double crest_factor = 0;            ///< of the period as designed (peak / rms)
  double schroeder_crest_factor = 0;  ///< the same grid with Schroeder's phases, for comparison
};

/// The tones' bins for a grid (see above); throws std::invalid_argument for a bad config
/// or a grid that cannot hold the tones. Example: log 20 Hz .. 20 kHz, 60 tones, N = 9600
/// at 48 kHz gives bins 4, 5, 6, ... (20, 25, 30 Hz ...) up to bin 4000 (20 kHz).
std::vector<std::size_t> multisine_bins(const MultisineConfig& config, std::size_t period_len);

/// The period length `config.period_len` asks for (or chooses, see MultisineConfig).
std::size_t multisine_period(const MultisineConfig& config);

/// Grid, phases, amplitudes and one period scaled to peak_fs. Throws std::invalid_argument.
/// Example: design_multisine({.grid = MultisineGrid::harmonic, .period_len = 4800,
/// .tones = 64}).crest_factor ~ 1.71.
MultisineDesign design_multisine(const MultisineConfig& config);

/// The excitation: fade_in samples of a raised-cosine fade over repeated periods, then
/// `periods` more whole periods (settling and analysis), then a fade-out of fade_out
/// samples. The analysis starts at sample fade_in + settle_periods * N.
std::vector<double> multisine_excitation(const MultisineDesign& design, std::size_t fade_in,
                                         std::size_t periods, std::size_t fade_out);

struct MultisineToneResult {
  std::size_t bin = 0;
  double freq_hz = 0;
  std::vector<std::complex<double>> a, b;  ///< per period, peak amplitude, full-scale units
  std::complex<double> mean_a, mean_b;
  std::complex<double> ratio;             ///< mean_b / mean_a
  double ratio_u_rel_spread = 0;          ///< standard uncertainty, relative (0 with one period)
  double ratio_u_rel_noise = 0;           ///< the same from the neighbouring unexcited bins
  double level_a_fs = 0, level_b_fs = 0;  ///< |mean_a|, |mean_b|
};

/// Distortion and noise in one frequency region, on each channel, as power on the
/// unexcited bins relative to the mean power of one tone of the region (dB).
struct MultisineRegion {
  double f_lo_hz = 0, f_hi_hz = 0;  ///< [lo, hi)
  std::size_t tones = 0;
  double tone_level_a_fs = 0, tone_level_b_fs = 0;  ///< rms over tones of peak amplitude
  double odd_db_a = 0, odd_db_b = 0;                ///< unexcited odd bins (odd-order distortion)
  double even_db_a = 0, even_db_b = 0;              ///< even bins (even-order distortion)
  double noise_db_a = 0, noise_db_b = 0;            ///< period-to-period noise per bin of the mean
};

struct MultisineAnalysis {
  std::size_t periods = 0;
  std::vector<MultisineToneResult> tones;  ///< in the design's order
  /// Noise per bin of the period mean (rms amplitude, full-scale peak units), from the
  /// period-to-period scatter pooled over all bins 1 .. N/2 - 1 (0 with one period).
  double noise_floor_a_fs = 0, noise_floor_b_fs = 0;
  std::vector<MultisineRegion> regions;  ///< one per decade holding tones
  /// Worst over regions of the unexcited-bin level (odd and even) relative to the tones,
  /// on node B, dB: the sweep's non-linearity figure.
  double nonlinearity_db = -300;
};

/// Analyses `periods` whole periods of a and b from sample `start`. Throws
/// std::invalid_argument when the channels are shorter than start + periods * N, or
/// periods == 0.
MultisineAnalysis analyze_multisine(std::span<const double> a, std::span<const double> b,
                                    const MultisineDesign& design, std::size_t start,
                                    std::size_t periods);

}  // namespace tb::dsp
