#include "dsp/lockin.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <numeric>
#include <stdexcept>
#include <string>

namespace tb::dsp {

namespace {

// exp(-j 2 pi f n0 / fs) with the product reduced to a fraction of a cycle first, so the
// reference stays exact for recordings of many millions of samples.
std::complex<double> start_phasor(double freq_hz, double sample_rate_hz, std::size_t n0) {
  const double cycles = std::fmod(freq_hz / sample_rate_hz * static_cast<double>(n0), 1.0);
  return std::polar(1.0, -2 * std::numbers::pi * cycles);
}

}  // namespace

Lockin::Lockin(LockinConfig config) : config_(std::move(config)) {
  if (config_.tone_hz.empty()) throw std::invalid_argument("lock-in: no tone to detect");
  if (config_.block_len < 2) throw std::invalid_argument("lock-in: block shorter than 2 samples");
  for (double f : config_.tone_hz) {
    if (!(f > 0) || !(f < 0.5 * config_.sample_rate_hz)) {
      throw std::invalid_argument("lock-in: " + std::to_string(f) + " Hz is outside (0, fs/2)");
    }
  }
  window_ = make_window(config_.window, config_.block_len);
  gain_ = 2.0 / std::accumulate(window_.begin(), window_.end(), 0.0);
  buf_a_.resize(config_.block_len);
  buf_b_.resize(config_.block_len);
  next_start_ = config_.first_index;
}

void Lockin::reset() {
  fill_ = 0;
  next_start_ = config_.first_index;
  blocks_.clear();
}

void Lockin::push(std::span<const double> a, std::span<const double> b) {
  if (a.size() != b.size()) throw std::invalid_argument("lock-in: channels differ in length");
  std::size_t i = 0;
  while (i < a.size()) {
    const std::size_t take = std::min(a.size() - i, config_.block_len - fill_);
    std::copy_n(a.begin() + static_cast<std::ptrdiff_t>(i), take,
                buf_a_.begin() + static_cast<std::ptrdiff_t>(fill_));
    std::copy_n(b.begin() + static_cast<std::ptrdiff_t>(i), take,
                buf_b_.begin() + static_cast<std::ptrdiff_t>(fill_));
    fill_ += take;
    i += take;
    if (fill_ == config_.block_len) finish_block();
  }
}

void Lockin::finish_block() {
  LockinBlock block;
  block.start = next_start_;
  block.a.resize(config_.tone_hz.size());
  block.b.resize(config_.tone_hz.size());
  // A rectangular window is passed as empty so the loop skips the multiply.
  const std::span<const double> window =
      config_.window == Window::rectangular ? std::span<const double>{} : window_;
  for (std::size_t t = 0; t < config_.tone_hz.size(); ++t) {
    demodulate(buf_a_, buf_b_, window, gain_, config_.tone_hz[t], config_.sample_rate_hz,
               block.start, block.a[t], block.b[t]);
  }
  blocks_.push_back(std::move(block));
  next_start_ += config_.block_len;
  fill_ = 0;
}

void demodulate(std::span<const double> a, std::span<const double> b, std::span<const double> w,
                double gain, double freq_hz, double sample_rate_hz, std::size_t n0,
                std::complex<double>& out_a, std::complex<double>& out_b) {
  // Goertzel recurrence s[n] = x[n] + 2 cos(w) s[n-1] - s[n-2]; then
  // y = s[N-1] - exp(-jw) s[N-2] = exp(jw(N-1)) * sum x[n] exp(-jwn).
  // Two independent chains (A and B) run in one loop for instruction-level parallelism.
  const std::size_t n = a.size();
  const double omega = 2 * std::numbers::pi * freq_hz / sample_rate_hz;
  const double coeff = 2 * std::cos(omega);
  double a1 = 0, a2 = 0, b1 = 0, b2 = 0;
  const bool windowed = !w.empty();
  for (std::size_t i = 0; i < n; ++i) {
    const double wa = windowed ? a[i] * w[i] : a[i];
    const double wb = windowed ? b[i] * w[i] : b[i];
    const double a0 = wa + coeff * a1 - a2;
    const double b0 = wb + coeff * b1 - b2;
    a2 = a1;
    a1 = a0;
    b2 = b1;
    b1 = b0;
  }
  const std::complex<double> back = std::polar(1.0, -omega);
  // Undo exp(jw(N-1)) with the phase reduced to a fraction of a cycle.
  const double tail_cycles = std::fmod(freq_hz / sample_rate_hz * static_cast<double>(n - 1), 1.0);
  const std::complex<double> rot = std::polar(gain, -2 * std::numbers::pi * tail_cycles) *
                                   start_phasor(freq_hz, sample_rate_hz, n0);
  out_a = (a1 - back * a2) * rot;
  out_b = (b1 - back * b2) * rot;
}

std::complex<double> demodulate_reference(std::span<const double> x, std::span<const double> w,
                                          double freq_hz, double sample_rate_hz, std::size_t n0) {
  double re = 0, im = 0, sum_w = 0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    const double wi = w.empty() ? 1.0 : w[i];
    const double ph = 2 * std::numbers::pi * freq_hz * static_cast<double>(n0 + i) / sample_rate_hz;
    re += x[i] * wi * std::cos(ph);
    im -= x[i] * wi * std::sin(ph);
    sum_w += wi;
  }
  return {2 * re / sum_w, 2 * im / sum_w};
}

}  // namespace tb::dsp
