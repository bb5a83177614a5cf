#include "dsp/window.hpp"

#include <cmath>
#include <numbers>

namespace tb::dsp {

std::string_view window_name(Window window) {
  switch (window) {
    case Window::rectangular:
      return "rectangular";
    case Window::hann:
      return "hann";
    case Window::blackman_harris4:
      return "blackman-harris";
  }
  return "?";
}

std::optional<Window> parse_window(std::string_view text) {
  if (text == "rectangular" || text == "rect") return Window::rectangular;
  if (text == "hann") return Window::hann;
  if (text == "blackman-harris" || text == "bh4") return Window::blackman_harris4;
  return std::nullopt;
}

std::vector<double> make_window(Window window, std::size_t n) {
  std::vector<double> w(n, 1.0);
  const double step = 2.0 * std::numbers::pi / static_cast<double>(n);
  for (std::size_t i = 0; i < n; ++i) {
    const double x = step * static_cast<double>(i);
    switch (window) {
      case Window::rectangular:
        break;
      case Window::hann:
        w[i] = 0.5 - 0.5 * std::cos(x);
        break;
      case Window::blackman_harris4:
        // 4-term Blackman-Harris coefficients (Harris 1978, -92 dB sidelobes).
        w[i] =
            0.35875 - 0.48829 * std::cos(x) + 0.14128 * std::cos(2 * x) - 0.01168 * std::cos(3 * x);
        break;
    }
  }
  return w;
}

double noise_bandwidth_bins(std::span<const double> w) {
  double s1 = 0, s2 = 0;
  for (double v : w) {
    s1 += v;
    s2 += v * v;
  }
  return static_cast<double>(w.size()) * s2 / (s1 * s1);
}

}  // namespace tb::dsp
