#include "dsp/fixture_correction.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <limits>
#include <numbers>
#include <random>
#include <string>

#include "dsp/compensation.hpp"

namespace {

using cplx = std::complex<double>;
using tb::dsp::Cov2;
using tb::dsp::UncertainComplex;

// A bivariate normal draw with covariance c (Cholesky of the 2x2).
struct Gauss2 {
  double l11, l21, l22;
  explicit Gauss2(const Cov2& c)
      : l11(std::sqrt(c.rr)),
        l21(c.ri / std::sqrt(c.rr)),
        l22(std::sqrt(c.ii - c.ri * c.ri / c.rr)) {}
  cplx draw(std::mt19937_64& rng) const {
    std::normal_distribution<double> n(0, 1);
    const double a = n(rng), b = n(rng);
    return {l11 * a, l21 * a + l22 * b};
  }
};

UncertainComplex with_type_a(cplx value, Cov2 cov, double dof) {
  UncertainComplex z;
  z.value = value;
  z.type_a = cov;
  z.dof_a = dof;
  return z;
}

// The scene of one compensation: a part read through a fixture that open/short alone does
// not describe (leads on both sides of a stray admittance), a reference resistor 0.3 % off
// its nominal value, and a load standard near Rref.
struct Scene {
  cplx dut, zm, zo, zs, zl, load_known;
  double rref_tol = 0.01;  // large on purpose: if it were kept, it would dominate
  double load_tol = 2e-4;
  double reconnect = 0.002;
  cplx channel_sens;  // ohm per unit of channel gain error, on the reading
  double channel_u = 3e-5;
};

Scene make_scene(cplx dut, double freq_hz) {
  const double w = 2 * std::numbers::pi * freq_hz;
  const cplx series1{0.03, w * 0.4e-6}, series2{0.02, w * 0.2e-6};
  const cplx y_shunt{1e-7, w * 150e-12};
  const double scale = 1.003;  // the true Rref over its nominal value
  auto read = [&](cplx z) {
    const cplx inner = z + series2;
    return scale * (series1 + inner / (1.0 + y_shunt * inner));
  };
  Scene s;
  s.dut = dut;
  s.load_known = 100.0;
  s.zm = read(dut);
  s.zo = scale * (series1 + 1.0 / y_shunt);
  s.zs = read(0.0);
  s.zl = read(s.load_known);
  s.channel_sens = 0.7 * s.zm;
  return s;
}

UncertainComplex reading_of(const Scene& s) {
  const double a = std::abs(s.zm);
  auto z = with_type_a(s.zm, {4e-10 * a * a, 1e-10 * a * a, 2e-10 * a * a}, 20);
  z.type_b.push_back({"rref_tolerance", s.zm, tb::dsp::rectangular_u(s.rref_tol)});
  z.type_b.push_back({"channel_match_gain", s.channel_sens, s.channel_u});
  return z;
}

tb::dsp::FixtureStandards standards_of(const Scene& s) {
  tb::dsp::FixtureStandards f;
  const double o = std::abs(s.zo), l = std::abs(s.zl);
  // add_type_a carries a standard's real and imaginary scatter as separate terms (their
  // correlation dropped), so the standards here have none.
  f.open = with_type_a(s.zo, {1e-6 * o * o, 0, 1e-6 * o * o}, 15);
  f.short_ = with_type_a(s.zs, {1e-8, 0, 2e-8}, 25);
  f.load = tb::dsp::LoadStandard{with_type_a(s.zl, {1e-8 * l * l, 0, 1e-8 * l * l}, 30),
                                 s.load_known, s.load_tol};
  f.reconnect_half_width_ohm = s.reconnect;
  return f;
}

struct Spread {
  double re = 0, im = 0, mag = 0;
};

// Monte Carlo propagation of distributions (JCGM 101:2008, section 7): every input drawn
// from its own distribution, the open/short/load formula evaluated on each draw, the
// standard deviations of the outputs taken. Rref's tolerance is applied as the physical
// error it is, one scale on all four readings; the channel gain, as the budget states it,
// on the reading alone. Each connection's contact offset is two contacts of +-h/2.
Spread monte_carlo(const Scene& s, int draws, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  const auto reading = reading_of(s);
  const auto std_ = standards_of(s);
  const Gauss2 gm(reading.type_a), go(std_.open.type_a), gs(std_.short_.type_a),
      gl(std_.load->measured.type_a);
  std::uniform_real_distribution<double> unit(-1, 1);
  std::normal_distribution<double> normal(0, 1);
  auto contact = [&] { return s.reconnect / 2 * (unit(rng) + unit(rng)); };
  double sum[3] = {}, sum2[3] = {};
  for (int i = 0; i < draws; ++i) {
    const double rref = 1 + s.rref_tol * unit(rng);
    const cplx zm =
        rref * (s.zm + gm.draw(rng) + s.channel_sens * s.channel_u * normal(rng)) + contact();
    const cplx zo = rref * (s.zo + go.draw(rng));
    const cplx zs = rref * (s.zs + gs.draw(rng)) + contact();
    const cplx zl = rref * (s.zl + gl.draw(rng)) + contact();
    const cplx known = s.load_known * (1 + s.load_tol * unit(rng));
    const cplx z = tb::dsp::compensate_open_short_load(zm, zo, zs, zl, known);
    const double v[3] = {z.real(), z.imag(), std::abs(z)};
    for (int k = 0; k < 3; ++k) {
      sum[k] += v[k];
      sum2[k] += v[k] * v[k];
    }
  }
  auto sd = [&](int k) {
    const double m = sum[k] / draws;
    return std::sqrt((sum2[k] / draws - m * m) * draws / (draws - 1.0));
  };
  return {sd(0), sd(1), sd(2)};
}

bool has_term(const UncertainComplex& z, const std::string& name) {
  for (const auto& t : z.type_b)
    if (t.name == name) return true;
  return false;
}

}  // namespace

TEST_CASE("open/short/load uncertainty agrees with a Monte Carlo of the formula",
          "[fixture_correction]") {
  // JCGM 101:2008 section 8 validates the law of propagation of uncertainty by comparing it
  // with the Monte Carlo result; here the standard uncertainties must agree within 3 %
  // (2e5 draws estimate a standard deviation to about 0.2 %).
  const double f = 1000;
  const double w = 2 * std::numbers::pi * f;
  for (cplx dut : {cplx{0.47, w * 2e-6}, cplx{82.0, 3.0}, cplx{10.0, -1 / (w * 10e-9)}}) {
    INFO("dut " << dut);
    const Scene s = make_scene(dut, f);
    const auto out = tb::dsp::compensate(reading_of(s), standards_of(s));
    // The value: the exact part through this fixture, the 0.3 % Rref error included.
    CHECK(std::abs(out.value - dut) / std::abs(dut) < 1e-9);
    const auto u_re = tb::dsp::propagate(out, out.value.real(), 1, 0);
    const auto u_im = tb::dsp::propagate(out, out.value.imag(), 0, 1);
    const auto u_mag = tb::dsp::propagate(out, [](cplx z) { return std::abs(z); });
    const Spread mc = monte_carlo(s, 200000, 101);
    CHECK(u_re.u_c == Approx(mc.re).epsilon(0.03));
    CHECK(u_im.u_c == Approx(mc.im).epsilon(0.03));
    CHECK(u_mag.u_c == Approx(mc.mag).epsilon(0.03));
  }
}

TEST_CASE("a load standard replaces the rref_tolerance term with load_tolerance",
          "[fixture_correction]") {
  const Scene s = make_scene({82.0, 3.0}, 1000);
  auto reading = reading_of(s);
  reading.type_b.push_back({"rref_tempco", 0.5 * s.zm, 1e-4});
  reading.type_b.push_back({"rref_reactance_ls", cplx(0, 1) * s.zm, 1e-5});
  auto standards = standards_of(s);

  const auto with_load = tb::dsp::compensate(reading, standards);
  CHECK_FALSE(has_term(with_load, "rref_tolerance"));
  CHECK(has_term(with_load, "load_tolerance"));
  CHECK(has_term(with_load, "rref_tempco"));
  CHECK(has_term(with_load, "rref_reactance_ls"));
  CHECK(has_term(with_load, "load_real"));
  CHECK(has_term(with_load, "reconnection_load"));
  // With a 1 % Rref tolerance and a 0.02 % load, the scale uncertainty is the load's.
  const auto mag = [](cplx z) { return std::abs(z); };
  const double u_rel = tb::dsp::propagate(with_load, mag).u_c / std::abs(with_load.value);
  CHECK(u_rel < 5e-4);

  standards.load.reset();
  const auto open_short = tb::dsp::compensate(reading, standards);
  CHECK(has_term(open_short, "rref_tolerance"));
  CHECK_FALSE(has_term(open_short, "load_tolerance"));
  CHECK(tb::dsp::propagate(open_short, mag).u_c / std::abs(open_short.value) >
        tb::dsp::rectangular_u(0.01) * 0.9);
}

TEST_CASE("open/short/load sensitivities stay finite for a reading at the short",
          "[fixture_correction]") {
  const Scene s = make_scene({0.47, 0.01}, 1000);
  auto reading = reading_of(s);
  reading.value = s.zs;
  const auto out = tb::dsp::compensate(reading, standards_of(s));
  CHECK(std::abs(out.value) < 1e-12);
  const auto u = tb::dsp::propagate(out, out.value.real(), 1, 0);
  CHECK(std::isfinite(u.u_c));
  CHECK(u.u_c > 0);
}

TEST_CASE("open/short/load with an ideal open", "[fixture_correction]") {
  Scene s = make_scene({82.0, 3.0}, 1000);
  auto standards = standards_of(s);
  standards.open = {};
  standards.open.value = {std::numeric_limits<double>::infinity(), 0};
  const auto out = tb::dsp::compensate(reading_of(s), standards);
  const cplx want = s.load_known * (s.zm - s.zs) / (s.zl - s.zs);
  CHECK(std::abs(out.value - want) < 1e-12 * std::abs(want));
  const auto u = tb::dsp::propagate(out, [](cplx z) { return std::abs(z); });
  CHECK(std::isfinite(u.u_c));
}
