#include "dsp/tone_plan.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <set>
#include <stdexcept>
#include <string>

namespace tb::dsp {

TonePlan plan_tones(const TonePlanConfig& c) {
  if (!(c.sample_rate_hz > 0)) throw std::invalid_argument("tone plan: sample rate must be > 0");
  if (c.block_len < 16) throw std::invalid_argument("tone plan: block must hold >= 16 samples");
  if (c.requested_hz.empty()) throw std::invalid_argument("tone plan: no tone requested");
  if (c.blocks < 1) throw std::invalid_argument("tone plan: at least one block");
  if (c.fade_in_s < 0 || c.settle_s < 0)
    throw std::invalid_argument("tone plan: fade-in and settling must be >= 0");
  TonePlan plan;
  plan.sample_rate_hz = c.sample_rate_hz;
  plan.block_len = c.block_len;
  plan.blocks = c.blocks;
  plan.fade_in_samples = static_cast<std::size_t>(std::lround(c.fade_in_s * c.sample_rate_hz));
  plan.settle_samples = static_cast<std::size_t>(std::lround(c.settle_s * c.sample_rate_hz));
  const double bin_hz = c.sample_rate_hz / static_cast<double>(c.block_len);
  std::set<std::size_t> used;
  for (double f : c.requested_hz) {
    if (!(f > 0) || !(f < 0.5 * c.sample_rate_hz)) {
      throw std::invalid_argument(
          "tone plan: " + std::to_string(f) +
          " Hz is outside 0 < f < fs/2 = " + std::to_string(0.5 * c.sample_rate_hz) + " Hz");
    }
    const auto bin = static_cast<std::size_t>(std::llround(f / bin_hz));
    if (bin < 1 || bin >= c.block_len / 2) {
      throw std::invalid_argument("tone plan: " + std::to_string(f) +
                                  " Hz needs a longer block (bin spacing is " +
                                  std::to_string(bin_hz) + " Hz)");
    }
    if (!used.insert(bin).second) {
      throw std::invalid_argument("tone plan: two tones fall on the bin at " +
                                  std::to_string(static_cast<double>(bin) * bin_hz) + " Hz");
    }
    plan.tones.push_back({f, static_cast<double>(bin) * bin_hz, bin});
  }
  return plan;
}

std::vector<double> schroeder_phases(std::size_t n_tones) {
  std::vector<double> phases(n_tones);
  const double n_total = static_cast<double>(n_tones);
  for (std::size_t i = 0; i < n_tones; ++i) {
    const double n = static_cast<double>(i + 1);
    phases[i] = std::remainder(-std::numbers::pi * n * (n - 1) / n_total, 2 * std::numbers::pi);
  }
  return phases;
}

std::vector<double> synthesize(const TonePlan& plan, std::span<const double> amplitudes,
                               std::span<const double> phases_rad) {
  if (amplitudes.size() != plan.tones.size() || phases_rad.size() != plan.tones.size()) {
    throw std::invalid_argument("synthesize: one amplitude and one phase per tone");
  }
  const std::size_t total = plan.total_samples();
  std::vector<double> out(total, 0.0);
  for (std::size_t t = 0; t < plan.tones.size(); ++t) {
    // Phase from the integer bin, wrapped per sample index modulo the block, keeps the
    // argument small so a long signal stays exactly periodic in double precision.
    const double w = 2 * std::numbers::pi * static_cast<double>(plan.tones[t].bin) /
                     static_cast<double>(plan.block_len);
    for (std::size_t n = 0; n < total; ++n) {
      const auto k = static_cast<double>(n % plan.block_len);
      out[n] += amplitudes[t] * std::cos(w * k + phases_rad[t]);
    }
  }
  const std::size_t fade = std::min(plan.fade_in_samples, total);
  for (std::size_t n = 0; n < fade; ++n) {
    const double x = static_cast<double>(n) / static_cast<double>(fade);
    out[n] *= 0.5 - 0.5 * std::cos(std::numbers::pi * x);
  }
  return out;
}

double crest_factor(std::span<const double> x) {
  double peak = 0, sum2 = 0;
  for (double v : x) {
    peak = std::max(peak, std::abs(v));
    sum2 += v * v;
  }
  if (x.empty() || sum2 == 0) return 0;
  return peak / std::sqrt(sum2 / static_cast<double>(x.size()));
}

}  // namespace tb::dsp
