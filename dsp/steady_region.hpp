// Where the excitation is on: the recording's active part, found from the short-term
// AC level of channel A (the generator node; DC offsets ignored), with leading and trailing silence
// and the partial frames at the edges removed. Start-up transients inside the active part are
// removed later, block by block, by check_settled() on the channel ratio.
#pragma once

#include <cstddef>
#include <span>

namespace tb::dsp {

struct ActiveRegion {
  std::size_t begin = 0;  ///< first sample of the active part
  std::size_t end = 0;    ///< one past the last
  double level_rms = 0;   ///< typical rms level of channel A while active, full-scale units
  bool found = false;
};

struct ActiveRegionConfig {
  double sample_rate_hz = 48000;
  double frame_s = 0.01;        ///< level is measured in frames of this length
  double threshold_db = -20;    ///< active: frame rms within this of the loud level
  double min_level_rms = 1e-6;  ///< below this the recording is silence (about -120 dBFS)
};

/// The longest contiguous run of active frames, shrunk by one frame at each edge.
ActiveRegion find_active_region(std::span<const double> a, const ActiveRegionConfig& config);

struct ClipReport {
  std::size_t clipped_runs = 0;  ///< runs of >= 3 equal samples at the extreme of the channel
  double peak = 0;               ///< largest |x|
};

/// Flat-topped peaks: at least three consecutive equal samples at (or within 0.1 % of)
/// the channel's extreme, when that extreme is at least 0.99 of full scale.
ClipReport detect_clipping(std::span<const double> x);

}  // namespace tb::dsp
