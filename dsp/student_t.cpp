#include "dsp/student_t.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <stdexcept>

namespace tb::dsp {

namespace {

constexpr double kEps = std::numeric_limits<double>::epsilon();
constexpr double kHalfLn2Pi = 0.91893853320467274178;  // ln(2 pi) / 2

// For large nu the continued fraction loses digits (its terms approach -1 and cancel:
// ~1e-12 relative at nu = 1e5, ~1e-9 at 1e6, ~1e-5 at 1e12), while the two-term large-nu
// expansion below is good to ~1e-13 relative as long as t^4 / nu is small. Far tails
// (t^4 >= 1e-3 nu), where the expansion is the worse of the two, stay with the fraction.
constexpr double kAsymptoticNu = 1e5;
constexpr double kAsymptoticT4OverNu = 1e-3;

// Stirling remainder: lnGamma(z) = (z - 1/2) ln z - z + ln(2 pi)/2 + stirling_delta(z).
// Five terms of the asymptotic series; for z >= 20 the first omitted term is below 1e-17.
double stirling_delta(double z) {
  const double r = 1.0 / z;
  const double r2 = r * r;
  return r * (1.0 / 12 - r2 * (1.0 / 360 - r2 * (1.0 / 1260 - r2 * (1.0 / 1680 - r2 / 1188))));
}

// ln B(a, b), written so that large arguments do not lose the result in the difference of
// three huge log-gammas (nu = 1e6 gives lnGamma ~ 6e6, which would cost ~7 digits).
double log_beta(double a, double b) {
  constexpr double kLarge = 20.0;
  const double s = std::min(a, b);
  const double l = std::max(a, b);
  if (l < kLarge) return std::lgamma(a) + std::lgamma(b) - std::lgamma(a + b);
  if (s < kLarge) {
    // lnGamma(l) - lnGamma(l + s) from Stirling, with log1p for the near-cancelling part.
    const double diff = -(l - 0.5) * std::log1p(s / l) - s * std::log(l + s) + s +
                        stirling_delta(l) - stirling_delta(l + s);
    return std::lgamma(s) + diff;
  }
  const double sum = a + b;
  return kHalfLn2Pi - (a - 0.5) * std::log1p(b / a) - (b - 0.5) * std::log1p(a / b) -
         0.5 * std::log(sum) + stirling_delta(a) + stirling_delta(b) - stirling_delta(sum);
}

// Continued fraction of the incomplete beta function (modified Lentz); it converges fast
// when x < (a + 1) / (a + b + 2), which the caller ensures. y = 1 - x.
double beta_continued_fraction(double a, double b, double x, double y) {
  constexpr double kTiny = 1e-300;
  constexpr int kMaxTerms = 100000;
  const double qab = a + b;
  const double qap = a + 1.0;
  const double qam = a - 1.0;
  double c = 1.0;
  // 1 - qab x / qap, rewritten with y: for huge a the direct form cancels to a few digits.
  double d = (1.0 - b + qab * y) / qap;
  if (std::abs(d) < kTiny) d = kTiny;
  d = 1.0 / d;
  double h = d;
  for (int m = 1; m <= kMaxTerms; ++m) {
    const double dm = m;
    const double m2 = 2.0 * dm;
    // Even step.
    double aa = dm * (b - dm) * x / ((qam + m2) * (a + m2));
    d = 1.0 + aa * d;
    if (std::abs(d) < kTiny) d = kTiny;
    c = 1.0 + aa / c;
    if (std::abs(c) < kTiny) c = kTiny;
    d = 1.0 / d;
    h *= d * c;
    // Odd step.
    aa = -(a + dm) * (qab + dm) * x / ((a + m2) * (qap + m2));
    d = 1.0 + aa * d;
    if (std::abs(d) < kTiny) d = kTiny;
    c = 1.0 + aa / c;
    if (std::abs(c) < kTiny) c = kTiny;
    d = 1.0 / d;
    const double del = d * c;
    h *= del;
    if (std::abs(del - 1.0) <= kEps) return h;
  }
  return h;  // Not reached for the arguments the t distribution uses (nu <= kAsymptoticNu).
}

// I_x(a, b) and its complement 1 - I_x(a, b), each accurate (the small one is computed
// directly, never as 1 minus something). y = 1 - x is passed in, because the caller
// knows it without cancellation.
struct BetaPair {
  double i;
  double ic;
};

BetaPair incomplete_beta(double a, double b, double x, double y) {
  if (x <= 0.0) return {0.0, 1.0};
  if (y <= 0.0) return {1.0, 0.0};
  const double ln_x = x > 0.5 ? std::log1p(-y) : std::log(x);
  const double ln_y = y > 0.5 ? std::log1p(-x) : std::log(y);
  const double front = std::exp(a * ln_x + b * ln_y - log_beta(a, b));
  if (x < (a + 1.0) / (a + b + 2.0)) {
    const double i = front * beta_continued_fraction(a, b, x, y) / a;
    return {i, 1.0 - i};
  }
  const double ic = front * beta_continued_fraction(b, a, y, x) / b;
  return {1.0 - ic, ic};
}

// P(T > t) for t >= 0 and its complement, from the normal distribution with the first
// two terms of the large-nu expansion of Student's t (its error is O(nu^-3)):
//   P(T > t) = Q(t) + phi(t) [ (t^3 + t) / (4 nu) + (3t^7 - 7t^5 - 5t^3 - 3t) / (96 nu^2) ].
// The coefficients were checked against a 60-digit numerical integration of the density.
BetaPair tails_large_nu(double t, double nu) {
  const double upper = 0.5 * std::erfc(t / std::numbers::sqrt2);
  if (std::isinf(nu)) return {upper, 0.5 * std::erfc(-t / std::numbers::sqrt2)};
  const double t2 = t * t;
  const double phi = std::exp(-0.5 * t2) / std::sqrt(2.0 * std::numbers::pi);
  const double c1 = (t2 * t + t) / 4.0;
  const double c2 = t * (((3.0 * t2 - 7.0) * t2 - 5.0) * t2 - 3.0) / 96.0;
  const double corr = phi * (c1 / nu + c2 / (nu * nu));
  return {upper + corr, 0.5 * std::erfc(-t / std::numbers::sqrt2) - corr};
}

// P(T > t) and P(T <= t) for t >= 0.
BetaPair tails(double t, double nu) {
  const double t2 = t * t;
  if (nu > kAsymptoticNu && t2 * t2 < kAsymptoticT4OverNu * nu) return tails_large_nu(t, nu);
  // P(|T| > t) = I_x(nu/2, 1/2) with x = nu / (nu + t^2).
  const double den = nu + t2;
  const BetaPair p = incomplete_beta(0.5 * nu, 0.5, nu / den, t2 / den);
  return {0.5 * p.i, 0.5 + 0.5 * p.ic};
}

double pdf(double t, double nu) {
  if (std::isinf(nu)) return std::exp(-0.5 * t * t) / std::sqrt(2.0 * std::numbers::pi);
  return std::exp(-log_beta(0.5 * nu, 0.5) - 0.5 * std::log(nu) -
                  0.5 * (nu + 1.0) * std::log1p(t * t / nu));
}

void check_nu(double nu) {
  if (!(nu > 0.0)) throw std::domain_error("student_t: degrees of freedom must be > 0");
}

}  // namespace

// nu = +infinity is accepted and gives the normal distribution.
double student_t_cdf(double t, double nu) {
  check_nu(nu);
  if (std::isnan(t)) return t;
  if (std::isinf(t)) return t > 0.0 ? 1.0 : 0.0;
  const BetaPair p = tails(std::abs(t), nu);
  return t < 0.0 ? p.i : p.ic;
}

double student_t_two_sided(double p, double nu) {
  check_nu(nu);
  if (!(p > 0.0 && p < 1.0)) throw std::domain_error("student_t_two_sided: p must be in (0, 1)");
  const double q = 0.5 * (1.0 - p);  // upper tail to reach

  // Bracket the root of tail(t) - q on [lo, hi]; tail falls monotonically from 1/2.
  double lo = 0.0;
  double hi = 1.0;
  while (tails(hi, nu).i > q) {
    lo = hi;
    hi *= 2.0;
    if (std::isinf(hi)) return hi;
  }

  // Newton on the tail (its derivative is -pdf), falling back to bisection whenever a step
  // leaves the bracket, so it always converges.
  double t = 0.5 * (lo + hi);
  for (int iter = 0; iter < 400; ++iter) {
    const double g = tails(t, nu).i - q;
    if (g == 0.0) return t;
    if (g > 0.0) {
      lo = t;
    } else {
      hi = t;
    }
    double next = t + g / pdf(t, nu);
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (std::abs(next - t) <= 4.0 * kEps * next || hi - lo <= 4.0 * kEps * hi) return next;
    t = next;
  }
  return t;
}

}  // namespace tb::dsp
