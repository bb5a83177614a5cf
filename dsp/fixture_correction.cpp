#include "dsp/fixture_correction.hpp"

#include <algorithm>
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
  if (standard.dof_a > 0) {
    out.type_b.push_back(
        {name + "_real", sensitivity, std::sqrt(standard.type_a.rr), standard.dof_a});
    out.type_b.push_back(
        {name + "_imag", sensitivity * cplx(0, 1), std::sqrt(standard.type_a.ii), standard.dof_a});
  }
  // The standards' own Type B terms (Rref, channel match) are shared with the reading and
  // largely cancel in the compensated value; they are not added a second time. Their
  // interpolation between calibration frequencies (calibration_curve.hpp) and the hum
  // on their tone are theirs alone and do not cancel: they are carried, named after the
  // standard.
  for (const auto& t : standard.type_b) {
    if (t.name.rfind("interpolation", 0) != 0 && t.name.rfind("mains_hum", 0) != 0) continue;
    out.type_b.push_back({name + "_" + t.name, t.sensitivity * sensitivity, t.u, t.dof});
  }
}

// Open/short/load with its derivatives in closed form. From
// Zdut = Zstd (Zo - Zsm)(Zm - Zs) / [(Zsm - Zs)(Zo - Zm)] the logarithmic derivatives are
// sums of 1/(difference) terms; K = Zdut / (Zm - Zs) is formed without dividing by Zm - Zs
// so a reading equal to the short (Zdut = 0) keeps finite sensitivities.
struct OslPartials {
  cplx value, d_m, d_o, d_s, d_l;
};

OslPartials osl_partials(cplx zm, cplx zo, cplx zs, cplx zl, cplx zstd) {
  OslPartials p;
  p.value = compensate_open_short_load(zm, zo, zs, zl, zstd);  // throws for degenerate standards
  const bool ideal_open = std::isinf(zo.real()) || std::isinf(zo.imag());
  // 1/(Zo - x) vanishes for an ideal open, and (Zo - Zsm)/(Zo - Zm) tends to 1.
  const cplx inv_o_m = ideal_open ? cplx{} : 1.0 / (zo - zm);
  const cplx inv_o_l = ideal_open ? cplx{} : 1.0 / (zo - zl);
  const cplx k = ideal_open ? zstd / (zl - zs) : zstd * (zo - zl) / ((zl - zs) * (zo - zm));
  p.d_m = k + p.value * inv_o_m;
  p.d_s = -k + p.value / (zl - zs);
  p.d_l = -p.value * inv_o_l - p.value / (zl - zs);
  p.d_o = p.value * inv_o_l - p.value * inv_o_m;
  return p;
}

// The reading's own budget mapped through dZdut/dZm. `drop_rref_tolerance` with a load:
// every impedance the bridge reads (part, open, short, load) is Rref times a function of
// the measured ratio, so an error of Rref scales all four alike, and the open/short/load
// formula is homogeneous of degree 0 in them: the error cancels, the load's known value
// sets the scale instead. The fixed properties of Rref are dropped: its offset from the
// nominal value and its own reactance (Rref is complex throughout, and cancels the same
// way). What can differ between the standards' captures and the part's stays: a drift
// with temperature ("rref_tempco").
void carry_reading(UncertainComplex& out, const UncertainComplex& m, cplx d_m,
                   bool drop_rref_tolerance) {
  out.type_a = map_cov(m.type_a, d_m);
  out.dof_a = m.dof_a;
  for (auto t : m.type_b) {
    if (drop_rref_tolerance && (t.name == "rref_tolerance" || t.name == "rref_reactance")) continue;
    t.sensitivity *= d_m;
    out.type_b.push_back(t);
  }
}

UncertainComplex compensate_with_load(const UncertainComplex& m, const FixtureStandards& s) {
  const LoadStandard& load = *s.load;
  const auto p =
      osl_partials(m.value, s.open.value, s.short_.value, load.measured.value, load.known);
  UncertainComplex out;
  out.value = p.value;
  carry_reading(out, m, p.d_m, true);
  add_type_a(out, s.open, p.d_o, "open");
  add_type_a(out, s.short_, p.d_s, "short");
  add_type_a(out, load.measured, p.d_l, "load");
  if (load.tolerance_rel > 0) {
    // Zdut is proportional to Zstd: a relative error x of the load moves Zdut by Zdut * x.
    out.type_b.push_back({"load_tolerance", p.value, rectangular_u(load.tolerance_rel), 1e9, true});
  }
  if (s.reconnect_half_width_ohm > 0) {
    // Three connections (part, short, load), each with its own contact offset. The stated
    // half-width is that of the change between two connections; two independent offsets of
    // standard uncertainty u_c give a change of sqrt(2) u_c, so each has u = h / sqrt(6).
    const double u = rectangular_u(s.reconnect_half_width_ohm) / std::sqrt(2.0);
    out.type_b.push_back({"reconnection", p.d_m, u, 1e9});
    out.type_b.push_back({"reconnection_short", p.d_s, u, 1e9});
    out.type_b.push_back({"reconnection_load", p.d_l, u, 1e9});
  }
  return out;
}

}  // namespace

UncertainComplex compensate(const UncertainComplex& m, const FixtureStandards& s) {
  if (s.load) return compensate_with_load(m, s);
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
  carry_reading(out, m, d_m, false);
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
