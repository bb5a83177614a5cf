// Synthetic jig recordings for tests: the steady-state node voltages of an ideal jig
// around a part of known impedance, with optional silence, fade, noise and a recording
// clock that runs off by some ppm. Analytic, so the truth is exact.
#pragma once

#include <complex>
#include <cstdint>
#include <functional>
#include <span>
#include <string>
#include <vector>

#include "dsp/bridge.hpp"

namespace tb::test {

struct JigSignalSpec {
  double sample_rate_hz = 48000;
  double duration_s = 1.0;  ///< tone on
  double lead_silence_s = 0;
  double tail_silence_s = 0;
  double fade_s = 0.0;
  std::vector<double> freqs_hz{1000};
  std::vector<double> amplitudes{0.5};  ///< peak at node A, full-scale units
  std::vector<double> phases_rad{0};
  std::function<std::complex<double>(double)> z_of_f;  ///< the part's impedance
  dsp::Layout layout = dsp::Layout::part_low;
  double rref_ohm = 1000;
  double noise_rms = 0;  ///< white Gaussian on each channel, independent
  std::uint64_t seed = 1;
  double clock_ppm = 0;  ///< the recorder's clock runs fast by this much
};

struct Stereo {
  std::vector<double> a, b;
};

Stereo make_jig_signal(const JigSignalSpec& spec);

/// Band-limited resampling by a windowed sinc (Kaiser, 64 taps each side): output sample
/// n is the input at time n * ratio. Used to make a recording "from another clock".
std::vector<double> resample(std::span<const double> x, double ratio);

/// A fresh, empty directory under the system temp folder.
std::string make_temp_dir(const std::string& tag);

/// Relative vector error |z - truth| / |truth|.
double vector_error(std::complex<double> z, std::complex<double> truth);

}  // namespace tb::test
