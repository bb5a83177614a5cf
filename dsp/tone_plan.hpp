// Coherent excitation: every tone on an exact DFT bin of the analysis block, so each
// block holds a whole number of periods and the rectangular lock-in is exact.
//
// Timeline of a planned excitation (samples):
//   [fade-in][settling, discarded][block 0][block 1]...[block n-1]
// The fade-in (raised cosine) keeps the part and the card's coupling capacitors from a
// step; settling lets the jig's own time constants die out before analysis starts.
#pragma once

#include <cstddef>
#include <span>
#include <vector>

namespace tb::dsp {

struct TonePlanConfig {
  double sample_rate_hz = 48000;     ///< > 0
  std::size_t block_len = 4800;      ///< samples per analysis block, >= 16
  std::vector<double> requested_hz;  ///< 0 < f < 0.5 * fs; at least one
  double fade_in_s = 0.02;           ///< >= 0
  double settle_s = 0.05;            ///< >= 0, discarded before analysis
  std::size_t blocks = 8;            ///< analysis blocks, >= 1
};

struct PlannedTone {
  double requested_hz = 0;
  double achieved_hz = 0;  ///< bin * fs / block_len: what is really played
  std::size_t bin = 0;     ///< 1 <= bin < block_len / 2
};

struct TonePlan {
  double sample_rate_hz = 0;
  std::size_t block_len = 0;
  std::vector<PlannedTone> tones;
  std::size_t fade_in_samples = 0;
  std::size_t settle_samples = 0;
  std::size_t blocks = 0;
  std::size_t analysis_start() const { return fade_in_samples + settle_samples; }
  std::size_t total_samples() const { return analysis_start() + blocks * block_len; }
};

/// Rounds each request to the nearest bin. Throws std::invalid_argument for a frequency
/// outside (0, fs/2), a block too short for the lowest tone, or two tones on one bin.
/// Example: plan_tones({48000, 4800, {1000.3}}).tones[0].achieved_hz == 1000.0.
TonePlan plan_tones(const TonePlanConfig& config);

/// Schroeder phases phi_n = -pi n (n - 1) / N for n = 1..N (IEEE Trans. IT-16(1), 1970):
/// flat multisines with a low crest factor.
std::vector<double> schroeder_phases(std::size_t n_tones);

/// The excitation: sum of amplitude[i] * cos(2 pi f_i t + phase[i]) with the fade-in
/// applied, total_samples() long. amplitudes/phases must have one entry per tone.
std::vector<double> synthesize(const TonePlan& plan, std::span<const double> amplitudes,
                               std::span<const double> phases_rad);

/// Peak over rms of a signal (the crest factor).
double crest_factor(std::span<const double> x);

}  // namespace tb::dsp
