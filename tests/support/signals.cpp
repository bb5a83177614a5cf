#include "tests/support/signals.hpp"

#include <cmath>
#include <filesystem>
#include <numbers>
#include <random>
#include <stdexcept>

namespace tb::test {

Stereo make_jig_signal(const JigSignalSpec& spec) {
  const double fs = spec.sample_rate_hz;
  const auto lead = static_cast<std::size_t>(std::lround(spec.lead_silence_s * fs));
  const auto on = static_cast<std::size_t>(std::lround(spec.duration_s * fs));
  const auto tail = static_cast<std::size_t>(std::lround(spec.tail_silence_s * fs));
  const auto fade = static_cast<std::size_t>(std::lround(spec.fade_s * fs));
  Stereo out;
  out.a.assign(lead + on + tail, 0.0);
  out.b.assign(lead + on + tail, 0.0);
  // The recorder's sample period is 1 / (fs (1 + ppm)); the tones keep their true frequency.
  const double fs_true = fs * (1 + spec.clock_ppm * 1e-6);
  for (std::size_t k = 0; k < spec.freqs_hz.size(); ++k) {
    const double f = spec.freqs_hz[k];
    const std::complex<double> ratio =
        dsp::ratio_from_impedance(spec.layout, spec.rref_ohm, spec.z_of_f(f));
    const double amp = spec.amplitudes.at(k);
    const double ph = spec.phases_rad.size() > k ? spec.phases_rad[k] : 0.0;
    for (std::size_t n = 0; n < on; ++n) {
      const double cycles = std::fmod(f * static_cast<double>(n) / fs_true, 1.0);
      const std::complex<double> phasor = std::polar(amp, 2 * std::numbers::pi * cycles + ph);
      out.a[lead + n] += phasor.real();
      out.b[lead + n] += (phasor * ratio).real();
    }
  }
  for (std::size_t n = 0; n < std::min(fade, on); ++n) {
    const double g =
        0.5 - 0.5 * std::cos(std::numbers::pi * static_cast<double>(n) / static_cast<double>(fade));
    out.a[lead + n] *= g;
    out.b[lead + n] *= g;
    out.a[lead + on - 1 - n] *= g;
    out.b[lead + on - 1 - n] *= g;
  }
  if (spec.noise_rms > 0) {
    std::mt19937_64 rng(spec.seed);
    std::normal_distribution<double> noise(0.0, spec.noise_rms);
    for (auto& v : out.a)
      v += noise(rng);
    for (auto& v : out.b)
      v += noise(rng);
  }
  return out;
}

namespace {

double bessel_i0(double x) {
  double sum = 1, term = 1;
  for (int k = 1; k < 50; ++k) {
    term *= (x / (2 * k)) * (x / (2 * k));
    sum += term;
  }
  return sum;
}

}  // namespace

std::vector<double> resample(std::span<const double> x, double ratio) {
  constexpr int half = 64;
  constexpr double beta = 9.0;  // Kaiser: about -90 dB sidelobes
  const double i0b = bessel_i0(beta);
  const auto n_out =
      static_cast<std::size_t>(std::floor(static_cast<double>(x.size() - 1) / ratio));
  std::vector<double> y(n_out, 0.0);
  for (std::size_t n = 0; n < n_out; ++n) {
    const double t = static_cast<double>(n) * ratio;
    const auto centre = static_cast<long>(std::floor(t));
    double acc = 0;
    for (long k = centre - half + 1; k <= centre + half; ++k) {
      if (k < 0 || k >= static_cast<long>(x.size())) continue;
      const double d = t - static_cast<double>(k);
      const double r = d / half;
      if (std::abs(r) >= 1) continue;
      const double sinc = d == 0 ? 1.0 : std::sin(std::numbers::pi * d) / (std::numbers::pi * d);
      acc += x[static_cast<std::size_t>(k)] * sinc * bessel_i0(beta * std::sqrt(1 - r * r)) / i0b;
    }
    y[n] = acc;
  }
  return y;
}

std::string make_temp_dir(const std::string& tag) {
  namespace fs = std::filesystem;
  std::random_device rd;
  for (int attempt = 0; attempt < 100; ++attempt) {
    const fs::path p =
        fs::temp_directory_path() / ("tonebridge-" + tag + "-" + std::to_string(rd()));
    if (fs::create_directory(p)) return p.string();
  }
  throw std::runtime_error("could not make a temporary directory");
}

double vector_error(std::complex<double> z, std::complex<double> truth) {
  return std::abs(z - truth) / std::abs(truth);
}

}  // namespace tb::test
