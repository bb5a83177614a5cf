#include "dsp/multisine.hpp"

#include <fftw3.h>

#include <algorithm>
#include <cmath>
#include <numbers>
#include <stdexcept>
#include <string>

#include "dsp/block_stats.hpp"
#include "dsp/tone_plan.hpp"

namespace tb::dsp {

namespace {

using cplx = std::complex<double>;

// One real FFT size with its forward and backward plans. FFTW's planner is not
// thread-safe (spectrum.hpp): build these on one thread.
class Fft {
 public:
  explicit Fft(std::size_t n)
      : n_(n), time_(fftw_alloc_real(n)), freq_(fftw_alloc_complex(n / 2 + 1)) {
    const int ni = static_cast<int>(n);
    fwd_ = fftw_plan_dft_r2c_1d(ni, time_, freq_, FFTW_ESTIMATE);
    bwd_ = fftw_plan_dft_c2r_1d(ni, freq_, time_, FFTW_ESTIMATE);
  }
  ~Fft() {
    fftw_destroy_plan(fwd_);
    fftw_destroy_plan(bwd_);
    fftw_free(time_);
    fftw_free(freq_);
  }
  Fft(const Fft&) = delete;
  Fft& operator=(const Fft&) = delete;

  // Complex peak amplitudes 2 X[k] / N of a cosine-sum (k = 0 .. N/2).
  void forward(std::span<const double> x, std::vector<cplx>& out) {
    std::copy(x.begin(), x.end(), time_);
    fftw_execute(fwd_);
    out.resize(n_ / 2 + 1);
    const double s = 2.0 / static_cast<double>(n_);
    for (std::size_t k = 0; k <= n_ / 2; ++k)
      out[k] = cplx(freq_[k][0], freq_[k][1]) * s;
  }
  // The cosine sum with peak amplitudes `amp` (k = 0 .. N/2, the inverse of forward()).
  void backward(std::span<const cplx> amp, std::vector<double>& out) {
    for (std::size_t k = 0; k <= n_ / 2; ++k) {
      freq_[k][0] = amp[k].real() / 2;
      freq_[k][1] = amp[k].imag() / 2;
    }
    fftw_execute(bwd_);
    out.assign(time_, time_ + n_);
  }

 private:
  std::size_t n_;
  double* time_;
  fftw_complex* freq_;
  fftw_plan fwd_, bwd_;
};

std::vector<double> wanted_freqs(const MultisineConfig& c) {
  if (!c.requested_hz.empty()) return c.requested_hz;
  if (!(c.f_lo_hz > 0 && c.f_hi_hz > c.f_lo_hz) || c.tones < 1)
    throw std::invalid_argument("multisine: need 0 < f_lo < f_hi and at least one tone");
  std::vector<double> f(c.tones);
  for (std::size_t i = 0; i < c.tones; ++i) {
    f[i] =
        c.tones == 1
            ? c.f_lo_hz
            : c.f_lo_hz * std::pow(c.f_hi_hz / c.f_lo_hz,
                                   static_cast<double>(i) / (static_cast<double>(c.tones) - 1.0));
  }
  return f;
}

double peak_abs(std::span<const double> x) {
  double p = 0;
  for (double v : x)
    p = std::max(p, std::abs(v));
  return p;
}

// Schroeder's rule by tone index, phi_n = -pi n (n - 1) / K: exact for a flat comb, the
// usual first guess for any other grid.
std::vector<double> index_phases(std::size_t k) {
  return schroeder_phases(k);
}

// Schroeder's general rule on the real bins (IEEE Trans. IT-16(1), 1970, for any power
// share p_l): phi_k = -2 pi sum_{l<k} (b_k - b_l) p_l. A sweep that stays at each tone in
// proportion to its power: on a log grid it starts far lower than the index rule.
std::vector<double> chirp_phases(const std::vector<std::size_t>& bins,
                                 const std::vector<double>& amps) {
  double total = 0;
  for (double a : amps)
    total += a * a;
  std::vector<double> ph(bins.size(), 0.0);
  for (std::size_t k = 1; k < bins.size(); ++k) {
    double s = 0;
    for (std::size_t l = 0; l < k; ++l)
      s += static_cast<double>(bins[k] - bins[l]) * amps[l] * amps[l] / total;
    ph[k] = std::remainder(-2 * std::numbers::pi * s, 2 * std::numbers::pi);
  }
  return ph;
}

// Clip-and-project: the period clipped at a share of its peak, its spectrum's phases at
// the tones kept and its amplitudes reset. Returns the phases of the lowest crest factor
// seen.
std::vector<double> optimise_phases(Fft& fft, std::size_t n, const std::vector<std::size_t>& bins,
                                    const std::vector<double>& amps, std::vector<double> phases,
                                    std::size_t iterations) {
  std::vector<cplx> spec(n / 2 + 1);
  std::vector<double> x;
  auto build = [&](const std::vector<double>& ph) {
    std::fill(spec.begin(), spec.end(), cplx{});
    for (std::size_t i = 0; i < bins.size(); ++i)
      spec[bins[i]] = std::polar(amps[i], ph[i]);
    fft.backward(spec, x);
    return crest_factor(x);
  };
  double best = build(phases);
  std::vector<double> best_phases = phases;
  for (std::size_t it = 0; it < iterations; ++it) {
    // Clip harder early (large steps), gently late (fine steps).
    const double share = 0.5 + 0.4 * static_cast<double>(it) /
                                   static_cast<double>(std::max<std::size_t>(iterations, 1));
    const double limit = share * peak_abs(x);
    for (double& v : x)
      v = std::clamp(v, -limit, limit);
    fft.forward(x, spec);
    for (std::size_t i = 0; i < bins.size(); ++i)
      phases[i] = std::arg(spec[bins[i]]);
    const double cf = build(phases);
    if (cf < best) {
      best = cf;
      best_phases = phases;
    }
  }
  return best_phases;
}

}  // namespace

std::size_t multisine_period(const MultisineConfig& c) {
  if (!(c.sample_rate_hz > 0)) throw std::invalid_argument("multisine: sample rate must be > 0");
  if (c.period_len > 0) return c.period_len;
  const double fs = c.sample_rate_hz;
  if (c.grid == MultisineGrid::harmonic) {
    if (!(c.f_lo_hz > 0) || c.bin_step < 1)
      throw std::invalid_argument("multisine: harmonic grid needs f_lo > 0 and step >= 1");
    return static_cast<std::size_t>(std::lround(fs * static_cast<double>(c.bin_step) / c.f_lo_hz));
  }
  const auto f = wanted_freqs(c);
  const double f_lo = *std::min_element(f.begin(), f.end());
  if (!(f_lo > 0)) throw std::invalid_argument("multisine: frequencies must be > 0");
  const double width = f_lo / (c.grid == MultisineGrid::odd_odd ? 8 : 4);
  const double step = std::max(1.0, std::round(fs / 100));
  const double n = std::ceil(fs / width / step) * step;
  if (n > 4 * fs)
    throw std::invalid_argument("multisine: the lowest tone needs a period above 4 s");
  return static_cast<std::size_t>(n);
}

std::vector<std::size_t> multisine_bins(const MultisineConfig& c, std::size_t n) {
  const double bin_hz = c.sample_rate_hz / static_cast<double>(n);
  std::vector<std::size_t> bins;
  if (c.grid == MultisineGrid::harmonic) {
    if (c.tones < 1 || c.bin_step < 1)
      throw std::invalid_argument("multisine: harmonic grid needs tones >= 1 and step >= 1");
    for (std::size_t k = 1; k <= c.tones; ++k)
      bins.push_back(k * c.bin_step);
  } else {
    const bool odd = c.grid == MultisineGrid::odd_odd;
    const std::size_t spacing = odd ? 4 : 1;
    for (double f : wanted_freqs(c)) {
      if (!(f > 0 && f < 0.5 * c.sample_rate_hz))
        throw std::invalid_argument("multisine: " + std::to_string(f) + " Hz is outside (0, fs/2)");
      const double x = f / bin_hz;
      // Nearest bin of the grid: any bin, or b = 4 m + 1.
      auto b = odd ? static_cast<std::size_t>(std::max(0.0, std::round((x - 1) / 4))) * 4 + 1
                   : static_cast<std::size_t>(std::max(1.0, std::round(x)));
      // A tone that would share a bin with the one below moves up to the next free bin.
      if (!bins.empty() && b <= bins.back()) b = bins.back() + spacing;
      bins.push_back(b);
    }
  }
  if (bins.empty() || bins.back() >= n / 2)
    throw std::invalid_argument("multisine: the tones do not fit below fs/2 with a period of " +
                                std::to_string(n) + " samples");
  return bins;
}

MultisineDesign design_multisine(const MultisineConfig& c) {
  if (!(c.peak_fs > 0 && c.peak_fs <= 1))
    throw std::invalid_argument("multisine: peak must be in (0, 1] of full scale");
  const std::size_t n = multisine_period(c);
  if (n < 16) throw std::invalid_argument("multisine: a period needs at least 16 samples");
  const auto bins = multisine_bins(c, n);
  const std::size_t k = bins.size();
  std::vector<double> amps(k, 1.0);
  if (!c.shape.empty()) {
    if (c.shape.size() != k)
      throw std::invalid_argument("multisine: the shape needs one amplitude per tone (" +
                                  std::to_string(k) + ")");
    for (double a : c.shape)
      if (!(a > 0)) throw std::invalid_argument("multisine: shape amplitudes must be > 0");
    amps = c.shape;
  }
  Fft fft(n);
  std::vector<cplx> spec(n / 2 + 1);
  std::vector<double> x;
  auto synth = [&](const std::vector<double>& ph) {
    std::fill(spec.begin(), spec.end(), cplx{});
    for (std::size_t i = 0; i < k; ++i)
      spec[bins[i]] = std::polar(amps[i], ph[i]);
    fft.backward(spec, x);
    return x;
  };
  const auto schroeder = index_phases(k);
  MultisineDesign d;
  d.sample_rate_hz = c.sample_rate_hz;
  d.period_len = n;
  d.grid = c.grid;
  d.schroeder_crest_factor = crest_factor(synth(schroeder));
  const auto phases =
      c.grid == MultisineGrid::harmonic
          ? schroeder
          : optimise_phases(fft, n, bins, amps, chirp_phases(bins, amps), c.crest_iterations);
  d.period = synth(phases);
  d.crest_factor = crest_factor(d.period);
  const double scale = c.peak_fs / peak_abs(d.period);
  for (double& v : d.period)
    v *= scale;
  for (std::size_t i = 0; i < k; ++i) {
    d.tones.push_back({bins[i],
                       static_cast<double>(bins[i]) * c.sample_rate_hz / static_cast<double>(n),
                       amps[i] * scale, phases[i]});
  }
  return d;
}

std::vector<double> multisine_excitation(const MultisineDesign& d, std::size_t fade_in,
                                         std::size_t periods, std::size_t fade_out) {
  const std::size_t n = d.period_len;
  const std::size_t total = fade_in + periods * n + fade_out;
  std::vector<double> x(total);
  // Sample fade_in is the start of a period, so the analysis lands on whole periods.
  const std::size_t offset = (n - fade_in % n) % n;
  for (std::size_t i = 0; i < total; ++i)
    x[i] = d.period[(i + offset) % n];
  for (std::size_t i = 0; i < fade_in; ++i)
    x[i] *= 0.5 - 0.5 * std::cos(std::numbers::pi * static_cast<double>(i) /
                                 static_cast<double>(fade_in));
  for (std::size_t i = 0; i < fade_out; ++i) {
    x[total - 1 - i] *= 0.5 - 0.5 * std::cos(std::numbers::pi * static_cast<double>(i) /
                                             static_cast<double>(fade_out));
  }
  return x;
}

MultisineAnalysis analyze_multisine(std::span<const double> a, std::span<const double> b,
                                    const MultisineDesign& d, std::size_t start,
                                    std::size_t periods) {
  const std::size_t n = d.period_len;
  if (periods == 0) throw std::invalid_argument("multisine analysis: need at least one period");
  if (a.size() != b.size() || a.size() < start + periods * n)
    throw std::invalid_argument("multisine analysis: the capture is shorter than its periods");
  const std::size_t half = n / 2 + 1;
  // spec[p][k]: complex peak amplitude of period p at bin k, per channel.
  std::vector<std::vector<cplx>> sa(periods), sb(periods);
  {
    Fft fft(n);
    for (std::size_t p = 0; p < periods; ++p) {
      fft.forward(a.subspan(start + p * n, n), sa[p]);
      fft.forward(b.subspan(start + p * n, n), sb[p]);
    }
  }
  const double pd = static_cast<double>(periods);
  std::vector<cplx> ma(half), mb(half);    // mean spectra
  std::vector<double> va(half), vb(half);  // variance of the mean per bin (0 for P == 1)
  for (std::size_t k = 0; k < half; ++k) {
    for (std::size_t p = 0; p < periods; ++p) {
      ma[k] += sa[p][k] / pd;
      mb[k] += sb[p][k] / pd;
    }
    if (periods > 1) {
      for (std::size_t p = 0; p < periods; ++p) {
        va[k] += std::norm(sa[p][k] - ma[k]);
        vb[k] += std::norm(sb[p][k] - mb[k]);
      }
      va[k] /= (pd - 1) * pd;
      vb[k] /= (pd - 1) * pd;
    }
  }
  std::vector<char> excited(half, 0);
  for (const auto& t : d.tones)
    excited[t.bin] = 1;

  MultisineAnalysis out;
  out.periods = periods;
  {
    double sum_a = 0, sum_b = 0;
    for (std::size_t k = 1; k + 1 < half; ++k) {
      sum_a += va[k];
      sum_b += vb[k];
    }
    const double m = static_cast<double>(half - 2);
    out.noise_floor_a_fs = std::sqrt(sum_a / m);
    out.noise_floor_b_fs = std::sqrt(sum_b / m);
  }

  // Noise of the mean spectrum at a tone from the nearest unexcited bins (up to 8 each side
  // of it, DC and Nyquist left out).
  auto neighbour_noise = [&](std::size_t bin, const std::vector<cplx>& m) {
    double sum = 0;
    std::size_t used = 0;
    for (std::size_t dist = 1; used < 16 && dist < half; ++dist) {
      for (long side : {-1L, 1L}) {
        const long j = static_cast<long>(bin) + side * static_cast<long>(dist);
        if (j < 1 || j + 1 >= static_cast<long>(half) || excited[static_cast<std::size_t>(j)])
          continue;
        sum += std::norm(m[static_cast<std::size_t>(j)]);
        ++used;
      }
    }
    return used ? sum / static_cast<double>(used) : 0.0;
  };

  for (const auto& t : d.tones) {
    MultisineToneResult r;
    r.bin = t.bin;
    r.freq_hz = t.freq_hz;
    std::vector<cplx> ratios;
    for (std::size_t p = 0; p < periods; ++p) {
      r.a.push_back(sa[p][t.bin]);
      r.b.push_back(sb[p][t.bin]);
      ratios.push_back(sb[p][t.bin] / sa[p][t.bin]);
    }
    r.mean_a = ma[t.bin];
    r.mean_b = mb[t.bin];
    r.ratio = r.mean_b / r.mean_a;
    r.level_a_fs = std::abs(r.mean_a);
    r.level_b_fs = std::abs(r.mean_b);
    if (periods > 1) {
      const auto s = block_spread(ratios);
      r.ratio_u_rel_spread = s.spread / std::sqrt(pd) / std::abs(s.mean);
    }
    r.ratio_u_rel_noise = std::sqrt(neighbour_noise(t.bin, ma) / std::norm(r.mean_a) +
                                    neighbour_noise(t.bin, mb) / std::norm(r.mean_b));
    out.tones.push_back(std::move(r));
  }

  // Regions: one per decade that holds tones, from its first tone's bin to its last's.
  auto db = [](double num, double den) {
    return num > 0 && den > 0 ? 10 * std::log10(num / den) : -300.0;
  };
  std::size_t i = 0;
  while (i < d.tones.size()) {
    const double decade = std::floor(std::log10(d.tones[i].freq_hz));
    std::size_t j = i;
    while (j < d.tones.size() && std::floor(std::log10(d.tones[j].freq_hz)) == decade)
      ++j;
    MultisineRegion g;
    g.f_lo_hz = std::pow(10.0, decade);
    g.f_hi_hz = std::pow(10.0, decade + 1);
    g.tones = j - i;
    double pa = 0, pb = 0;
    for (std::size_t q = i; q < j; ++q) {
      pa += std::norm(ma[d.tones[q].bin]);
      pb += std::norm(mb[d.tones[q].bin]);
    }
    pa /= static_cast<double>(g.tones);
    pb /= static_cast<double>(g.tones);
    g.tone_level_a_fs = std::sqrt(pa);
    g.tone_level_b_fs = std::sqrt(pb);
    double odd_a = 0, odd_b = 0, even_a = 0, even_b = 0, na = 0, nb = 0;
    std::size_t n_odd = 0, n_even = 0, n_all = 0;
    const std::size_t lo = std::max<std::size_t>(d.tones[i].bin, 1);
    const std::size_t hi = std::min(d.tones[j - 1].bin, half - 2);
    for (std::size_t k = lo; k <= hi; ++k) {
      na += va[k];
      nb += vb[k];
      ++n_all;
      if (excited[k]) continue;
      if (k % 2) {
        odd_a += std::norm(ma[k]);
        odd_b += std::norm(mb[k]);
        ++n_odd;
      } else {
        even_a += std::norm(ma[k]);
        even_b += std::norm(mb[k]);
        ++n_even;
      }
    }
    auto avg = [](double s, std::size_t c) { return c ? s / static_cast<double>(c) : 0.0; };
    g.odd_db_a = db(avg(odd_a, n_odd), pa);
    g.odd_db_b = db(avg(odd_b, n_odd), pb);
    g.even_db_a = db(avg(even_a, n_even), pa);
    g.even_db_b = db(avg(even_b, n_even), pb);
    g.noise_db_a = db(avg(na, n_all), pa);
    g.noise_db_b = db(avg(nb, n_all), pb);
    if (n_odd) out.nonlinearity_db = std::max(out.nonlinearity_db, g.odd_db_b);
    if (n_even) out.nonlinearity_db = std::max(out.nonlinearity_db, g.even_db_b);
    out.regions.push_back(g);
    i = j;
  }
  return out;
}

}  // namespace tb::dsp
