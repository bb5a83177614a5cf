#include "dsp/tone_detect.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

#include "dsp/spectrum.hpp"

namespace tb::dsp {

namespace {

double median_of(std::vector<double> v) {
  if (v.empty()) return 0;
  auto mid = v.begin() + static_cast<std::ptrdiff_t>(v.size() / 2);
  std::nth_element(v.begin(), mid, v.end());
  return *mid;
}

}  // namespace

ToneSearchResult detect_tones(std::span<const double> x, const ToneSearchConfig& config) {
  if (x.size() < 64) throw std::invalid_argument("tone search: fewer than 64 samples");
  const std::size_t n = std::min(x.size(), config.max_fft);
  const auto seg = x.subspan((x.size() - n) / 2, n);
  Spectrum spectrum(n, Window::blackman_harris4);
  const auto bins = spectrum.push(seg);

  ToneSearchResult out;
  out.bin_hz = config.sample_rate_hz / static_cast<double>(n);
  std::vector<double> mag(bins.size());
  for (std::size_t k = 0; k < bins.size(); ++k)
    mag[k] = std::abs(bins[k]);
  out.floor = median_of(mag);

  const double max_hz = config.max_hz > 0 ? config.max_hz : 0.49 * config.sample_rate_hz;
  const auto k_lo = static_cast<std::size_t>(std::max(4.0, std::ceil(config.min_hz / out.bin_hz)));
  const auto k_hi =
      std::min(mag.size() - 4, static_cast<std::size_t>(std::floor(max_hz / out.bin_hz)));
  // Local maxima over +-4 bins: the Blackman-Harris main lobe is 8 bins wide.
  struct Peak {
    std::size_t k;
    double mag;
  };
  std::vector<Peak> peaks;
  for (std::size_t k = k_lo; k < k_hi; ++k) {
    bool is_max = mag[k] > 0;
    for (std::size_t d = 1; d <= 4 && is_max; ++d) {
      is_max = mag[k] >= mag[k - d] && mag[k] > mag[k + d];
    }
    if (is_max) peaks.push_back({k, mag[k]});
  }
  if (peaks.empty()) return out;
  const double strongest = std::max_element(peaks.begin(), peaks.end(), [](auto& p, auto& q) {
                             return p.mag < q.mag;
                           })->mag;
  const double level_limit = strongest * std::pow(10.0, config.min_level_db / 20);
  const double noise_limit = out.floor * std::pow(10.0, config.min_snr_db / 20);
  for (const auto& p : peaks) {
    if (p.mag < level_limit || p.mag < noise_limit) continue;
    // Gaussian interpolation: the log of the Blackman-Harris main lobe is close to a
    // parabola, so the vertex of three log magnitudes gives the peak to ~1e-3 bin.
    const double l0 = std::log(mag[p.k - 1]), l1 = std::log(mag[p.k]), l2 = std::log(mag[p.k + 1]);
    const double denom = l0 - 2 * l1 + l2;
    const double delta = denom != 0 ? 0.5 * (l0 - l2) / denom : 0.0;
    const double peak_log = l1 - 0.25 * (l0 - l2) * delta;
    DetectedTone tone;
    tone.freq_hz = (static_cast<double>(p.k) + delta) * out.bin_hz;
    tone.amplitude = std::exp(peak_log);
    tone.level_db = 20 * std::log10(p.mag / strongest);
    out.tones.push_back(tone);
  }
  // Drop the generator's own harmonics: peaks at m * f of a much stronger tone.
  std::vector<DetectedTone> kept;
  for (const auto& t : out.tones) {
    bool harmonic = false;
    for (const auto& s : out.tones) {
      if (s.freq_hz >= t.freq_hz || s.level_db - t.level_db < config.harmonic_margin_db) continue;
      const double m = std::round(t.freq_hz / s.freq_hz);
      if (m >= 2 && std::abs(t.freq_hz - m * s.freq_hz) < 2 * out.bin_hz) harmonic = true;
    }
    if (harmonic) {
      ++out.harmonics_dropped;
    } else {
      kept.push_back(t);
    }
  }
  out.tones = std::move(kept);
  if (out.tones.size() > config.max_tones) {
    std::sort(out.tones.begin(), out.tones.end(),
              [](auto& p, auto& q) { return p.level_db > q.level_db; });
    out.tones.resize(config.max_tones);
  }
  std::sort(out.tones.begin(), out.tones.end(),
            [](auto& p, auto& q) { return p.freq_hz < q.freq_hz; });
  return out;
}

}  // namespace tb::dsp
