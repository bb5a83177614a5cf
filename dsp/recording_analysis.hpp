// Offline analysis of a stereo recording of the jig (channel A = node A, channel B =
// node B): finds where the excitation is on, which tones it holds and at exactly what
// frequency, demodulates both channels block by block, drops blocks that have not
// settled, and turns the channel ratio into the part's impedance with its uncertainty.
//
// Steps and why:
//  1. clipping check on both channels (a clipped tone has the wrong amplitude);
//  2. active region from channel A's level (silence before and after is common);
//  3. tones: given, or found in a Blackman-Harris spectrum, then refined by a joint
//     IEEE 1057-style sine fit (recordings from other devices are rarely bin-exact);
//  4. block length: whole periods of every tone if such a block exists (rectangular
//     window, exact), else a Hann window over >= 8 periods of the lowest tone;
//  5. phase drift across blocks: a frequency error is tracked (per-block frequency from
//     a quadratic phase model); wander that cannot be followed is refused;
//  6. settling: leading/trailing blocks whose ratio sits away from the steady value are
//     dropped, and a steady run that still trends is flagged not settled;
//  7. Z per block through solve_bridge(); Type A from the block spread, Type B from the
//     configured tolerances by sensitivity (finite differences of the bridge solution).
#pragma once

#include <complex>
#include <cstddef>
#include <optional>
#include <span>
#include <stdexcept>
#include <string>
#include <vector>

#include "dsp/block_stats.hpp"
#include "dsp/bridge.hpp"
#include "dsp/impedance.hpp"
#include "dsp/phase_track.hpp"
#include "dsp/uncertainty.hpp"
#include "dsp/window.hpp"

namespace tb::dsp {

struct AnalysisConfig {
  double sample_rate_hz = 48000;  ///< > 0
  BridgeConfig bridge;            ///< layout, Rref, channel match, input impedance
  double rref_tolerance_rel =
      0.001;  ///< Rref tolerance half-width (rectangular), e.g. 0.001 = 0.1 %
  /// Rref temperature coefficient, ppm/K, >= 0; with rref_temp_span_k it gives the
  /// "rref_tempco" term, half-width tempco * span (rectangular). Metal film: 50 ppm/K over
  /// 5 K (common practice, no source). 0 leaves the term out.
  double rref_tempco_ppm_per_k = 0;
  double rref_temp_span_k = 0;  ///< how far the resistor may sit from its calibration, K, >= 0
  /// Half-width of the reference resistor's own series inductance, henry, >= 0: the
  /// "rref_reactance" term (rectangular; sensitivity through the bridge at each tone).
  /// A non-inductive film resistor: about 20 nH (from memory). 0 leaves the term out.
  double rref_inductance_h = 0;
  /// The input reading node B as R || C, evaluated at each tone; when set it replaces
  /// bridge.input_impedance_ohm.
  std::optional<InputLoad> input_load;
  double input_impedance_u_rel = 0.05;  ///< standard uncertainty of the input impedance, relative
  double channel_gain_u_rel = 0;   ///< standard uncertainty of the channel-match gain, relative
  double channel_phase_u_rad = 0;  ///< standard uncertainty of the channel-match phase
  /// Standard uncertainty of the channel match's interpolation between its calibration
  /// frequencies (calibration_curve.hpp), gain relative and phase; separate budget terms.
  double channel_interp_gain_u_rel = 0, channel_interp_phase_u_rad = 0;
  double volts_per_fs = 0;             ///< peak volts at full scale; 0 = level unknown
  std::vector<double> tones_hz;        ///< analyse these (approximate) frequencies; empty = find
  double min_tone_db = -40;            ///< weakest tone kept, relative to the strongest
  std::optional<Window> window;        ///< nullopt: rectangular if coherent, else Hann
  std::size_t target_blocks = 16;      ///< blocks to aim for (more = better Type A, shorter blocks)
  std::optional<PartKind> force_kind;  ///< report as this kind instead of detecting it
  /// Refuse |V_B/V_A| (after the channel match) above 1.10 as swapped inputs. Off for the
  /// channel-match step itself, where both inputs read node A and the ratio is near 1.
  bool check_swapped = true;
};

struct ToneReading {
  double freq_hz = 0;     ///< measured frequency of the tone (after tracking)
  bool coherent = false;  ///< whole periods per block (rectangular window exact)
  Window window = Window::rectangular;
  std::size_t block_len = 0;
  std::size_t blocks_total = 0;
  std::size_t blocks_used = 0;  ///< after start-up and stop transients are dropped
  SettleResult settle;
  PhaseDrift phase;            ///< drift found on channel A (already tracked out)
  std::complex<double> ratio;  ///< mean V_B / V_A of the used blocks (uncorrected)
  double ratio_u_rel = 0;      ///< standard uncertainty of that mean, relative (Type A)
  UncertainComplex z;          ///< impedance with its Type A covariance and Type B terms
  ImpedanceValues values;
  PartKind kind = PartKind::resistor;
  bool kind_forced = false;
  ScalarUncertainty u_r, u_x, u_mag, u_theta_deg, u_cs, u_cp, u_ls, u_lp, u_rp, u_d, u_q;
  bool r_below_resolution = false;    ///< Rs not distinguishable from 0 (|Rs| <= its U)
  bool x_below_resolution = false;    ///< Xs not distinguishable from 0
  double level_a = 0, level_b = 0;    ///< peak amplitudes, full-scale units
  double snr_a_db = 0, snr_b_db = 0;  ///< per block, from the block spread
  double v_part_rms = 0;  ///< test voltage across the part (0 when the level is unknown)
  double i_part_rms = 0;  ///< test current through it
};

struct AnalysisResult {
  double sample_rate_hz = 0;
  double duration_s = 0;
  std::size_t active_begin = 0, active_end = 0;  ///< excitation found on, samples
  std::size_t harmonics_dropped = 0;
  std::vector<ToneReading> readings;  ///< ascending frequency
  std::vector<std::string> notes;     ///< observations across tones (resonance, ...)
};

/// Failure of the whole analysis. id is stable (listed in docs/errors.md); message says
/// what happened, hint what to do.
class AnalysisError : public std::runtime_error {
 public:
  AnalysisError(std::string id, const std::string& message, std::string hint)
      : std::runtime_error(message), id_(std::move(id)), hint_(std::move(hint)) {}
  const std::string& id() const { return id_; }
  const std::string& hint() const { return hint_; }

 private:
  std::string id_, hint_;
};

/// Recomputes a reading's derived values, their uncertainties, the resolution flags and the
/// part kind from r.z and r.freq_hz (after r.z was changed, e.g. by fixture compensation).
void update_derived(ToneReading& r, std::optional<PartKind> force_kind);

/// One tone's reading from its per-block complex amplitudes at node A and node B (e.g. the
/// periods of a multisine, multisine.hpp): the settling check, bridge solution, Type A from
/// the block spread and the Type B budget that analyze_recording gives each of its tones.
/// config.bridge (channel match, input impedance) and the channel-match terms apply at this
/// tone; tones_hz, window and target_blocks are not used. At least one block, as many for a
/// as for b. Throws AnalysisError (analysis.channels_swapped, analysis.bridge_singular).
/// Example: reading_from_blocks(a, b, 1000, config).z.value is Z at 1 kHz.
ToneReading reading_from_blocks(std::span<const std::complex<double>> a,
                                std::span<const std::complex<double>> b, double freq_hz,
                                const AnalysisConfig& config);

/// Analyses equal-length channels a (node A) and b (node B), samples in full-scale units.
/// Throws AnalysisError (ids recording.*, analysis.*) or std::invalid_argument for a bad config.
AnalysisResult analyze_recording(std::span<const double> a, std::span<const double> b,
                                 const AnalysisConfig& config);

}  // namespace tb::dsp
