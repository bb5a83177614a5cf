#include "dsp/swap_average.hpp"

#include <cmath>
#include <stdexcept>

namespace tb::dsp {

namespace {

// Covariance of s * dz for a complex s: the real map [sr -si; si sr] applied as M S M^T.
Cov2 scaled(const Cov2& c, std::complex<double> s) {
  const double a = s.real(), b = -s.imag(), d = s.real(), e = s.imag();
  const double r0 = a * c.rr + b * c.ri, r1 = a * c.ri + b * c.ii;
  const double i0 = e * c.rr + d * c.ri, i1 = e * c.ri + d * c.ii;
  return {r0 * a + r1 * b, r0 * e + r1 * d, i0 * e + i1 * d};
}

void add(Cov2& into, const Cov2& c) {
  into.rr += c.rr;
  into.ri += c.ri;
  into.ii += c.ii;
}

// y = f(x1, x2) with complex-analytic sensitivities s1, s2: Type A by the sum of the two
// mapped covariances, dof by Welch-Satterthwaite, Type B terms mapped (one named input
// seen in both keeps one term with the sensitivities added).
UncertainComplex combine(std::complex<double> y, const UncertainComplex& x1,
                         std::complex<double> s1, const UncertainComplex& x2,
                         std::complex<double> s2) {
  UncertainComplex out;
  out.value = y;
  const Cov2 c1 = scaled(x1.type_a, s1), c2 = scaled(x2.type_a, s2);
  add(out.type_a, c1);
  add(out.type_a, c2);
  const double u[2] = {std::sqrt(c1.rr + c1.ii), std::sqrt(c2.rr + c2.ii)};
  const double nu[2] = {x1.dof_a, x2.dof_a};
  const double nu_eff = welch_satterthwaite(u, nu);
  out.dof_a = (nu[0] > 0 || nu[1] > 0) && std::isfinite(nu_eff) ? nu_eff : 0;
  for (const auto& t : x1.type_b)
    out.type_b.push_back({t.name, s1 * t.sensitivity, t.u, t.dof});
  for (const auto& t : x2.type_b) {
    bool merged = false;
    for (auto& o : out.type_b) {
      if (o.name == t.name && o.u == t.u) {
        o.sensitivity += s2 * t.sensitivity;
        merged = true;
      }
    }
    if (!merged) out.type_b.push_back({t.name, s2 * t.sensitivity, t.u, t.dof});
  }
  return out;
}

bool usable(std::complex<double> r) {
  return std::isfinite(r.real()) && std::isfinite(r.imag()) && r != 0.0;
}

}  // namespace

UncertainComplex ratio_with_type_a(std::complex<double> ratio, double u_rel, double dof) {
  UncertainComplex out;
  out.value = ratio;
  const double v = std::norm(ratio) * u_rel * u_rel / 2;
  out.type_a = {v, 0, v};
  out.dof_a = dof > 0 ? dof : 0;
  return out;
}

SwapAverage swap_average(const UncertainComplex& normal, const UncertainComplex& swapped) {
  const auto r1 = normal.value, r2 = swapped.value;
  if (!usable(r1) || !usable(r2))
    throw std::domain_error("swap average: a ratio is zero or not finite");
  auto r = std::sqrt(r1 / r2);
  if ((r * std::conj(r1)).real() < 0) r = -r;
  // H from r rather than from its own square root, so the two stay on consistent branches.
  const auto h = r1 / r;
  SwapAverage out;
  // d r = r/2 (dr1/r1 - dr2/r2);  d H = H/2 (dr1/r1 + dr2/r2).
  out.ratio = combine(r, normal, r / (2.0 * r1), swapped, -r / (2.0 * r2));
  out.mismatch = combine(h, normal, h / (2.0 * r1), swapped, h / (2.0 * r2));
  return out;
}

UncertainComplex impedance_from_uncertain_ratio(Layout layout, double rref_ohm,
                                                double rref_tolerance_rel,
                                                const UncertainComplex& ratio) {
  const std::complex<double> r = ratio.value;
  const auto z = impedance_from_ratio(layout, rref_ohm, r);
  // part_low Z = R r / (1 - r): dZ/dr = R / (1 - r)^2;  part_high Z = R (1/r - 1): -R / r^2.
  const std::complex<double> s =
      layout == Layout::part_low ? rref_ohm / ((1.0 - r) * (1.0 - r)) : -rref_ohm / (r * r);
  UncertainComplex out;
  out.value = z;
  out.type_a = scaled(ratio.type_a, s);
  out.dof_a = ratio.dof_a;
  for (const auto& t : ratio.type_b)
    out.type_b.push_back({t.name, s * t.sensitivity, t.u, t.dof});
  // Z is proportional to Rref in both layouts: dZ per unit relative change of Rref is Z.
  if (rref_tolerance_rel > 0)
    out.type_b.push_back({"rref_tolerance", z, rectangular_u(rref_tolerance_rel), 1e9, true});
  return out;
}

}  // namespace tb::dsp
