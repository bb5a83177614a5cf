// Tone search, IEEE 1057-style sine fit and phase-drift tracking on signals whose
// frequencies are not on any bin.
#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <random>

#include "dsp/lockin.hpp"
#include "dsp/phase_track.hpp"
#include "dsp/sine_fit.hpp"
#include "dsp/tone_detect.hpp"

using namespace tb::dsp;

namespace {

std::vector<double> tones(std::size_t n, double fs, const std::vector<double>& f,
                          const std::vector<double>& amp, double noise = 0, double offset = 0) {
  std::vector<double> x(n, offset);
  std::mt19937_64 rng(3);
  std::normal_distribution<double> g(0.0, noise);
  for (std::size_t i = 0; i < n; ++i) {
    for (std::size_t k = 0; k < f.size(); ++k)
      x[i] += amp[k] * std::cos(2 * std::numbers::pi * f[k] * static_cast<double>(i) / fs +
                                0.3 * static_cast<double>(k));
    if (noise > 0) x[i] += g(rng);
  }
  return x;
}

}  // namespace

TEST_CASE("tone search finds off-bin tones and ignores the generator's harmonics",
          "[tone_detect]") {
  const double fs = 44100;
  // A 997.3 Hz tone with a -30 dB second harmonic (above the -40 dB level floor, so only
  // the harmonic rule can drop it), and a second excitation at 3210.7 Hz.
  const auto x =
      tones(44100, fs, {997.3, 1994.6, 3210.7}, {0.5, 0.5 * std::pow(10.0, -30.0 / 20), 0.2}, 1e-5);
  const auto found = detect_tones(x, {.sample_rate_hz = fs});
  REQUIRE(found.tones.size() == 2);
  CHECK(found.harmonics_dropped == 1);
  CHECK(found.tones[0].freq_hz == Approx(997.3).margin(0.01 * found.bin_hz));
  CHECK(found.tones[1].freq_hz == Approx(3210.7).margin(0.01 * found.bin_hz));
  CHECK(found.tones[0].amplitude == Approx(0.5).epsilon(0.01));
}

TEST_CASE("tone search on pure noise finds nothing", "[tone_detect]") {
  std::mt19937_64 rng(5);
  std::normal_distribution<double> g(0.0, 0.01);
  std::vector<double> x(48000);
  for (auto& v : x)
    v = g(rng);
  CHECK(detect_tones(x, {.sample_rate_hz = 48000}).tones.empty());
  CHECK_THROWS_AS(detect_tones(std::vector<double>(10), {}), std::invalid_argument);
}

TEST_CASE("joint sine fit refines frequencies to far below a bin", "[sine_fit]") {
  // IEEE Std 1057 four-parameter fit (generalised to two tones): with noise sigma and N
  // samples the frequency scatter is ~ sqrt(24/N^3) * fs * sigma / (2 pi A) (Kay, CRLB
  // for frequency; from memory): here about 1e-6 Hz, so a 1e-4 Hz check is safe.
  const double fs = 48000;
  const auto x = tones(60000, fs, {120.0137, 1000.4242}, {0.4, 0.3}, 1e-4, 0.01);
  const std::vector<double> guess{120.02, 1000.41};
  const auto fit = fit_sines(x, guess, {.sample_rate_hz = fs});
  REQUIRE(fit.converged);
  CHECK(fit.freq_hz[0] == Approx(120.0137).margin(1e-4));
  CHECK(fit.freq_hz[1] == Approx(1000.4242).margin(1e-4));
  CHECK(std::abs(fit.amplitude[0]) == Approx(0.4).epsilon(1e-4));
  CHECK(std::arg(fit.amplitude[1]) == Approx(0.3).margin(1e-3));
  CHECK(fit.offset == Approx(0.01).margin(1e-5));
  CHECK(fit.residual_rms == Approx(1e-4).epsilon(0.05));
}

TEST_CASE("phase drift across blocks gives the frequency error and its change", "[phase_track]") {
  const double fs = 48000;
  const std::size_t len = 4800, blocks = 20;
  // True tone 1000.05 Hz rising by 0.02 Hz/s, demodulated at 1000 Hz.
  std::vector<double> x(len * blocks);
  double phase = 0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    const double t = static_cast<double>(i) / fs;
    const double f = 1000.05 + 0.02 * (t - 1.0);
    x[i] = 0.5 * std::cos(phase);
    phase += 2 * std::numbers::pi * f / fs;
  }
  Lockin lockin(
      {.sample_rate_hz = fs, .tone_hz = {1000}, .block_len = len, .window = Window::hann});
  lockin.push(x, x);
  std::vector<std::complex<double>> ph;
  std::vector<std::size_t> starts;
  for (const auto& b : lockin.result()) {
    ph.push_back(b.a[0]);
    starts.push_back(b.start);
  }
  const auto drift = measure_phase_drift(ph, starts, len, fs);
  CHECK(drift.freq_error_hz == Approx(0.05).margin(1e-4));
  CHECK(drift.freq_slope_hz_per_s == Approx(0.02).margin(1e-3));
  CHECK(drift.residual_rad < 1e-3);
}
