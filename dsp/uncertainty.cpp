#include "dsp/uncertainty.hpp"

#include "dsp/student_t.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <stdexcept>

namespace tb::dsp {

namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();

// Beyond this many effective degrees of freedom k differs from the normal value by < 3e-6.
constexpr double kNormalNu = 1e6;

// Smallest step of the numerical gradient, ohm: keeps h > 0 for Z == 0.
constexpr double kTinyStepOhm = 1e-12;

}  // namespace

UncertainComplex mean_with_type_a(std::span<const std::complex<double>> samples) {
  if (samples.empty()) throw std::invalid_argument("mean_with_type_a: no samples");
  const double n = static_cast<double>(samples.size());

  std::complex<double> sum{0.0, 0.0};
  for (const auto& s : samples)
    sum += s;
  UncertainComplex out;
  out.value = sum / n;
  if (samples.size() < 2) return out;

  // Two-pass (deviations from the mean) so that a large common value does not swamp
  // the small spread of repeated blocks.
  double srr = 0.0, sri = 0.0, sii = 0.0;
  for (const auto& s : samples) {
    const std::complex<double> d = s - out.value;
    srr += d.real() * d.real();
    sri += d.real() * d.imag();
    sii += d.imag() * d.imag();
  }
  const double scale = 1.0 / ((n - 1.0) * n);  // sample covariance, then of the mean
  out.type_a = {srr * scale, sri * scale, sii * scale};
  out.dof_a = n - 1.0;
  return out;
}

double rectangular_u(double half_width) {
  if (!(half_width >= 0.0)) throw std::domain_error("rectangular_u: half-width must be >= 0");
  return half_width / std::sqrt(3.0);
}

double welch_satterthwaite(std::span<const double> u_i, std::span<const double> nu_i) {
  if (u_i.size() != nu_i.size()) {
    throw std::invalid_argument("welch_satterthwaite: u_i and nu_i differ in length");
  }
  double u2 = 0.0;
  double den = 0.0;
  for (std::size_t i = 0; i < u_i.size(); ++i) {
    const double ui2 = u_i[i] * u_i[i];
    u2 += ui2;
    if (nu_i[i] > 0.0) den += ui2 * ui2 / nu_i[i];
  }
  if (den == 0.0) return kInf;  // every term exactly known (or all zero)
  return u2 * u2 / den;
}

double coverage_factor(double nu_eff, double p) {
  const double nu = std::isnan(nu_eff) ? 1.0 : std::max(nu_eff, 1.0);
  return student_t_two_sided(p, nu > kNormalNu ? kInf : nu);
}

double coverage_factor_uniform_normal(double a, double sigma, double p) {
  if (!(a >= 0) || !(sigma >= 0) || !(p > 0 && p < 1))
    throw std::domain_error("coverage_factor_uniform_normal: a, sigma >= 0 and 0 < p < 1");
  const double u_c = std::sqrt(a * a / 3 + sigma * sigma);
  if (u_c == 0) return 2.0;
  if (sigma <= 1e-12 * a) return p * std::sqrt(3.0);  // the uniform alone
  auto phi = [](double x) { return std::exp(-0.5 * x * x) / std::sqrt(2 * std::numbers::pi); };
  auto cdf = [](double x) { return 0.5 * std::erfc(-x / std::numbers::sqrt2); };
  // P(|Y| <= t) with Y = U(-a, a) + N(0, sigma): the uniform's average of the normal's
  // interval probability, integrated in closed form with G(w) = w Phi(w/s) + s phi(w/s),
  // the antiderivative of Phi(w / s).
  auto g = [&](double w) { return w * cdf(w / sigma) + sigma * phi(w / sigma); };
  auto inside = [&](double t) {
    if (a <= 1e-12 * sigma) return std::erf(t / (sigma * std::numbers::sqrt2));
    return (g(t + a) - g(t - a) - g(a - t) + g(-t - a)) / (2 * a);
  };
  double lo = 0, hi = a + 10 * sigma;
  for (int i = 0; i < 200 && hi - lo > 1e-12 * hi; ++i) {
    const double mid = 0.5 * (lo + hi);
    (inside(mid) < p ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi) / u_c;
}

ScalarUncertainty propagate(const UncertainComplex& z, double y, double dy_dre, double dy_dim) {
  ScalarUncertainty out;
  out.value = y;

  const Cov2& c = z.type_a;
  const double ua2 = dy_dre * dy_dre * c.rr + 2.0 * dy_dre * dy_dim * c.ri + dy_dim * dy_dim * c.ii;
  // A covariance estimate is positive semidefinite; rounding may still give -0 or -tiny.
  out.u_a = std::sqrt(std::max(ua2, 0.0));

  std::vector<double> u_i;
  std::vector<double> nu_i;
  u_i.reserve(z.type_b.size() + 1);
  nu_i.reserve(z.type_b.size() + 1);
  // With dof_a == 0 the Type A entry is skipped by welch_satterthwaite (and is zero anyway
  // when there was no repeated measurement).
  u_i.push_back(out.u_a);
  nu_i.push_back(z.dof_a);
  double ub2 = 0.0;
  double largest = out.u_a, largest_rect = 0.0;
  for (const TypeBTerm& term : z.type_b) {
    const double ci =
        (dy_dre * term.sensitivity.real() + dy_dim * term.sensitivity.imag()) * term.u;
    ub2 += ci * ci;
    largest = std::max(largest, std::abs(ci));
    if (term.rectangular) largest_rect = std::max(largest_rect, std::abs(ci));
    u_i.push_back(std::abs(ci));
    nu_i.push_back(term.dof);
  }
  out.u_b = std::sqrt(ub2);
  out.u_c = std::sqrt(out.u_a * out.u_a + ub2);

  if (out.u_c == 0.0) {
    out.nu_eff = kInf;
    out.k = 2.0;
    out.expanded = 0.0;
    return out;
  }
  out.nu_eff = welch_satterthwaite(u_i, nu_i);
  out.k = coverage_factor(out.nu_eff);
  if (largest_rect > 0 && largest_rect >= largest) {
    const double rest = std::sqrt(std::max(out.u_c * out.u_c - largest_rect * largest_rect, 0.0));
    const double k_conv = coverage_factor_uniform_normal(std::sqrt(3.0) * largest_rect, rest);
    out.k = std::min(out.k, k_conv * out.k / coverage_factor(kInf));
  }
  out.expanded = out.k * out.u_c;
  return out;
}

ScalarUncertainty propagate(const UncertainComplex& z,
                            const std::function<double(std::complex<double>)>& f) {
  const double h = 1e-6 * std::max(std::abs(z.value), kTinyStepOhm);
  const std::complex<double> dre{h, 0.0};
  const std::complex<double> dim{0.0, h};
  const double g_re = (f(z.value + dre) - f(z.value - dre)) / (2.0 * h);
  const double g_im = (f(z.value + dim) - f(z.value - dim)) / (2.0 * h);
  return propagate(z, f(z.value), g_re, g_im);
}

}  // namespace tb::dsp
