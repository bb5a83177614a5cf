// Finding the excitation tones in a recording that was not planned by us: a windowed
// FFT (4-term Blackman-Harris, sidelobes below -92 dB so weak tones are not hidden by
// leakage), local peaks above a level and noise threshold, frequency from Gaussian
// interpolation of the peak (parabola through the log magnitudes of three bins).
#pragma once

#include <cstddef>
#include <span>
#include <vector>

namespace tb::dsp {

struct ToneSearchConfig {
  double sample_rate_hz = 48000;
  double min_level_db = -40;  ///< tones weaker than the strongest by more than this are ignored
  double min_snr_db = 25;     ///< and so are peaks less than this above the median floor
  double min_hz = 5;          ///< search range
  double max_hz = 0;          ///< 0: 0.49 * fs
  std::size_t max_tones = 128;
  std::size_t max_fft = 1u << 20;  ///< at most this many samples are transformed (the middle)
  /// A peak at an integer multiple of a stronger tone, this much weaker or more, is the
  /// generator's distortion, not an excitation tone, and is dropped.
  double harmonic_margin_db = 20;
};

struct DetectedTone {
  double freq_hz = 0;
  double amplitude = 0;  ///< peak amplitude, full-scale units (from the interpolated peak)
  double level_db = 0;   ///< relative to the strongest tone
};

struct ToneSearchResult {
  std::vector<DetectedTone> tones;  ///< ascending frequency
  std::size_t harmonics_dropped = 0;
  double floor = 0;   ///< median spectral magnitude, full-scale units
  double bin_hz = 0;  ///< resolution of the search
};

/// x: the steady part of channel A. Throws std::invalid_argument if x has < 64 samples.
ToneSearchResult detect_tones(std::span<const double> x, const ToneSearchConfig& config);

}  // namespace tb::dsp
