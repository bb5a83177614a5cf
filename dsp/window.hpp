// Analysis windows for the lock-in and for spectra.
//
// rectangular: for coherent tones (whole periods in the block) — exact, 1.00 bin noise
//   bandwidth. hann: where a non-coherent tone or hum would leak (sidelobes fall
//   18 dB/octave), 1.50 bins. blackman_harris4: tone search in spectra with a wide
//   dynamic range (sidelobes below -92 dB), 2.00 bins.
// Noise bandwidths after Harris, Proc. IEEE 66(1), 1978.
#pragma once

#include <cstddef>
#include <optional>
#include <span>
#include <string_view>
#include <vector>

namespace tb::dsp {

enum class Window { rectangular, hann, blackman_harris4 };

std::string_view window_name(Window window);  // "rectangular", "hann", "blackman-harris"
std::optional<Window> parse_window(std::string_view text);

/// Periodic (DFT-even) window of n >= 1 samples, so a whole-period block stays coherent.
std::vector<double> make_window(Window window, std::size_t n);

/// Equivalent noise bandwidth in bins: n * sum(w^2) / sum(w)^2 (1.0 / 1.5 / 2.0 for large n).
double noise_bandwidth_bins(std::span<const double> w);

}  // namespace tb::dsp
