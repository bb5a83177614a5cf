// A sweep in one capture: every frequency of a sweep plan played at once as a multisine
// (dsp/multisine.hpp), the capture analysed per period, and each tone turned into a reading
// of the same form as a stepped reading (measurement.hpp), with its own channel match and
// fixture compensation taken at that tone's frequency.
//
// Timeline: pre-listen (output silent, a charged part refuses the sweep), fade-in, settling
// periods (at least 0.1 s, discarded), `periods` analysed periods, fade-out. The whole
// period peaks at the request's level (so the output never passes the level cap); each
// tone gets level / crest factor / sqrt(tones / 2) or so. A clipped capture is played again
// at a third of the level (twice at most), as a stepped reading is.
//
// The Type A of each reading is the period-to-period spread of its ratio (as the blocks of a
// stepped reading): it sees drift and settling, which the neighbouring-bin noise estimate of
// the analysis would miss. Type B terms (mains hum from the pre-listen included) are those of
// a stepped reading at the same frequency.
#pragma once

#include <optional>
#include <span>
#include <vector>

#include "dsp/fixture_correction.hpp"
#include "dsp/multisine.hpp"
#include "server/measurement.hpp"

namespace tb {

/// The multisine for a sweep plan: a log grid on the requested frequencies (moved onto the
/// period's bins, the lowest kept distinct) or an odd-odd grid (bins b mod 4 = 1 only),
/// peak = request.level_fs (> 0, at most level_cap_fs). Throws tb::Error measure.bad_level
/// / measure.bad_frequency.
dsp::MultisineDesign plan_multisine(const MeasureRequest& request, std::span<const double> freqs_hz,
                                    dsp::MultisineGrid grid = dsp::MultisineGrid::log);

/// Settling periods for a design: at least one period and at least 0.1 s.
std::size_t multisine_settle_periods(const dsp::MultisineDesign& design);

struct MultisineSweep {
  dsp::MultisineDesign design;  ///< as played (its level lowered if the capture clipped)
  dsp::MultisineAnalysis analysis;
  std::vector<MeasureResult> points;  ///< one per tone, the design's order
  /// Per tone: why it could not be read (e.g. analysis.bridge_singular), else empty; its
  /// point then holds no reading.
  std::vector<std::optional<ReadingNotice>> errors;
  double level_fs = 0;  ///< peak output level used
  double audio_s = 0;   ///< seconds of audio played, pre-listen included
};

/// Plays `design` for settle + `periods` (2 .. 256) periods and reads every tone;
/// matches[i] / fixtures[i] belong to design.tones[i] (empty spans: none). request.freq_hz
/// is ignored. Throws as measure_once does (task.cancelled: nothing is returned).
MultisineSweep measure_multisine(AudioDevice& device, const MeasureRequest& request,
                                 const dsp::MultisineDesign& design, std::size_t periods,
                                 std::span<const std::optional<ChannelMatch>> matches,
                                 std::span<const std::optional<dsp::FixtureStandards>> fixtures);

}  // namespace tb
