// One reading of the part on the jig through an audio device: listen first (a charged
// part shows as a jump), play a bin-exact tone with fade-in and settling, record both
// inputs, and analyse the capture with the same path as `analyze` (recording_analysis).
//
// With a channel-match step (both inputs on node A) the mismatch H(f) of the two inputs
// is measured at the same frequency and divided out; its own scatter enters the Type B
// budget. On the simulated bench that connection is made by the bench itself; on a real
// card the user makes it (a later, guided calibration).
#pragma once

#include <atomic>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "dsp/fixture_correction.hpp"
#include "dsp/recording_analysis.hpp"
#include "server/audio_device.hpp"

namespace tb {

struct MeasureRequest {
  double freq_hz = 1000;    ///< 1 <= f < 0.45 fs; moved to the nearest bin, reported
  double level_fs = 0.5;    ///< DAC peak, full-scale units, (0, 1]
  double duration_s = 1.0;  ///< analysed tone after fade-in and settling
  StreamSpec stream;
  dsp::Layout layout = dsp::Layout::part_low;
  double rref_ohm = 1000;
  double rref_tolerance_rel = 0.001;
  double volts_per_fs = 0;  ///< peak volts at the inputs' full scale; 0 = unknown
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
};

/// Something the technician should know about one reading: a correction it lacks, a
/// signal problem, a level that was lowered. id is stable (docs/errors.md lists them).
struct ReadingNotice {
  std::string id;
  std::string message;  ///< what happened
  std::string hint;     ///< what to do
};

struct Advice {
  double rref_ohm = 0;  ///< the reference of the set nearest |Z| (log scale)
  dsp::Layout layout = dsp::Layout::part_low;
  bool better_than_present = false;
  std::string text;
};

struct MeasureResult {
  dsp::ToneReading reading;
  double requested_hz = 0;
  std::optional<ChannelMatch> channel_match;
  bool fixture_compensated = false;
  Advice advice;
  double pre_listen_peak_fs = 0;  ///< largest input sample before the tone started
  double level_fs = 0;            ///< output level used (lowered from the request if it clipped)
  std::vector<ReadingNotice> notices;
};

/// Listens to both inputs for `seconds` with the output silent; throws tb::Error
/// part.charged when a jump larger than 2 % of full scale shows (a charged part, or a
/// part touching a live circuit): measuring would pass its charge into the card.
double pre_listen(AudioDevice& device, const StreamSpec& spec, double seconds,
                  const std::atomic<bool>* cancel = nullptr);

/// Channel match at one frequency from a capture with both inputs on node A (listens for
/// a charged part first, as measure_once does).
ChannelMatch measure_channel_match(AudioDevice& device, const MeasureRequest& request);

/// One reading (played again at a third of the level, twice at most, if the capture clips),
/// with the channel match divided out and, when given, open/short(/load) fixture
/// compensation applied (its standards measured at the same frequency, Rref and layout).
/// Throws tb::Error (device.*, part.charged, measure.*) or dsp::AnalysisError.
MeasureResult measure_once(AudioDevice& device, const MeasureRequest& request,
                           const std::optional<ChannelMatch>& match,
                           const std::optional<dsp::FixtureStandards>& fixture = std::nullopt);

/// The reference resistor of `available` (ohm) and the layout that suit an impedance:
/// |Z| near Rref gives the lowest divider error; high impedances (>= 10 kohm) go in the
/// part-high layout so the card input loads only the resistor.
Advice advise(double z_mag_ohm, double present_rref_ohm, dsp::Layout present_layout,
              const std::vector<double>& available);

}  // namespace tb
