#include "dsp/signal_checks.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <limits>
#include <numbers>
#include <numeric>
#include <stdexcept>
#include <utility>
#include <vector>

namespace tb::dsp {

DcOffset check_dc_offset(std::span<const double> x, double limit_fs) {
  DcOffset d;
  if (x.empty()) return d;
  d.mean_fs = std::accumulate(x.begin(), x.end(), 0.0) / static_cast<double>(x.size());
  d.excessive = std::abs(d.mean_fs) > limit_fs;
  return d;
}

namespace {

// Distance in hertz from f to the nearest harmonic that counts, and that harmonic's number.
std::pair<double, int> nearest_harmonic(double f, double mains_hz, double max_harmonic_hz) {
  const int top = static_cast<int>(std::floor(max_harmonic_hz / mains_hz + 1e-9));
  if (top < 1) return {std::numeric_limits<double>::infinity(), 0};
  const int n = std::clamp(static_cast<int>(std::lround(f / mains_hz)), 1, top);
  return {std::abs(f - n * mains_hz), n};
}

}  // namespace

MainsProximity check_mains_proximity(double freq_hz, double mains_hz, double bin_hz,
                                     double guard_bins, double max_harmonic_hz) {
  if (!(freq_hz > 0 && mains_hz > 0 && bin_hz > 0 && guard_bins >= 0))
    throw std::invalid_argument("frequencies and bin width must be > 0, guard >= 0");
  const double guard_hz = guard_bins * bin_hz;
  const auto clear = [&](double f) {
    return f > 0 && nearest_harmonic(f, mains_hz, max_harmonic_hz).first >= guard_hz;
  };
  MainsProximity m;
  const auto [dist, n] = nearest_harmonic(freq_hz, mains_hz, max_harmonic_hz);
  if (dist >= guard_hz) return m;
  m.near = true;
  m.harmonic = n;
  m.harmonic_hz = n * mains_hz;
  // IEC allows 100 Hz or 120 Hz for electrolytics: one of them is clear of either mains.
  for (auto [from, to] : {std::pair{100.0, 120.0}, std::pair{120.0, 100.0}}) {
    if (std::abs(freq_hz - from) < guard_hz && clear(to)) {
      m.suggested_hz = to;
      return m;
    }
  }
  const double grid = std::round(freq_hz / bin_hz) * bin_hz;
  for (int k = 1; k < 1000; ++k) {
    for (double f : {grid + k * bin_hz, grid - k * bin_hz}) {
      if (clear(f)) {
        m.suggested_hz = f;
        return m;
      }
    }
  }
  return m;
}

Hum measure_hum(std::span<const double> x, double sample_rate_hz, double mains_hz,
                double limit_rms_fs, double max_harmonic_hz) {
  if (!(sample_rate_hz > 0 && mains_hz > 0))
    throw std::invalid_argument("sample rate and mains frequency must be > 0");
  Hum h;
  const double period = sample_rate_hz / mains_hz;
  const auto periods = static_cast<std::size_t>(std::floor(static_cast<double>(x.size()) / period));
  if (periods == 0) return h;
  const auto m = static_cast<std::size_t>(std::lround(static_cast<double>(periods) * period));
  const auto seg = x.first(std::min(m, x.size()));
  const double top = std::min(max_harmonic_hz, 0.5 * sample_rate_hz);
  double sum_sq = 0;
  for (int n = 1; n * mains_hz <= top + 1e-9; ++n) {
    const double w = 2 * std::numbers::pi * n * mains_hz / sample_rate_hz;
    std::complex<double> acc;
    for (std::size_t i = 0; i < seg.size(); ++i)
      acc += seg[i] * std::polar(1.0, -w * static_cast<double>(i));
    // Peak amplitude 2|X|/M (one DFT bin), rms = peak / sqrt 2.
    const double rms = 2 * std::abs(acc) / static_cast<double>(seg.size()) / std::numbers::sqrt2;
    sum_sq += rms * rms;
    if (rms > h.worst_rms_fs) {
      h.worst_rms_fs = rms;
      h.worst_hz = n * mains_hz;
    }
  }
  h.total_rms_fs = std::sqrt(sum_sq);
  h.excessive = h.total_rms_fs > limit_rms_fs;
  return h;
}

double component_at(std::span<const double> x, double sample_rate_hz, double mains_hz,
                    double freq_hz) {
  if (!(sample_rate_hz > 0 && mains_hz > 0 && freq_hz > 0))
    throw std::invalid_argument("sample rate and frequencies must be > 0");
  const double period = sample_rate_hz / mains_hz;
  const auto periods = static_cast<std::size_t>(std::floor(static_cast<double>(x.size()) / period));
  if (periods == 0) return 0;
  const auto m = std::min(
      static_cast<std::size_t>(std::lround(static_cast<double>(periods) * period)), x.size());
  const double w = 2 * std::numbers::pi * freq_hz / sample_rate_hz;
  std::complex<double> acc;
  for (std::size_t i = 0; i < m; ++i)
    acc += x[i] * std::polar(1.0, -w * static_cast<double>(i));
  return 2 * std::abs(acc) / static_cast<double>(m);
}

double tone_distortion(std::span<const double> x, double sample_rate_hz, double freq_hz,
                       int max_harmonic) {
  const double fundamental = component_at(x, sample_rate_hz, freq_hz, freq_hz);
  if (!(fundamental > 0)) return 0;
  double sum = 0;
  for (int k = 2; k <= max_harmonic && k * freq_hz < 0.45 * sample_rate_hz; ++k) {
    const double a = component_at(x, sample_rate_hz, freq_hz, k * freq_hz);
    sum += a * a;
  }
  return std::sqrt(sum) / fundamental;
}

double hum_on_tone_rel(double freq_hz, double mains_hz, double hum_a_fs, double hum_b_fs,
                       double level_a_fs, double level_b_fs, std::complex<double> ratio) {
  if (!(mains_hz > 0) || !(level_a_fs > 0) || !(level_b_fs > 0)) return 0;
  const double n = std::round(freq_hz / mains_hz);
  if (n < 1 || std::abs(freq_hz - n * mains_hz) > 1e-6 * freq_hz) return 0;
  const double dr_rel = hum_b_fs / level_b_fs + hum_a_fs / level_a_fs;
  return dr_rel / std::abs(1.0 - ratio);
}

SignalStrength check_signal_strength(double level_b_fs, double snr_a_db, double snr_b_db,
                                     double min_level_fs, double min_snr_db) {
  SignalStrength s;
  s.level_low = level_b_fs < min_level_fs;
  s.snr_low = snr_a_db < min_snr_db || snr_b_db < min_snr_db;
  return s;
}

SourceSteadiness check_source_steady(std::span<const double> x, std::size_t block_len,
                                     double played_rms_fs, double change_tol_rel, double lost_rel,
                                     double silent_rel) {
  SourceSteadiness out;
  if (block_len == 0) throw std::invalid_argument("check_source_steady: block_len must be >= 1");
  const std::size_t n = x.size() / block_len;
  if (n < 2) return out;
  std::vector<double> rms(n);
  for (std::size_t k = 0; k < n; ++k) {
    double e = 0;
    for (std::size_t i = 0; i < block_len; ++i)
      e += x[k * block_len + i] * x[k * block_len + i];
    rms[k] = std::sqrt(e / static_cast<double>(block_len));
  }
  std::vector<double> sorted = rms;
  std::nth_element(sorted.begin(), sorted.begin() + static_cast<std::ptrdiff_t>(n / 2),
                   sorted.end());
  out.median_rms_fs = sorted[n / 2];
  if (out.median_rms_fs < silent_rel * played_rms_fs || out.median_rms_fs <= 0) {
    out.lost = true;
    return out;
  }
  for (std::size_t k = 0; k < n; ++k) {
    const double change = rms[k] / out.median_rms_fs - 1;
    if (std::abs(change) > std::abs(out.worst_change_rel)) {
      out.worst_change_rel = change;
      out.worst_block = k;
    }
    if (rms[k] < lost_rel * out.median_rms_fs) out.lost = true;
  }
  out.changed = std::abs(out.worst_change_rel) > change_tol_rel;
  return out;
}

}  // namespace tb::dsp
