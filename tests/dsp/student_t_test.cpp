#include "dsp/student_t.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <limits>
#include <numbers>
#include <stdexcept>

using tb::dsp::student_t_cdf;
using tb::dsp::student_t_two_sided;

namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();

// Density of Student's t from its textbook definition, with std::lgamma (independent of the
// continued fraction and log-beta inside student_t.cpp).
double density(double t, double nu) {
  const double ln_c =
      std::lgamma(0.5 * (nu + 1.0)) - std::lgamma(0.5 * nu) - 0.5 * std::log(nu * std::numbers::pi);
  return std::exp(ln_c - 0.5 * (nu + 1.0) * std::log1p(t * t / nu));
}

// 0.5 + integral of the density from 0 to t by composite Simpson (n even).
double cdf_by_quadrature(double t, double nu, int n) {
  const double h = t / n;
  double sum = density(0.0, nu) + density(t, nu);
  for (int i = 1; i < n; ++i)
    sum += (i % 2 == 1 ? 4.0 : 2.0) * density(i * h, nu);
  return 0.5 + sum * h / 3.0;
}

}  // namespace

// Two-sided 95 % points of Student's t, from the textbook t table (any statistics text,
// e.g. the table printed in the back of a standard textbook), three decimals as printed.
TEST_CASE("student_t_two_sided: 95 % points match the t table", "[student_t]") {
  struct Row {
    double nu;
    double t;
  };
  for (const Row r :
       {Row{1, 12.706}, Row{2, 4.303}, Row{5, 2.571}, Row{10, 2.228}, Row{30, 2.042}}) {
    INFO("nu = " << r.nu);
    CHECK(std::abs(student_t_two_sided(0.95, r.nu) - r.t) <= 0.0005);
  }
}

// Coverage factors k_p for p = 95.45 %, JCGM 100:2008 Table G.2, from memory; checked to the
// two decimals printed there.
TEST_CASE("student_t_two_sided: 95.45 % points match JCGM 100:2008 Table G.2", "[student_t]") {
  struct Row {
    double nu;
    double k;
  };
  for (const Row r : {Row{1, 13.97}, Row{2, 4.53}, Row{3, 3.31}, Row{4, 2.87}, Row{5, 2.65},
                      Row{10, 2.28}, Row{20, 2.13}, Row{50, 2.05}, Row{kInf, 2.00}}) {
    INFO("nu = " << r.nu);
    CHECK(std::abs(student_t_two_sided(0.9545, r.nu) - r.k) <= 0.005);
  }
}

// Closed forms for small integer nu, from integrating the density by hand (standard results,
// from memory): nu = 1 is the Cauchy distribution, F = 1/2 + atan(t)/pi;
// nu = 2 gives F = 1/2 + t / (2 sqrt(2 + t^2)).
TEST_CASE("student_t_cdf: matches the closed forms for nu = 1 and nu = 2", "[student_t]") {
  for (double t = -60.0; t <= 60.0; t += 0.37) {
    INFO("t = " << t);
    CHECK(student_t_cdf(t, 1.0) ==
          Approx(0.5 + std::atan(t) / std::numbers::pi).epsilon(1e-13).margin(1e-15));
    CHECK(student_t_cdf(t, 2.0) ==
          Approx(0.5 + t / (2.0 * std::sqrt(2.0 + t * t))).epsilon(1e-13).margin(1e-15));
  }
  // Far tail of the Cauchy distribution: P(T > t) = atan(1/t)/pi, relative accuracy kept.
  CHECK(student_t_cdf(-1e6, 1.0) == Approx(std::atan(1e-6) / std::numbers::pi).epsilon(1e-12));
}

TEST_CASE("student_t_cdf: non-integer nu agrees with integrating the density", "[student_t]") {
  for (double nu : {0.5, 0.75, 2.5, 7.3, 33.3, 150.5, 2500.25}) {
    for (double t : {0.05, 0.4, 1.0, 1.9, 2.6, 4.0, 9.0}) {
      INFO("nu = " << nu << ", t = " << t);
      CHECK(student_t_cdf(t, nu) == Approx(cdf_by_quadrature(t, nu, 4000)).epsilon(1e-10));
    }
  }
}

TEST_CASE("student_t_cdf: large nu tends to the normal distribution", "[student_t]") {
  for (double t : {-4.0, -1.96, -0.5, 0.0, 0.3, 1.0, 2.0, 3.5}) {
    const double normal = 0.5 * std::erfc(-t / std::numbers::sqrt2);
    INFO("t = " << t);
    // At nu = 1e12 the t distribution is still ~1e-13 away from the normal.
    CHECK(student_t_cdf(t, 1e12) == Approx(normal).epsilon(1e-10).margin(1e-12));
    CHECK(student_t_cdf(t, kInf) == Approx(normal).epsilon(1e-15).margin(1e-16));
    // The leading correction is phi(t) (t^3 + t) / (4 nu) (up to 1e-6 here), so at nu = 1e4
    // the value must still differ from the normal by that much; the next term is < 2e-9.
    const double phi = std::exp(-0.5 * t * t) / std::sqrt(2.0 * std::numbers::pi);
    const double lead = phi * (t * t * t + t) / (4.0 * 1e4);
    CHECK(student_t_cdf(t, 1e4) - normal == Approx(-lead).margin(1e-8));
  }
  // Normal 97.5 % point 1.959964 (standard normal table, from memory).
  CHECK(student_t_two_sided(0.95, 1e9) == Approx(1.959964).margin(1e-6));
  CHECK(student_t_two_sided(0.95, kInf) == Approx(1.959964).margin(1e-6));
}

TEST_CASE("student_t_cdf: continuous across the large-nu switch", "[student_t]") {
  // The implementation changes method above nu = 1e5; the two must agree there.
  for (double t : {0.2, 1.0, 1.7, 2.0, 3.0, 5.0, 8.0}) {
    INFO("t = " << t);
    const double below = student_t_cdf(-t, 1e5 * (1.0 - 1e-9));
    const double above = student_t_cdf(-t, 1e5 * (1.0 + 1e-9));
    CHECK(above == Approx(below).epsilon(1e-10));
  }
}

TEST_CASE("student_t_cdf: symmetric, one half at zero, monotone", "[student_t]") {
  for (double nu : {0.5, 1.0, 1.5, 3.0, 9.7, 120.0, 4e5, 1e12}) {
    INFO("nu = " << nu);
    CHECK(student_t_cdf(0.0, nu) == 0.5);
    CHECK(student_t_cdf(-0.0, nu) == 0.5);
    double prev = 0.0;
    for (double t = -80.0; t <= 80.0; t += 0.02) {
      const double f = student_t_cdf(t, nu);
      CHECK(f >= prev);
      CHECK(f + student_t_cdf(-t, nu) == Approx(1.0).epsilon(1e-14));
      prev = f;
    }
    CHECK(student_t_cdf(0.01, nu) > student_t_cdf(0.0, nu));
    CHECK(student_t_cdf(kInf, nu) == 1.0);
    CHECK(student_t_cdf(-kInf, nu) == 0.0);
  }
}

TEST_CASE("student_t_two_sided: inverts the CDF for non-integer nu", "[student_t]") {
  for (double nu : {0.5, 0.8, 1.3, 2.5, 4.2, 17.9, 333.3, 2e5, 1e12}) {
    double prev_t = 0.0;
    for (double p : {1e-6, 0.1, 0.5, 0.6827, 0.9, 0.95, 0.9545, 0.99, 0.9973, 0.999999}) {
      INFO("nu = " << nu << ", p = " << p);
      const double t = student_t_two_sided(p, nu);
      CHECK(t > prev_t);  // quantile grows with p
      // Check on the tail, where the relative size of the miss is visible.
      CHECK(student_t_cdf(-t, nu) == Approx(0.5 * (1.0 - p)).epsilon(1e-10));
      prev_t = t;
    }
  }
}

TEST_CASE("student_t_two_sided: falls as nu grows", "[student_t]") {
  double prev = kInf;
  for (double nu = 0.5; nu < 1e13; nu *= 1.7) {
    const double k = student_t_two_sided(0.9545, nu);
    INFO("nu = " << nu);
    CHECK(k < prev);
    prev = k;
  }
}

TEST_CASE("student_t: invalid arguments throw", "[student_t]") {
  CHECK_THROWS_AS(student_t_cdf(1.0, 0.0), std::domain_error);
  CHECK_THROWS_AS(student_t_cdf(1.0, -3.0), std::domain_error);
  CHECK_THROWS_AS(student_t_cdf(1.0, std::nan("")), std::domain_error);
  CHECK_THROWS_AS(student_t_two_sided(0.95, 0.0), std::domain_error);
  CHECK_THROWS_AS(student_t_two_sided(0.0, 5.0), std::domain_error);
  CHECK_THROWS_AS(student_t_two_sided(1.0, 5.0), std::domain_error);
  CHECK_THROWS_AS(student_t_two_sided(std::nan(""), 5.0), std::domain_error);
  CHECK(std::isnan(student_t_cdf(std::nan(""), 5.0)));
}
