#include "dsp/block_stats.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <random>

#include "dsp/steady_region.hpp"

using namespace tb::dsp;
using cplx = std::complex<double>;

TEST_CASE("start-up transient blocks are dropped and the steady run accepted", "[settle]") {
  // An exponentially decaying start-up error on a steady ratio, plus small noise.
  std::mt19937_64 rng(11);
  std::normal_distribution<double> g(0.0, 1e-6);
  std::vector<cplx> v;
  for (int i = 0; i < 16; ++i)
    v.push_back(cplx{0.5, -0.2} * (1 + 0.05 * std::exp(-i / 1.5)) + cplx{g(rng), g(rng)});
  const auto r = check_settled(v, {});
  CHECK(r.verdict == SettleVerdict::settled);
  CHECK(r.first >= 5);
  CHECK(r.first <= 12);
  CHECK(r.last == 16);
}

TEST_CASE("a reading that keeps drifting is rejected", "[settle]") {
  std::vector<cplx> v;
  for (int i = 0; i < 16; ++i)
    v.push_back(cplx{0.5, -0.2} * (1 + 1e-3 * i));
  std::mt19937_64 rng(2);
  std::normal_distribution<double> g(0.0, 1e-5);
  for (auto& x : v)
    x += cplx{g(rng), g(rng)};
  const auto r = check_settled(v, {});
  CHECK(r.verdict == SettleVerdict::drifting);
  CHECK(r.drift_rel > 1e-3);
}

TEST_CASE("noise alone is settled and too few blocks are reported", "[settle]") {
  std::mt19937_64 rng(9);
  std::normal_distribution<double> g(0.0, 1e-3);
  std::vector<cplx> v;
  for (int i = 0; i < 12; ++i)
    v.push_back(cplx{1 + g(rng), g(rng)});
  CHECK(check_settled(v, {}).verdict == SettleVerdict::settled);
  CHECK(check_settled(std::span(v).first(1), {}).verdict == SettleVerdict::too_few_blocks);
}

TEST_CASE("the active region skips silence on both sides", "[steady_region]") {
  const double fs = 48000;
  std::vector<double> x(fs * 2, 0.0);
  std::mt19937_64 rng(1);
  std::normal_distribution<double> g(0.0, 1e-5);
  for (std::size_t i = 0; i < x.size(); ++i) {
    if (i >= 24000 && i < 72000) x[i] = 0.3 * std::sin(0.1 * static_cast<double>(i));
    x[i] += g(rng);
  }
  const auto r = find_active_region(x, {.sample_rate_hz = fs});
  REQUIRE(r.found);
  CHECK(r.begin >= 24000);
  CHECK(r.begin <= 24000 + 2 * 480);
  CHECK(r.end <= 72000);
  CHECK(r.end >= 72000 - 2 * 480);
  CHECK_FALSE(find_active_region(std::vector<double>(48000, 0.0), {.sample_rate_hz = fs}).found);
}

TEST_CASE("clipping is found only where peaks are flat at full scale", "[steady_region]") {
  std::vector<double> x(4800);
  for (std::size_t i = 0; i < x.size(); ++i)
    x[i] = std::clamp(1.2 * std::sin(0.05 * static_cast<double>(i)), -1.0, 1.0);
  CHECK(detect_clipping(x).clipped_runs > 10);
  for (std::size_t i = 0; i < x.size(); ++i)
    x[i] = 0.999 * std::sin(0.05 * static_cast<double>(i));
  CHECK(detect_clipping(x).clipped_runs == 0);
}

TEST_CASE("a DC offset before the tone does not count as activity", "[steady_region]") {
  // A card's DC offset, or a DC step before the generator starts, is not excitation.
  const double fs = 48000;
  std::vector<double> x(48000, 0.05);
  for (std::size_t i = 24000; i < x.size(); ++i)
    x[i] += 0.3 * std::sin(0.1 * static_cast<double>(i));
  const auto r = find_active_region(x, {.sample_rate_hz = fs});
  REQUIRE(r.found);
  CHECK(r.begin >= 24000);
}
