// Checks of the signals around one reading that do not stop it but deserve a word to the
// technician: DC offset at an input, a test frequency on a mains harmonic, hum picked up
// with the output silent, and a signal too weak for a useful reading. Pure functions over
// samples (full-scale units) or over a reading's levels; the caller turns the findings
// into notices.
#pragma once

#include <complex>
#include <cstddef>
#include <span>

namespace tb::dsp {

struct DcOffset {
  double mean_fs = 0;      ///< mean of the capture, full-scale units (signed)
  bool excessive = false;  ///< |mean| above the limit
};

/// DC offset of one input from a capture with the output silent (or whole periods of the
/// tone). limit_fs >= 0, default 1 % of full scale: an offset takes headroom and, on a
/// DC-coupled card, biases the part. An empty capture gives 0, not excessive.
/// Example: check_dc_offset(std::vector<double>(100, 0.02)).excessive == true.
DcOffset check_dc_offset(std::span<const double> x, double limit_fs = 0.01);

struct MainsProximity {
  bool near = false;        ///< within guard bins of a harmonic at or below max_harmonic_hz
  int harmonic = 0;         ///< which harmonic (1 = the mains frequency itself); 0 if none
  double harmonic_hz = 0;   ///< its frequency
  double suggested_hz = 0;  ///< nearest frequency on the bin grid clear of every harmonic
};

/// Whether freq_hz sits within guard_bins * bin_hz (strictly less) of a harmonic n * mains_hz
/// with n * mains_hz <= max_harmonic_hz. The lock-in rejects hum one or more bins away only
/// while the hum holds still; mains wanders by a fraction of a hertz, its harmonics n times
/// as much, so a near neighbour leaks. The suggestion is the other IEC frequency of the
/// 100/120 Hz pair when that one is clear (IEC 60384-4 allows either), else the nearest
/// multiple of bin_hz clear of every harmonic (the higher one on a tie).
/// freq_hz > 0, mains_hz > 0, bin_hz > 0, guard_bins >= 0; otherwise std::invalid_argument.
/// Example: check_mains_proximity(100, 50, 10).suggested_hz == 120.
MainsProximity check_mains_proximity(double freq_hz, double mains_hz, double bin_hz,
                                     double guard_bins = 2, double max_harmonic_hz = 2000);

struct Hum {
  double total_rms_fs = 0;  ///< rms of all harmonics up to the limit frequency together
  double worst_hz = 0;      ///< the strongest harmonic
  double worst_rms_fs = 0;  ///< its rms
  bool excessive = false;   ///< total above the limit
};

/// Hum at the mains harmonics up to max_harmonic_hz (below fs/2) in a capture taken with the
/// output silent, by lock-in over the largest whole number of mains periods the capture
/// holds (so DC and the other harmonics fall on nulls). limit_rms_fs default -80 dBFS rms:
/// about 15 dB above the noise floor of a typical 16-bit card input (common practice, no
/// source). A capture shorter than one mains period gives zeros.
/// sample_rate_hz > 0, mains_hz > 0; otherwise std::invalid_argument.
Hum measure_hum(std::span<const double> x, double sample_rate_hz, double mains_hz,
                double limit_rms_fs = 1e-4, double max_harmonic_hz = 2000);

/// Peak amplitude (full-scale units) of the component at exactly freq_hz in a capture taken
/// with the output silent, by lock-in over the longest stretch holding whole periods of
/// mains_hz (so that, when freq_hz is a mains harmonic, the other harmonics fall on nulls).
/// 0 when the capture is shorter than one mains period. freq_hz, sample_rate_hz, mains_hz > 0.
double component_at(std::span<const double> x, double sample_rate_hz, double mains_hz,
                    double freq_hz);

/// Total harmonic distortion of a steady tone at freq_hz in x: the rms of its harmonics 2 to
/// max_harmonic (those below 0.45 fs) over the fundamental's, each found by component_at over
/// whole periods of the tone, so the harmonics fall on each other's nulls. 0 for a capture
/// shorter than one period or with no fundamental. freq_hz, sample_rate_hz > 0.
/// Example: sin(w t) + 0.01 sin(3 w t) gives 0.01.
double tone_distortion(std::span<const double> x, double sample_rate_hz, double freq_hz,
                       int max_harmonic = 5);

/// The budget terms for mains hum on the test tone itself: a tone on a harmonic of the mains
/// (within 1e-6 of n * mains_hz) cannot be told from the hum there, which adds a fixed error
/// that the block spread does not show. With hum amplitudes hum_a, hum_b at that frequency
/// (peak, full-scale units, from a silent capture) and the reading's levels, the ratio
/// r = V_B / V_A moves by up to dr / r = hum_b / level_b + hum_a / level_a in an unknown
/// phase, and Z (either layout) by dZ / Z = (dr / r) / (1 - r). Returned as the relative
/// size m of that error: two budget terms of u = m |Z| / sqrt 2 (real, imaginary) give it
/// its variance. 0 when the tone is not on a harmonic.
double hum_on_tone_rel(double freq_hz, double mains_hz, double hum_a_fs, double hum_b_fs,
                       double level_a_fs, double level_b_fs, std::complex<double> ratio);

struct SignalStrength {
  bool level_low = false;  ///< node B below min_level_fs
  bool snr_low = false;    ///< either channel's per-block SNR below min_snr_db
  bool weak() const { return level_low || snr_low; }
};

/// Whether a reading's signals are too weak to trust. Below about -60 dBFS at node B
/// (default 1e-3 peak) the card's crosstalk (down to -75 dB of node A) and distortion
/// become per-cent errors that its scatter does not show; below 40 dB per-block SNR the
/// reading scatters by more than about 1 % per block (common practice, no source).
SignalStrength check_signal_strength(double level_b_fs, double snr_a_db, double snr_b_db,
                                     double min_level_fs = 1e-3, double min_snr_db = 40);

struct SourceSteadiness {
  bool lost = false;     ///< node A silent, or a block far below the others (a dropout)
  bool changed = false;  ///< a block's level away from the median by more than the tolerance
  double median_rms_fs = 0;
  double worst_change_rel = 0;  ///< largest |block rms / median - 1|
  std::size_t worst_block = 0;  ///< index of that block
};

/// Node A below this share of the played level is no signal at all (see check_source_steady).
inline constexpr double kSourceSilentRel = 1e-3;

/// Whether node A (the generator side: the card's output as the jig sees it) held its level
/// through a stretch where a constant-level tone played. The ratio V_B / V_A hides a level
/// change, but a generator that drops out or jumps means a loose lead or a card that
/// stopped playing, and the reading is of nothing in particular. `x` is node A over that
/// stretch, cut into blocks of block_len (>= 1; a shorter last part is ignored).
/// lost: the median block rms below silent_rel x played_rms_fs (nothing arrives), or a block
/// below lost_rel x the median (a dropout). changed: a block more than change_tol_rel from
/// the median. Under two whole blocks: nothing is judged (all false).
/// silent_rel is -60 dB: a heavily loaded output (a 1 ohm Rref behind a headphone output of
/// 100 ohm, or an amplifier at its current limit) still puts node A at 1-3 % of the played
/// level, and only a missing lead leaves noise and hum alone.
/// Example: a 0.3 rms tone that stops half way: lost == true.
SourceSteadiness check_source_steady(std::span<const double> x, std::size_t block_len,
                                     double played_rms_fs, double change_tol_rel = 0.1,
                                     double lost_rel = 0.2, double silent_rel = kSourceSilentRel);

}  // namespace tb::dsp
