#include "dsp/fixture_correction.hpp"

#include <cmath>

#include "dsp/compensation.hpp"

namespace tb::dsp {

namespace {

using cplx = std::complex<double>;

// A complex derivative g maps a covariance of (Re, Im) through the 2x2 Jacobian
// [[Re g, -Im g], [Im g, Re g]] (the compensation is holomorphic in each input).
Cov2 map_cov(const Cov2& c, cplx g) {
  const double a = g.real(), b = g.imag();
  // J C J^T with J = [[a, -b], [b, a]].
  const double rr = a * a * c.rr - 2 * a * b * c.ri + b * b * c.ii;
  const double ii = b * b * c.rr + 2 * a * b * c.ri + a * a * c.ii;
  const double ri = a * b * c.rr + (a * a - b * b) * c.ri - a * b * c.ii;
  return {rr, ri, ii};
}

// Type A of a standard as two real terms (its real and imaginary scatter), with the
// standard's degrees of freedom; the small correlation between them is dropped.
void add_type_a(UncertainComplex& out, const UncertainComplex& standard, cplx sensitivity,
                const std::string& name) {
  if (standard.dof_a <= 0) return;
  out.type_b.push_back(
      {name + "_real", sensitivity, std::sqrt(standard.type_a.rr), standard.dof_a});
  out.type_b.push_back(
      {name + "_imag", sensitivity * cplx(0, 1), std::sqrt(standard.type_a.ii), standard.dof_a});
  // The standards' own Type B terms (Rref, channel match) are shared with the reading and
  // largely cancel in the compensated value; they are not added a second time.
}

}  // namespace

UncertainComplex compensate(const UncertainComplex& m, const FixtureStandards& s) {
  const cplx zo = s.open.value, zs = s.short_.value, zm = m.value;
  auto f = [&](cplx a, cplx b, cplx c) { return compensate_open_short(a, b, c); };
  const cplx value = f(zm, zo, zs);
  // Complex derivatives by a central difference along the real axis (holomorphic).
  auto deriv = [&](int which) {
    const double h = 1e-6 * std::max({std::abs(zm), std::abs(zs), 1e-9});
    cplx p[3] = {zm, zo, zs}, q[3] = {zm, zo, zs};
    p[which] += h;
    q[which] -= h;
    return (f(p[0], p[1], p[2]) - f(q[0], q[1], q[2])) / (2 * h);
  };
  const cplx d_m = deriv(0), d_o = deriv(1), d_s = deriv(2);

  UncertainComplex out;
  out.value = value;
  out.type_a = map_cov(m.type_a, d_m);
  out.dof_a = m.dof_a;
  for (auto t : m.type_b) {
    t.sensitivity *= d_m;
    out.type_b.push_back(t);
  }
  add_type_a(out, s.open, d_o, "open");
  add_type_a(out, s.short_, d_s, "short");
  if (s.reconnect_half_width_ohm > 0) {
    // More lead resistance at the part's connection than at the short's reads as if the
    // short had been that much smaller: sensitivity -dZdut/dZs.
    out.type_b.push_back({"reconnection", -d_s, rectangular_u(s.reconnect_half_width_ohm), 1e9});
  }
  return out;
}

}  // namespace tb::dsp
