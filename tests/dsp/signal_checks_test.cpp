#include "dsp/signal_checks.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <vector>

#include "tests/support/signals.hpp"

using namespace tb::dsp;

namespace {

// Silence with hum: a mains fundamental and its 2nd and 3rd harmonics at half and a
// quarter of it (as the simulated card makes it), plus white noise from the jig signal.
std::vector<double> hum(double fs, double mains_hz, double rms, std::size_t n, double dc = 0) {
  tb::test::JigSignalSpec spec;
  spec.sample_rate_hz = fs;
  spec.duration_s = static_cast<double>(n) / fs;
  spec.amplitudes = {1e-9};  // a tone too small to matter; the helper needs one
  spec.z_of_f = [](double) { return std::complex<double>{1000, 0}; };
  spec.noise_rms = 1e-5;
  auto x = tb::test::make_jig_signal(spec).a;
  x.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    const double t = static_cast<double>(i) / fs;
    for (int h = 1; h <= 3; ++h) {
      const double a = rms * std::numbers::sqrt2 / (h == 1 ? 1 : h == 2 ? 2 : 4);
      x[i] += a * std::sin(2 * std::numbers::pi * h * mains_hz * t + 0.3 * h);
    }
    x[i] += dc;
  }
  return x;
}

}  // namespace

TEST_CASE("a DC offset above 1 % of full scale is flagged", "[signal_checks]") {
  const auto quiet = hum(48000, 50, 0, 4800, 0.005);
  const auto offset = hum(48000, 50, 0, 4800, -0.015);
  CHECK_FALSE(check_dc_offset(quiet).excessive);
  const auto d = check_dc_offset(offset);
  CHECK(d.excessive);
  CHECK(d.mean_fs == Approx(-0.015).margin(1e-5));
  CHECK_FALSE(check_dc_offset(std::vector<double>{}).excessive);
}

TEST_CASE("hum at the mains harmonics is measured in a silent capture", "[signal_checks]") {
  // 0.1 s at 48 kHz: 5 periods of 50 Hz, 6 of 60 Hz. Total rms of the three harmonics:
  // rms * sqrt(1 + 1/4 + 1/16) [calc].
  const double rms = 1e-3;
  const auto x50 = hum(48000, 50, rms, 4800, 0.004);
  const auto h = measure_hum(x50, 48000, 50);
  CHECK(h.excessive);
  CHECK(h.worst_hz == 50);
  CHECK(h.worst_rms_fs == Approx(rms).epsilon(0.01));
  CHECK(h.total_rms_fs == Approx(rms * std::sqrt(1 + 0.25 + 0.0625)).epsilon(0.01));
  // 60 Hz mains at 44.1 kHz, read as 60 Hz.
  const auto x60 = hum(44100, 60, rms, 4410);
  CHECK(measure_hum(x60, 44100, 60).worst_rms_fs == Approx(rms).epsilon(0.01));
  // Noise alone (1e-5 rms) stays far below the -80 dBFS limit.
  const auto clean = hum(48000, 50, 0, 4800, 0.004);
  const auto none = measure_hum(clean, 48000, 50);
  CHECK_FALSE(none.excessive);
  CHECK(none.total_rms_fs < 1e-5);
  // Too short for one period: nothing measured.
  CHECK(measure_hum(std::vector<double>(100, 0.1), 48000, 50).total_rms_fs == 0);
}

TEST_CASE("a test frequency on a mains harmonic gets a clear one suggested", "[signal_checks]") {
  // IEC 60384-4 allows 100 Hz or 120 Hz for electrolytics: 100 Hz is the 2nd harmonic of
  // 50 Hz mains, 120 Hz the 2nd of 60 Hz mains; each suggests the other.
  const auto m100 = check_mains_proximity(100, 50, 10);
  CHECK(m100.near);
  CHECK(m100.harmonic == 2);
  CHECK(m100.suggested_hz == 120);
  const auto m120 = check_mains_proximity(120, 60, 10);
  CHECK(m120.near);
  CHECK(m120.suggested_hz == 100);
  CHECK_FALSE(check_mains_proximity(120, 50, 10).near);
  CHECK_FALSE(check_mains_proximity(100, 60, 10).near);
  // 1 kHz is the 20th harmonic of 50 Hz; the nearest clear bin two bins away (higher first).
  const auto m1k = check_mains_proximity(1000, 50, 10);
  CHECK(m1k.near);
  CHECK(m1k.harmonic == 20);
  CHECK(m1k.suggested_hz == 1020);
  CHECK_FALSE(check_mains_proximity(1000, 60, 10).near);  // 960 and 1020 are 2 bins away
  CHECK(check_mains_proximity(1010, 50, 10).near);        // one bin off still leaks
  // Above the 2 kHz limit harmonics are not counted.
  CHECK_FALSE(check_mains_proximity(5000, 50, 10).near);
  CHECK_THROWS_AS(check_mains_proximity(0, 50, 10), std::invalid_argument);
}

TEST_CASE("weak signals are told apart from healthy ones", "[signal_checks]") {
  CHECK_FALSE(check_signal_strength(0.05, 80, 70).weak());
  CHECK(check_signal_strength(5e-4, 80, 70).level_low);
  CHECK(check_signal_strength(0.05, 80, 30).snr_low);
  CHECK(check_signal_strength(0.05, 35, 80).snr_low);
}

TEST_CASE("hum on the test tone is bounded from the silent capture", "[signal_checks]") {
  // 100 Hz is the 2nd harmonic of 50 Hz mains: hum of 1e-4 FS there on node B, read
  // against a node B level of 0.01, moves the ratio by 1 %; with r = 0.5 (Z = Rref in
  // part-low) Z moves by 1 % / |1 - r| = 2 %.
  const double fs = 48000;
  std::vector<double> silent(4800);
  for (std::size_t i = 0; i < silent.size(); ++i)
    silent[i] = 1e-4 * std::sin(2 * std::numbers::pi * 100 * static_cast<double>(i) / fs + 0.3) +
                3e-4 * std::sin(2 * std::numbers::pi * 50 * static_cast<double>(i) / fs);
  const double hum = component_at(silent, fs, 50, 100);
  CHECK(hum == Approx(1e-4).epsilon(1e-6));  // the 50 Hz fundamental falls on a null
  CHECK(hum_on_tone_rel(100, 50, 0, hum, 0.02, 0.01, 0.5) == Approx(0.02).epsilon(1e-5));
  // 120 Hz is no harmonic of 50 Hz: the lock-in rejects the hum, no term.
  CHECK(hum_on_tone_rel(120, 50, 1e-4, 1e-4, 0.02, 0.01, 0.5) == 0);
}

namespace {

// A 1 kHz tone at 48 kHz, peak `amp`, whose amplitude is multiplied by `gain` from sample
// `from` on.
std::vector<double> tone_with_step(double amp, std::size_t n, std::size_t from, double gain) {
  std::vector<double> x(n);
  for (std::size_t i = 0; i < n; ++i)
    x[i] = amp * (i >= from ? gain : 1.0) *
           std::sin(2 * std::numbers::pi * 1000 * static_cast<double>(i) / 48000);
  return x;
}

}  // namespace

TEST_CASE("a steady generator passes the source steadiness check", "[signal_checks]") {
  const auto x = tone_with_step(0.3, 48000, 0, 1.0);
  const auto s = check_source_steady(x, 4800, 0.3 / std::sqrt(2.0));
  CHECK_FALSE(s.lost);
  CHECK_FALSE(s.changed);
  CHECK(s.median_rms_fs == Approx(0.3 / std::sqrt(2.0)).epsilon(1e-6));
  CHECK(std::abs(s.worst_change_rel) < 1e-6);
}

TEST_CASE("a generator that stops half way is reported lost at the block it stopped",
          "[signal_checks]") {
  const auto x = tone_with_step(0.3, 48000, 28800, 0.0);  // silent from block 6 of 10
  const auto s = check_source_steady(x, 4800, 0.3 / std::sqrt(2.0));
  CHECK(s.lost);
  CHECK(s.worst_block == 6);
  CHECK(s.worst_change_rel == Approx(-1.0));
}

TEST_CASE("a generator that never arrives is reported lost", "[signal_checks]") {
  const auto x = tone_with_step(1e-4, 48000, 0, 1.0);  // -70 dB of the 0.3 played
  CHECK(check_source_steady(x, 4800, 0.3 / std::sqrt(2.0)).lost);
}

TEST_CASE("a generator loaded down to 1 percent of its level is weak, not lost",
          "[signal_checks]") {
  // 1 ohm Rref plus a 1.6 ohm part behind a 100 ohm output: node A at 2.5 % of the level
  // played; with the card's input and output full scales apart, 1 % in the test's units.
  const auto x = tone_with_step(0.003, 48000, 0, 1.0);
  const auto s = check_source_steady(x, 4800, 0.3 / std::sqrt(2.0));
  CHECK_FALSE(s.lost);
  CHECK_FALSE(s.changed);
}

TEST_CASE("a 15 percent level jump is a change, a 5 percent one is not", "[signal_checks]") {
  const auto jump = check_source_steady(tone_with_step(0.3, 48000, 38400, 1.15), 4800, 0.2);
  CHECK(jump.changed);
  CHECK_FALSE(jump.lost);
  CHECK(jump.worst_change_rel == Approx(0.15).margin(1e-6));
  CHECK(jump.worst_block >= 8);  // blocks 8 and 9 both jumped
  const auto small = check_source_steady(tone_with_step(0.3, 48000, 38400, 1.05), 4800, 0.2);
  CHECK_FALSE(small.changed);
  CHECK_FALSE(small.lost);
}

TEST_CASE("under two blocks the source steadiness check judges nothing", "[signal_checks]") {
  const auto s = check_source_steady(std::vector<double>(6000, 0.0), 4800, 0.2);
  CHECK_FALSE(s.lost);
  CHECK_FALSE(s.changed);
  CHECK_THROWS_AS(check_source_steady(std::vector<double>(10, 0.0), 0, 0.2), std::invalid_argument);
}

TEST_CASE("tone distortion reads a known third harmonic and a clean tone", "[signal_checks]") {
  // THD as the rms of the harmonics over the fundamental (IEC 60268-3 ratio form, from memory).
  const double fs = 48000, f = 1000;
  std::vector<double> x(9600), clean(9600);
  for (std::size_t i = 0; i < x.size(); ++i) {
    const double w = 2 * std::numbers::pi * f * static_cast<double>(i) / fs;
    clean[i] = 0.5 * std::sin(w);
    x[i] = 0.5 * std::sin(w) + 0.005 * std::sin(3 * w + 0.4) + 0.002 * std::sin(2 * w);
  }
  CHECK(tone_distortion(x, fs, f) == Approx(std::hypot(0.01, 0.004)).epsilon(1e-6));
  CHECK(tone_distortion(clean, fs, f) < 1e-9);
  CHECK(tone_distortion(std::vector<double>(10, 0.0), fs, f) == 0);
}
