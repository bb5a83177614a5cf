#include "dsp/block_stats.hpp"

#include <algorithm>
#include <cmath>
#include <vector>

namespace tb::dsp {

namespace {

double median(std::vector<double> v) {
  const auto mid = v.begin() + static_cast<std::ptrdiff_t>(v.size() / 2);
  std::nth_element(v.begin(), mid, v.end());
  if (v.size() % 2 == 1) return *mid;
  const double upper = *mid;
  const double lower = *std::max_element(v.begin(), mid);
  return 0.5 * (lower + upper);
}

}  // namespace

BlockSpread block_spread(std::span<const std::complex<double>> values) {
  BlockSpread out;
  out.n = values.size();
  if (values.empty()) return out;
  for (auto v : values)
    out.mean += v;
  out.mean /= static_cast<double>(values.size());
  if (values.size() > 1) {
    double ss = 0;
    for (auto v : values)
      ss += std::norm(v - out.mean);
    out.spread = std::sqrt(ss / static_cast<double>(values.size() - 1));
  }
  const double mag = std::abs(out.mean);
  out.snr_db = out.spread > 0 ? std::min(200.0, 20 * std::log10(mag / out.spread)) : 200.0;
  if (mag == 0) out.snr_db = -200.0;
  return out;
}

std::string_view settle_verdict_name(SettleVerdict verdict) {
  switch (verdict) {
    case SettleVerdict::settled:
      return "settled";
    case SettleVerdict::drifting:
      return "drifting";
    case SettleVerdict::too_few_blocks:
      return "too_few_blocks";
  }
  return "?";
}

SettleResult check_settled(std::span<const std::complex<double>> values,
                           const SettleConfig& config) {
  SettleResult out;
  const std::size_t n = values.size();
  out.last = n;
  if (n < config.min_blocks || n == 0) return out;

  // Robust centre and scale: component-wise median and median absolute deviation, so
  // the transient blocks themselves do not inflate the threshold that removes them.
  std::vector<double> re(n), im(n);
  for (std::size_t i = 0; i < n; ++i) {
    re[i] = values[i].real();
    im[i] = values[i].imag();
  }
  const std::complex<double> centre(median(re), median(im));
  std::vector<double> dev(n);
  for (std::size_t i = 0; i < n; ++i)
    dev[i] = std::abs(values[i] - centre);
  const double sigma = 1.4826 * median(dev);
  const double threshold = std::max(5.0 * sigma, config.rel_floor * std::abs(centre));

  std::size_t first = 0, last = n;
  while (first < n && dev[first] > threshold)
    ++first;
  while (last > first && dev[last - 1] > threshold)
    --last;
  out.first = first;
  out.last = last;
  const std::size_t m = last - first;
  if (m < config.min_blocks) return out;

  // Least-squares line through the run (index against complex value); the trend over the
  // whole run is compared with its own standard error and with the allowed drift.
  const double mid = 0.5 * static_cast<double>(m - 1);
  std::complex<double> mean, slope_num;
  double sxx = 0;
  for (std::size_t i = 0; i < m; ++i)
    mean += values[first + i];
  mean /= static_cast<double>(m);
  for (std::size_t i = 0; i < m; ++i) {
    const double x = static_cast<double>(i) - mid;
    slope_num += x * (values[first + i] - mean);
    sxx += x * x;
  }
  const std::complex<double> slope = sxx > 0 ? slope_num / sxx : std::complex<double>{};
  double resid = 0;
  for (std::size_t i = 0; i < m; ++i) {
    const double x = static_cast<double>(i) - mid;
    resid += std::norm(values[first + i] - mean - slope * x);
  }
  const double dof = m > 2 ? static_cast<double>(m - 2) : 1.0;
  const double slope_se = sxx > 0 ? std::sqrt(resid / dof / sxx) : 0.0;
  const double trend = std::abs(slope) * static_cast<double>(m - 1);
  const double scale = std::abs(centre) > 0 ? std::abs(centre) : 1.0;
  out.drift_rel = trend / scale;
  const bool significant = m > 2 && std::abs(slope) > 4 * slope_se;
  out.verdict = (significant && out.drift_rel > config.drift_limit_rel) ? SettleVerdict::drifting
                                                                        : SettleVerdict::settled;
  return out;
}

}  // namespace tb::dsp
