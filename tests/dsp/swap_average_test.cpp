#include "dsp/swap_average.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <numbers>
#include <random>
#include <stdexcept>

namespace {

using cplx = std::complex<double>;
using tb::dsp::UncertainComplex;

UncertainComplex exact(cplx v) {
  UncertainComplex u;
  u.value = v;
  return u;
}

}  // namespace

TEST_CASE("swap and average removes the channel mismatch", "[swap_average]") {
  // r1 = H r, r2 = H / r (the swap's definition, derived in swap_average.hpp).
  const cplx r{0.31, -0.42};
  const cplx h = std::polar(1.06, 0.02);
  const auto s = tb::dsp::swap_average(exact(h * r), exact(h / r));
  CHECK(std::abs(s.ratio.value - r) < 1e-15);
  CHECK(std::abs(s.mismatch.value - h) < 1e-15);
  // The example in the header.
  CHECK(std::abs(tb::dsp::swap_average(exact(0.51), exact(2.04)).ratio.value - 0.5) < 1e-15);
}

TEST_CASE("swap and average picks the square root next to the normal reading", "[swap_average]") {
  // r at -91.7 degrees: r^2 wraps past -180 degrees and the principal root is -r.
  const cplx r = std::polar(0.7, -1.6);
  const cplx h = std::polar(0.97, -0.03);
  const auto s = tb::dsp::swap_average(exact(h * r), exact(h / r));
  CHECK(std::abs(s.ratio.value - r) < 1e-14);
  CHECK(std::abs(s.mismatch.value - h) < 1e-14);
}

TEST_CASE("swap and average propagates both captures' Type A", "[swap_average]") {
  // ln r = (ln r1 - ln r2) / 2: relative variance (u1^2 + u2^2) / 4 (GUM, JCGM 100:2008,
  // eq. 10, on the log of the ratio).
  const cplx r{0.6, 0.2}, h = std::polar(1.03, 0.01);
  const double u1 = 2e-4, u2 = 5e-4;
  const auto a = tb::dsp::ratio_with_type_a(h * r, u1, 15);
  const auto b = tb::dsp::ratio_with_type_a(h / r, u2, 15);
  CHECK(a.type_a.rr == Approx(std::norm(h * r) * u1 * u1 / 2));
  const auto s = tb::dsp::swap_average(a, b);
  const double rel2 = (s.ratio.type_a.rr + s.ratio.type_a.ii) / std::norm(r);
  CHECK(rel2 == Approx((u1 * u1 + u2 * u2) / 4).epsilon(1e-9));
  // Welch-Satterthwaite with contributions u1/2, u2/2 and 15 dof each.
  const double w1 = std::pow(u1 / 2, 4), w2 = std::pow(u2 / 2, 4);
  CHECK(s.ratio.dof_a == Approx(std::pow((u1 * u1 + u2 * u2) / 4, 2) / ((w1 + w2) / 15)));

  // Monte Carlo: noisy captures scatter the combined ratio as predicted (circular noise,
  // fixed seed; |dr/r|^2 is exponential, so 20000 draws give its mean to 0.7 %, 1 sigma).
  std::mt19937_64 rng(7);
  std::normal_distribution<double> n01;
  double sum2 = 0;
  const int draws = 20000;
  for (int i = 0; i < draws; ++i) {
    const cplx e1{n01(rng) * u1 / std::sqrt(2.0), n01(rng) * u1 / std::sqrt(2.0)};
    const cplx e2{n01(rng) * u2 / std::sqrt(2.0), n01(rng) * u2 / std::sqrt(2.0)};
    const auto t = tb::dsp::swap_average(exact(h * r * (1.0 + e1)), exact(h / r * (1.0 + e2)));
    sum2 += std::norm(t.ratio.value - r) / std::norm(r);
  }
  CHECK(sum2 / draws == Approx(rel2).epsilon(0.05));
}

TEST_CASE("an uncertain ratio becomes an uncertain impedance", "[swap_average]") {
  // part_low: Z = Rref r / (1 - r) (design notes, reference-resistor divider); r = 0.5
  // gives Z = Rref and dZ/dr = Rref / (1 - r)^2 = 4 Rref.
  auto r = tb::dsp::ratio_with_type_a(0.5, 1e-4, 9);
  const auto z = tb::dsp::impedance_from_uncertain_ratio(tb::dsp::Layout::part_low, 100, 1e-3, r);
  CHECK(std::abs(z.value - cplx{100, 0}) < 1e-12);
  CHECK(z.type_a.rr == Approx(400.0 * 400.0 * r.type_a.rr));
  CHECK(z.dof_a == 9);
  REQUIRE(z.type_b.size() == 1);
  CHECK(z.type_b[0].name == "rref_tolerance");
  CHECK(z.type_b[0].u == Approx(1e-3 / std::sqrt(3.0)));
  CHECK(std::abs(z.type_b[0].sensitivity - cplx{100, 0}) < 1e-12);
  // part_high: Z = Rref (1 - r) / r, dZ/dr = -Rref / r^2; compare with a finite difference.
  const cplx r0{0.4, -0.1};
  const auto zh = tb::dsp::impedance_from_uncertain_ratio(tb::dsp::Layout::part_high, 1000, 0,
                                                          tb::dsp::ratio_with_type_a(r0, 1e-4, 9));
  const double d = 1e-7;
  const cplx fd =
      (tb::dsp::impedance_from_ratio(tb::dsp::Layout::part_high, 1000, r0 + d) - zh.value) / d;
  const double v = std::norm(r0) * 1e-8 / 2;
  CHECK(zh.type_a.rr + zh.type_a.ii == Approx(2 * v * std::norm(fd)).epsilon(1e-5));
}

TEST_CASE("swap and average refuses a zero ratio", "[swap_average]") {
  CHECK_THROWS_AS(tb::dsp::swap_average(exact(0.5), exact(0)), std::domain_error);
  CHECK_THROWS_AS(tb::dsp::swap_average(exact(NAN), exact(0.5)), std::domain_error);
}
