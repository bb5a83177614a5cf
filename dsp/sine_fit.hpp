// Least-squares sine fit in the manner of IEEE Std 1057 (four-parameter fit: amplitude
// of the cosine and sine terms, offset, and frequency by Gauss-Newton), generalised to
// several tones fitted jointly so that each tone's estimate is not pulled by the others.
// Used to refine frequencies found by tone_detect for recordings that are not bin-exact.
#pragma once

#include <complex>
#include <cstddef>
#include <span>
#include <vector>

namespace tb::dsp {

struct SineFitConfig {
  double sample_rate_hz = 48000;
  int max_iterations = 12;
  /// At most this many samples (the middle of x) enter the fit; the frequency's
  /// standard error falls as N^-1.5, so 2^16 samples already resolve micro-hertz shifts.
  std::size_t max_samples = 1u << 16;
  /// Convergence: every frequency step below this fraction of fs / N.
  double tolerance_bins = 1e-7;
};

struct SineFitResult {
  std::vector<double> freq_hz;  ///< refined frequencies, same order as the guesses
  std::vector<std::complex<double>>
      amplitude;  ///< peak amplitude, phase at the first fitted sample
  double offset = 0;
  double residual_rms = 0;
  int iterations = 0;
  bool converged = false;
};

/// Fits x with offset + sum of tones near freq_guess_hz (0 < f < fs/2, at least one).
/// Throws std::invalid_argument for bad arguments or fewer than 3K+1 samples.
SineFitResult fit_sines(std::span<const double> x, std::span<const double> freq_guess_hz,
                        const SineFitConfig& config);

}  // namespace tb::dsp
