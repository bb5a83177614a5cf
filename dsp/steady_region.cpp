#include "dsp/steady_region.hpp"

#include <algorithm>
#include <cmath>
#include <vector>

namespace tb::dsp {

ActiveRegion find_active_region(std::span<const double> a, const ActiveRegionConfig& config) {
  ActiveRegion out;
  const auto frame = std::max<std::size_t>(
      64, static_cast<std::size_t>(std::lround(config.frame_s * config.sample_rate_hz)));
  const std::size_t frames = a.size() / frame;
  if (frames < 3) {
    // Too short to tell silence from signal: take everything if anything is there.
    double ss = 0;
    for (double v : a)
      ss += v * v;
    out.level_rms = a.empty() ? 0 : std::sqrt(ss / static_cast<double>(a.size()));
    out.found = out.level_rms > config.min_level_rms;
    out.end = out.found ? a.size() : 0;
    return out;
  }
  std::vector<double> rms(frames);
  // AC level of each frame (its mean removed): a DC offset of the card, or a DC step
  // before the tone starts, is not excitation.
  for (std::size_t f = 0; f < frames; ++f) {
    double sum = 0, ss = 0;
    for (std::size_t i = f * frame; i < (f + 1) * frame; ++i) {
      sum += a[i];
      ss += a[i] * a[i];
    }
    const double mean = sum / static_cast<double>(frame);
    rms[f] = std::sqrt(std::max(0.0, ss / static_cast<double>(frame) - mean * mean));
  }
  // The loud level is a high percentile rather than the maximum, so one click or the
  // start-up surge does not set it.
  std::vector<double> sorted = rms;
  const auto p90 = sorted.begin() + static_cast<std::ptrdiff_t>((frames - 1) * 9 / 10);
  std::nth_element(sorted.begin(), p90, sorted.end());
  const double loud = *p90;
  if (loud <= config.min_level_rms) return out;
  const double limit = loud * std::pow(10.0, config.threshold_db / 20);
  std::size_t best_begin = 0, best_len = 0;
  for (std::size_t f = 0; f < frames;) {
    if (rms[f] < limit) {
      ++f;
      continue;
    }
    std::size_t g = f;
    while (g < frames && rms[g] >= limit)
      ++g;
    if (g - f > best_len) {
      best_len = g - f;
      best_begin = f;
    }
    f = g;
  }
  // Drop the edge frames, which may hold the switch-on or switch-off itself.
  std::size_t first = best_begin, last = best_begin + best_len;
  if (best_len > 4) {
    ++first;
    --last;
  }
  out.begin = first * frame;
  out.end = last * frame;
  out.level_rms = loud;
  out.found = out.end > out.begin;
  return out;
}

ClipReport detect_clipping(std::span<const double> x) {
  ClipReport out;
  for (double v : x)
    out.peak = std::max(out.peak, std::abs(v));
  if (out.peak < 0.99) return out;
  const double near = out.peak * 0.999;
  std::size_t run = 0;
  double run_value = 0;
  for (double v : x) {
    if (std::abs(v) >= near && run > 0 && v == run_value) {
      ++run;
    } else {
      if (run >= 3) ++out.clipped_runs;
      run = std::abs(v) >= near ? 1 : 0;
      run_value = v;
    }
  }
  if (run >= 3) ++out.clipped_runs;
  return out;
}

}  // namespace tb::dsp
