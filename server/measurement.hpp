// One reading of the part on the jig through an audio device: listen first (a charged
// part shows as a jump), play a bin-exact tone with fade-in and settling, record both
// inputs, and analyse the capture with the same path as `analyze` (recording_analysis).
//
// With a channel-match step (both inputs on node A) the mismatch H(f) of the two inputs
// is measured at the same frequency and divided out; its own scatter enters the Type B
// budget. On the simulated bench that connection is made by the bench itself; on a real
// card the user makes it (a later, guided calibration).
//
// Around the reading it checks the signals (dsp/signal_checks.hpp) and reports what it
// finds as notices: DC offset and hum from the pre-listen (output silent), a test
// frequency on a mains harmonic, a weak signal, a level lowered for clipping. The test
// level follows the part class (dsp/test_level.hpp): electrolytics at most 0.5 V rms across
// the part, in-circuit parts at most 100 mV peak (and the reading is indicative only).
#pragma once

#include <atomic>
#include <functional>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "dsp/fixture_correction.hpp"
#include "dsp/recording_analysis.hpp"
#include "dsp/test_level.hpp"
#include "server/audio_device.hpp"
#include "server/capture.hpp"

namespace tb {

struct MeasureRequest {
  double freq_hz = 1000;  ///< 1 <= f < 0.45 fs; moved to the nearest bin, reported
  /// DAC peak, full-scale units, (0, 1]; 0 = automatic: a short probe at a low level, then
  /// the level that puts the larger input near -6 dBFS peak, within level_cap_fs and the
  /// part class's voltage cap. A fixed level with a capped part class is probed too and
  /// lowered to the cap when it would pass it.
  double level_fs = 0.5;
  double level_cap_fs = 1.0;  ///< highest output level an automatic level may choose, (0, 1]
  dsp::PartClass part_class = dsp::PartClass::general;
  double duration_s = 1.0;  ///< analysed tone after fade-in and settling
  /// Settling time played and discarded before analysis, 0.01 .. 5 s; a sweep sets it from
  /// the jig's response time (dsp/sweep_refine.hpp).
  double settle_s = 0.1;
  StreamSpec stream;
  dsp::Layout layout = dsp::Layout::part_low;
  double rref_ohm = 1000;
  double rref_tolerance_rel = 0.001;
  /// Peak volts at the inputs' full scale; 0 = unknown. A capped part class (electrolytic,
  /// in_circuit) needs it: measure_once refuses such a request with 0 (measure.level_unknown).
  double volts_per_fs = 0;
  /// True when volts_per_fs comes from a level calibration (a meter reading at node A); false
  /// when it is a setting, and a capped part class then adds the notice level.uncalibrated.
  bool level_calibrated = false;
  double mains_hz = 50;  ///< local mains (50 or 60 Hz), for the hum and near-harmonic checks
  double rref_tempco_ppm_per_k = 50;  ///< Rref temperature coefficient (metal film), ppm/K
  double rref_temp_span_k = 5;        ///< how far Rref may sit from its calibration, K
  double rref_inductance_h = 20e-9;   ///< half-width of Rref's series inductance, H
  /// Fraction of the card's input loading left after correction, for the advice: 1 = none
  /// applied (no input-impedance calibration), [0, 1].
  double input_loading_residual_rel = 1.0;
  /// The reference resistors the jig can switch to, for the advice.
  std::vector<double> rref_set_ohm{1, 10, 100, 1000, 10000, 100000};
  std::optional<dsp::PartKind> force_kind;
  /// The engine's cancel flag, or null: when it turns true the capture in progress stops
  /// and the call throws tb::Error task.cancelled.
  const std::atomic<bool>* cancel = nullptr;
};

struct ChannelMatch {
  std::complex<double> h{1, 0};  ///< V_B / V_A with both inputs on node A
  double u_gain_rel = 0, u_phase_rad = 0;
  /// Between calibration frequencies: the interpolation's standard uncertainty.
  double interp_gain_u_rel = 0, interp_phase_u_rad = 0;
  double level_a_fs = 0;  ///< peak level at node A during the step, full-scale units
  double level_fs = 0;    ///< output level the step used
};

/// Something the technician should know about one reading: a correction it lacks, a
/// signal problem, a level that was lowered. id is stable (docs/errors.md lists them).
struct ReadingNotice {
  std::string id;
  std::string message;  ///< what happened
  std::string hint;     ///< what to do
};

struct Advice {
  double rref_ohm = 0;  ///< the advised reference (the present one when no change is worth it)
  dsp::Layout layout = dsp::Layout::part_low;
  bool better_than_present = false;  ///< the advised set-up predicts > 1.5x lower uncertainty
  double u_now_rel = 0;              ///< predicted expanded (k = 2) relative uncertainty of Z now
  double u_advised_rel = 0;          ///< the same with the advised Rref and layout
  std::string text;                  ///< empty when no change is advised
};

struct MeasureResult {
  dsp::ToneReading reading;
  double requested_hz = 0;
  std::optional<ChannelMatch> channel_match;
  bool fixture_compensated = false;
  /// Read swap-and-average (server/swap_average.hpp): the inputs' mismatch cancelled
  /// without a channel match; channel_match is then empty.
  bool swap_averaged = false;
  Advice advice;
  double pre_listen_peak_fs = 0;  ///< largest input sample before the tone started
  double level_fs = 0;            ///< output level used (lowered from the request if it clipped)
  dsp::LevelLimit level_limited_by = dsp::LevelLimit::requested;  ///< what set level_fs
  bool indicative = false;  ///< in-circuit: no pass/fail verdict may be given on this reading
  std::vector<ReadingNotice> notices;
};

/// Listens to both inputs for `seconds` with the output silent; throws tb::Error
/// part.charged when a jump larger than 2 % of full scale shows (a charged part, or a
/// part touching a live circuit): measuring would pass its charge into the card.
double pre_listen(AudioDevice& device, const StreamSpec& spec, double seconds,
                  const std::atomic<bool>* cancel = nullptr);

/// pre_listen that also hands back what it heard (for the mains-hum terms); sets `peak`.
Capture pre_listen_capture(AudioDevice& device, const StreamSpec& spec, double seconds,
                           const std::atomic<bool>* cancel, double& peak);

/// The mains-hum terms (mains_hum_real, mains_hum_imag) that measure_once adds to a reading
/// whose tone lies near a mains harmonic, from what the silent capture held there.
void add_mains_hum_terms(dsp::ToneReading& reading, const Capture& silent,
                         const MeasureRequest& request);

/// Channel match at one frequency from a capture with both inputs on node A (listens for
/// a charged part first, as measure_once does).
ChannelMatch measure_channel_match(AudioDevice& device, const MeasureRequest& request);

/// The signal notices of one reading (ids in docs/errors.md): from the pre-listen capture
/// (output silent) input.dc_offset and signal.hum, when `silent` is given; from the request's
/// frequency signal.near_mains and signal.near_nyquist; from out.reading signal.weak. For
/// paths that do not go through measure_once (the multisine sweep's tones).
void add_signal_notices(MeasureResult& out, const Capture* silent, const MeasureRequest& request);

/// The frequency a reading of this request really plays: the requested one moved to the
/// nearest bin of its analysis block (10 Hz steps from 40 Hz up at 48 kHz, finer below).
/// Throws as measure_once does for a bad frequency, level or duration.
double played_frequency_hz(const MeasureRequest& request);

/// One reading (played again at a third of the level, twice at most, if the capture clips),
/// with the channel match divided out and, when given, open/short(/load) fixture
/// compensation applied (its standards measured at the same frequency, Rref and layout).
/// With a capped part class the part voltage of the reading is checked against the cap and
/// the tone played once more, lower, if a non-linear part passed it.
/// Notices (ids in docs/errors.md): input.dc_offset, signal.near_mains, signal.hum,
/// signal.weak, level.lowered, level.uncalibrated, level.above_part_cap, reading.indicative.
/// Throws tb::Error (device.*, part.charged, measure.* including measure.level_unknown for a
/// capped part class without volts_per_fs) or dsp::AnalysisError.
MeasureResult measure_once(AudioDevice& device, const MeasureRequest& request,
                           const std::optional<ChannelMatch>& match,
                           const std::optional<dsp::FixtureStandards>& fixture = std::nullopt);

/// One capture with no correction at all and without the swapped-inputs check (a step whose
/// channel 2 may read node A, as in swap-and-average). Listens for a charged part first and
/// plays again at a third of the level if the capture clips, as measure_once does.
/// .reading.ratio is the uncorrected mean V_B/V_A with its Type A in .ratio_u_rel.
/// Throws as measure_once does.
struct RawCapture {
  dsp::ToneReading reading;
  double level_fs = 0;            ///< output level used
  double pre_listen_peak_fs = 0;  ///< largest input sample before the tone started
};
RawCapture capture_uncorrected(AudioDevice& device, const MeasureRequest& request);

/// The analysis settings a reading at freq_hz uses (layout, Rref and its budget terms, level),
/// with `match` divided out and its uncertainties in the budget when given.
dsp::AnalysisConfig analysis_config_for(const MeasureRequest& request, double freq_hz,
                                        const std::optional<ChannelMatch>& match);

/// The Rref of request.rref_set_ohm (or the present one) and the layout with the lowest
/// predicted uncertainty for this reading's impedance (dsp/setup_advice.hpp), from the
/// reading's own noise, the request's Rref tolerance and loading residual. A change is
/// advised only when it predicts more than 1.5 times lower uncertainty (so near-ties keep
/// what is on the jig). A reading without a usable |Z| (0 or not finite) gets no advice.
Advice advise(const dsp::ToneReading& reading, const MeasureRequest& request);

/// Node A must hold the played level through the analysed stretch
/// (dsp::check_source_steady): a generator that falls silent or jumps mid-reading (a loose
/// lead, a card that stopped playing, a jig unplugged) gives a ratio of nothing in
/// particular. Checks a[begin, end) in blocks of `block` samples against the played rms
/// (full-scale units). Throws tb::Error signal.lost (silent, or a dropout) or
/// signal.level_changed (a block more than 10 % from the others).
void check_generator_level(std::span<const double> a, std::size_t begin, std::size_t end,
                           std::size_t block, double played_rms_fs, double sample_rate_hz);

}  // namespace tb
