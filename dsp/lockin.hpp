// Lock-in (synchronous) detection of both jig channels at a set of tones, block by block.
//
// For each block of block_len samples and each tone f, the complex peak amplitude
//   A = (2 / sum w) * sum_n x[n] w[n] exp(-j 2 pi f (n0 + n) / fs)
// so that x(t) = Re(A exp(j 2 pi f t)) with t counted from the first sample ever pushed
// (n0 is the block's absolute start). With a rectangular window and whole periods per
// block this is exactly one DFT bin; any other frequency is allowed (generalised
// Goertzel), with a window against leakage. The absolute phase reference makes a
// frequency error show as a steady phase slope across blocks (see phase_track.hpp).
//
// Verbs: build from LockinConfig, push() samples of any length, result(), reset().
#pragma once

#include <complex>
#include <cstddef>
#include <span>
#include <vector>

#include "dsp/window.hpp"

namespace tb::dsp {

struct LockinConfig {
  double sample_rate_hz = 48000;  ///< > 0
  std::vector<double> tone_hz;    ///< 0 < f < fs/2, at least one
  std::size_t block_len = 4800;   ///< samples per block, >= 2
  Window window = Window::rectangular;
  std::size_t first_index = 0;  ///< absolute index of the first pushed sample
};

struct LockinBlock {
  std::size_t start = 0;                ///< absolute index of the block's first sample
  std::vector<std::complex<double>> a;  ///< channel A (node A), one per tone, full-scale units
  std::vector<std::complex<double>> b;  ///< channel B (node B)
};

class Lockin {
 public:
  /// Throws std::invalid_argument for an empty tone list, a frequency outside (0, fs/2)
  /// or a block shorter than 2 samples.
  explicit Lockin(LockinConfig config);

  /// Appends equal-length spans of both channels; each completed block is demodulated.
  void push(std::span<const double> a, std::span<const double> b);
  const std::vector<LockinBlock>& result() const { return blocks_; }
  void reset();
  const LockinConfig& config() const { return config_; }

 private:
  void finish_block();

  LockinConfig config_;
  std::vector<double> window_;
  double gain_ = 0;  // 2 / sum(w)
  std::vector<double> buf_a_, buf_b_;
  std::size_t fill_ = 0;
  std::size_t next_start_ = 0;
  std::vector<LockinBlock> blocks_;
};

/// Complex amplitude of one block and one tone, the same definition as Lockin, for a
/// block starting at absolute index n0. Two channels at once share the recurrence cost.
void demodulate(std::span<const double> a, std::span<const double> b, std::span<const double> w,
                double gain, double freq_hz, double sample_rate_hz, std::size_t n0,
                std::complex<double>& out_a, std::complex<double>& out_b);

/// Straightforward per-sample sin/cos reference of the same quantity (one channel),
/// kept for the benchmark and tests; slower, same result.
std::complex<double> demodulate_reference(std::span<const double> x, std::span<const double> w,
                                          double freq_hz, double sample_rate_hz, std::size_t n0);

}  // namespace tb::dsp
