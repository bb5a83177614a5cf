// Where a stepped sweep adds points, and how long its points settle.
#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <numbers>
#include <vector>

#include "dsp/sweep_refine.hpp"

using namespace tb::dsp;
using cd = std::complex<double>;

namespace {

constexpr double kPi = std::numbers::pi;

std::vector<double> log_grid(double f0, double f1, int per_decade) {
  std::vector<double> f;
  const int n = static_cast<int>(std::round(std::log10(f1 / f0) * per_decade)) + 1;
  for (int i = 0; i < n; ++i)
    f.push_back(f0 * std::pow(f1 / f0, double(i) / (n - 1)));
  return f;
}

// Series R-L-C: Z = R + j w L + 1 / (j w C).
cd series_rlc(double f, double r, double l, double c) {
  const double w = 2 * kPi * f;
  return cd(r, w * l - 1 / (w * c));
}

// A driver's impedance near resonance (Thiele/Small electrical analogue, references.md):
// Re in series with Res || Les || Ces.
cd driver(double f) {
  const double re = 6, res = 75.35, ces = 127.56e-6, les = 39.73e-3;
  const cd jw(0, 2 * kPi * f);
  return re + 1.0 / (1 / res + 1.0 / (jw * les) + jw * ces);
}

}  // namespace

TEST_CASE("refinement adds points around a series resonance and nowhere else", "[sweep_refine]") {
  const auto f = log_grid(100, 10000, 10);
  std::vector<cd> z;
  // f0 = 1 / (2 pi sqrt(LC)) = 1.0 kHz with L = 25.33 mH, C = 1 uF; R = 2 ohm: Q = 80.
  for (double x : f)
    z.push_back(series_rlc(x, 2, 25.33e-3, 1e-6));
  const auto add = refine_frequencies(f, z);
  REQUIRE_FALSE(add.empty());
  for (double a : add) {
    CHECK(a > 500);
    CHECK(a < 2000);
  }
}

TEST_CASE("refinement leaves a plain capacitor alone", "[sweep_refine]") {
  const auto f = log_grid(20, 20000, 10);
  std::vector<cd> z;
  for (double x : f)
    z.push_back(cd(0.05, -1 / (2 * kPi * x * 6.8e-6)));
  CHECK(refine_frequencies(f, z).empty());
}

TEST_CASE("refinement finds a driver resonance and respects its budget", "[sweep_refine]") {
  // fs = 70.7 Hz, the worked example of references.md (Thiele 1961 / Small 1972).
  auto f = log_grid(20, 2000, 10);
  std::vector<cd> z;
  for (double x : f)
    z.push_back(driver(x));
  const auto add = refine_frequencies(f, z);
  REQUIRE_FALSE(add.empty());
  for (double a : add) {
    CHECK(a > 30);
    CHECK(a < 160);
  }
  // Rounds repeat until the peak is resolved or the budget is spent.
  int added = 0;
  for (int round = 0; round < 10; ++round) {
    const auto more = refine_frequencies(f, z, {}, added);
    if (more.empty()) break;
    for (double a : more) {
      f.push_back(a);
      z.push_back(driver(a));
    }
    added += static_cast<int>(more.size());
    std::vector<std::size_t> order(f.size());
    for (std::size_t i = 0; i < order.size(); ++i)
      order[i] = i;
    std::sort(order.begin(), order.end(), [&](auto a, auto b) { return f[a] < f[b]; });
    std::vector<double> f2;
    std::vector<cd> z2;
    for (auto i : order) {
      f2.push_back(f[i]);
      z2.push_back(z[i]);
    }
    f = f2;
    z = z2;
  }
  CHECK(added <= RefineConfig{}.max_added);
  // The highest measured |Z| now lies within 2 % of the true peak, 81.35 ohm at 70.7 Hz
  // (references.md, calculated from the worked example).
  double peak = 0;
  for (const auto& v : z)
    peak = std::max(peak, std::abs(v));
  CHECK(peak == Approx(81.35).epsilon(0.02));
}

TEST_CASE("refinement skips unmeasured points and narrow intervals", "[sweep_refine]") {
  const std::vector<double> f{1000, 1005, 1010};
  const std::vector<cd> z{cd(1, 0), cd(0, 1), cd(NAN, 0)};
  CHECK(refine_frequencies(f, z).empty());  // 1000-1005 is narrower than 1.01^2
}

TEST_CASE("settling covers the slowest of the jig's responses", "[sweep_refine]") {
  // A driver resonance, Q 4.27 at 70.7 Hz: tau = 2Q / w0 = 19.2 ms -> 6 tau = 115 ms.
  const double tau = 2 * 4.27 / (2 * kPi * 70.7);
  CHECK(settle_time_s({.freq_hz = 70.7, .group_delay_s = tau, .coupling_hz = 0}) ==
        Approx(6 * tau));
  // A 5 Hz coupling corner matters at 40 Hz (tau 31.8 ms) but not at 1 kHz.
  CHECK(settle_time_s({.freq_hz = 40, .coupling_hz = 5}) == Approx(6 / (2 * kPi * 5)));
  CHECK(settle_time_s({.freq_hz = 1000, .coupling_hz = 5}) == 0.1);
  CHECK(settle_time_s({.freq_hz = 100, .circuit_tau_s = 5}) == 2.0);
}

TEST_CASE("the divider's group delay near a resonance is 2Q over w0", "[sweep_refine]") {
  // Part-high with a parallel tank would be the textbook case; here a series RLC in part-low
  // with Rref = R: H = Z / (Z + Rref) has group delay ~ 2 L / (R + Rref) at resonance
  // (a second-order band-stop; textbook, Nahvi & Edminister).
  const double r = 2, l = 25.33e-3, c = 1e-6, rref = 2;
  const double f0 = 1 / (2 * kPi * std::sqrt(l * c));
  const double df = 0.01;
  const double gd = divider_group_delay_s(f0 - df, series_rlc(f0 - df, r, l, c), f0 + df,
                                          series_rlc(f0 + df, r, l, c), rref, false);
  CHECK(gd == Approx(2 * l / (r + rref)).epsilon(0.01));
}

TEST_CASE("circuit time constants of Rref with C or L", "[sweep_refine]") {
  const double f = 1000, w = 2 * kPi * f;
  CHECK(circuit_time_constant_s(f, cd(0.1, -1 / (w * 100e-6)), 1000) == Approx(1000.1 * 100e-6));
  CHECK(circuit_time_constant_s(f, cd(0.4, w * 1.5e-3), 10) == Approx(1.5e-3 / 10.4));
  CHECK(circuit_time_constant_s(f, cd(100, 0), 10) == 0);
}

TEST_CASE("duration for a target uncertainty scales with the square", "[sweep_refine]") {
  CHECK(duration_for_target_s(1, 0.002, 0.001) == Approx(4));
  CHECK(duration_for_target_s(1, 0.0001, 0.001) == 0.1);
  CHECK(duration_for_target_s(1, 0.1, 0.001) == 10);
}
