#include "dsp/calibration_curve.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <numbers>
#include <stdexcept>
#include <vector>

namespace {

using cplx = std::complex<double>;
using tb::dsp::ImpedancePoint;
using tb::dsp::MatchPoint;

constexpr double kTwoPi = 2.0 * std::numbers::pi;

// 3 per decade from 10 Hz to 10 kHz (10, 21.5, 46.4, 100, ...), plus 120 Hz (60 Hz mains).
std::vector<double> grid_hz() {
  std::vector<double> f;
  for (int n = 3; n <= 12; ++n) {
    f.push_back(std::pow(10.0, n / 3.0));
    if (n == 6) f.push_back(120);
  }
  return f;
}

// Frequencies strictly between grid points: 15 per interval, evenly in log f.
std::vector<double> between(const std::vector<double>& grid) {
  std::vector<double> f;
  for (std::size_t k = 0; k + 1 < grid.size(); ++k) {
    for (int i = 1; i < 16; ++i)
      f.push_back(grid[k] * std::pow(grid[k + 1] / grid[k], i / 16.0));
  }
  return f;
}

// First-order high-pass with a flat gain error: the mismatch one input's AC coupling makes
// against the other's. H = g * jf/fc / (1 + jf/fc) (common practice, no source).
cplx high_pass(double f, double g, double fc) {
  const cplx s{0, f / fc};
  return g * s / (1.0 + s);
}

// Shunt R || C (an open jig: leakage and stray capacitance): Y = 1/R + j w C.
cplx shunt_rc(double f, double r, double c) {
  return 1.0 / cplx{1 / r, kTwoPi * f * c};
}

// Series R-L (a shorted jig: lead resistance and loop inductance): Z = R + j w L.
cplx series_rl(double f, double r, double l) {
  return {r, kTwoPi * f * l};
}

ImpedancePoint point(double f, cplx z) {
  ImpedancePoint p;
  p.freq_hz = f;
  p.z.value = z;
  return p;
}

}  // namespace

TEST_CASE("a high-pass channel mismatch is interpolated within its stated bound",
          "[calibration_curve]") {
  const double g = 0.985, fc = 8.0;  // the highest AC-coupling corner of card_faults.hpp
  const auto f_grid = grid_hz();
  std::vector<MatchPoint> grid;
  for (double f : f_grid)
    grid.push_back({f, high_pass(f, g, fc), 1e-5, 1e-5});
  struct Sample {
    double f, gain_err, gain_bound, phase_err, phase_bound;
  };
  double worst_gain = 0, worst_phase = 0, widest_gain = 0, widest_phase = 0;
  for (std::size_t k = 0; k + 1 < f_grid.size(); ++k) {
    std::vector<Sample> inside;
    double max_gain = 0, max_phase = 0;
    for (double f : between({f_grid[k], f_grid[k + 1]})) {
      const auto est = tb::dsp::interpolate_match(grid, f);
      REQUIRE(est);
      CHECK_FALSE(est->on_grid_point);
      const cplx truth = high_pass(f, g, fc);
      inside.push_back({f, std::abs(std::abs(est->h) / std::abs(truth) - 1),
                        est->interp_gain_half_rel, std::abs(std::arg(est->h / truth)),
                        est->interp_phase_half_rad});
      max_gain = std::max(max_gain, inside.back().gain_err);
      max_phase = std::max(max_phase, inside.back().phase_err);
      // The points' own uncertainty, interpolated, stays within theirs.
      CHECK(est->u_gain_rel <= 1e-5 + 1e-18);
      CHECK(est->u_gain_rel >= 1e-5 / std::sqrt(2.0) - 1e-18);
    }
    // "Not absurdly wide": the interval's widest bound within 10 times its largest true
    // error, or under 1e-5 (0.09 mdB; 10 urad), well below a card's channel-match scatter.
    // Compared per interval, not per point: the true error passes through zero inside an
    // interval and vanishes on the points, where any honest bound is relatively wide.
    double max_gain_bound = 0, max_phase_bound = 0;
    for (const auto& s : inside) {
      INFO("f " << s.f << " Hz: gain error " << s.gain_err << " bound " << s.gain_bound
                << ", phase error " << s.phase_err << " bound " << s.phase_bound);
      // Plus 1e-6 (0.009 mdB; 1 urad): where the error is that small, its shape within the
      // interval can differ from the bound's; far below any card's channel-match scatter.
      CHECK(s.gain_err <= s.gain_bound + 1e-6);
      CHECK(s.phase_err <= s.phase_bound + 1e-6);
      max_gain_bound = std::max(max_gain_bound, s.gain_bound);
      max_phase_bound = std::max(max_phase_bound, s.phase_bound);
    }
    INFO("interval " << f_grid[k] << " - " << f_grid[k + 1] << " Hz: gain error " << max_gain
                     << " bound " << max_gain_bound << ", phase error " << max_phase << " bound "
                     << max_phase_bound);
    CHECK(max_gain_bound <= std::max(10 * max_gain, 1e-5));
    CHECK(max_phase_bound <= std::max(10 * max_phase, 1e-5));
    worst_gain = std::max(worst_gain, max_gain);
    worst_phase = std::max(worst_phase, max_phase);
    widest_gain = std::max(widest_gain, max_gain_bound);
    widest_phase = std::max(widest_phase, max_phase_bound);
  }
  WARN("high-pass fc 8 Hz, 3/decade: worst error gain " << worst_gain << " phase " << worst_phase
                                                        << " rad; widest bound gain " << widest_gain
                                                        << " phase " << widest_phase << " rad");
  // Near the corner the curvature is real: the interpolation term is not negligible there.
  CHECK(worst_gain > 1e-4);
}

TEST_CASE("a channel match on a grid point is that point, unchanged", "[calibration_curve]") {
  std::vector<MatchPoint> grid;
  for (double f : grid_hz())
    grid.push_back({f, high_pass(f, 1.01, 3.0), 2e-5, 3e-5});
  REQUIRE(grid[7].freq_hz == Approx(1000));
  const auto est = tb::dsp::interpolate_match(grid, 1000 * (1 + 5e-4));
  REQUIRE(est);
  CHECK(est->on_grid_point);
  CHECK(est->h == grid[7].h);
  CHECK(est->u_gain_rel == 2e-5);
  CHECK(est->u_phase_rad == 3e-5);
  CHECK(est->interp_gain_half_rel == 0);
  CHECK(est->total_gain_u_rel() == 2e-5);
}

TEST_CASE("a channel phase that wraps past pi is unwrapped before interpolating",
          "[calibration_curve]") {
  // A 50 us timing offset between the inputs: phase -2 pi f tau reaches -pi at 10 kHz and
  // the stored angle wraps to +pi there (common practice, no source).
  const double tau = 50e-6;
  const auto delay = [&](double f) { return std::polar(1.0, -kTwoPi * f * tau); };
  std::vector<MatchPoint> grid;
  for (double f : grid_hz())
    grid.push_back({f * 1.0001, delay(f * 1.0001), 0, 0});  // 10 kHz lands just past -pi
  REQUIRE(std::arg(grid.back().h) > 3);                     // wrapped
  const double f = 8000;
  const auto est = tb::dsp::interpolate_match(grid, f);
  REQUIRE(est);
  const double err = std::abs(std::arg(est->h / delay(f)));
  INFO("phase error " << err << " bound " << est->interp_phase_half_rad);
  CHECK(err <= est->interp_phase_half_rad);
  CHECK(err < 0.1);
}

TEST_CASE("a shunt R-C open is recovered exactly between points", "[calibration_curve]") {
  const double r = 20e6, c = 180e-12;
  std::vector<ImpedancePoint> grid;
  for (double f : grid_hz())
    grid.push_back(point(f, shunt_rc(f, r, c)));
  for (double f : between(grid_hz())) {
    const auto z = tb::dsp::interpolate_open(grid, f);
    REQUIRE(z);
    const cplx truth = shunt_rc(f, r, c);
    INFO("f " << f);
    CHECK(std::abs(z->value - truth) / std::abs(truth) < 1e-12);
    // G and C are flat: no curvature, no interpolation term.
    for (const auto& t : z->type_b)
      CHECK(t.u * std::abs(t.sensitivity) < 1e-12 * std::abs(truth));
  }
}

TEST_CASE("a series R-L short and a load are recovered exactly between points",
          "[calibration_curve]") {
  const double r = 0.043, l = 0.35e-6;
  std::vector<ImpedancePoint> shorts, loads;
  for (double f : grid_hz()) {
    shorts.push_back(point(f, series_rl(f, r, l)));
    loads.push_back(point(f, series_rl(f, 100.02, 1.2e-6)));
  }
  for (double f : between(grid_hz())) {
    const auto zs = tb::dsp::interpolate_short(shorts, f);
    const auto zl = tb::dsp::interpolate_load(loads, f);
    REQUIRE(zs);
    REQUIRE(zl);
    INFO("f " << f);
    CHECK(std::abs(zs->value - series_rl(f, r, l)) < 1e-14);
    CHECK(std::abs(zl->value - series_rl(f, 100.02, 1.2e-6)) < 1e-11);
  }
}

TEST_CASE("an interpolated standard carries its points' Type A by the weights",
          "[calibration_curve]") {
  // Two independent points, each with Re variance v, at t = 1/2 in log f: the interpolated
  // R has variance (1/2)^2 v + (1/2)^2 v = v / 2 (GUM, JCGM 100:2008, eq. 10).
  const double v = 1e-8;
  std::vector<ImpedancePoint> grid;
  for (double f : {100.0, 1000.0, 10000.0}) {
    ImpedancePoint p = point(f, series_rl(f, 0.05, 0.4e-6));
    p.z.type_a = {v, 0, v};
    p.z.dof_a = 15;
    p.z.type_b.push_back({"rref_tolerance", {0.05, 0}, 1e-3});
    grid.push_back(p);
  }
  const double f = std::sqrt(100.0 * 1000.0);
  const auto z = tb::dsp::interpolate_short(grid, f);
  REQUIRE(z);
  CHECK(z->type_a.rr == Approx(v / 2).epsilon(1e-9));
  // The reactance scales with omega / omega_j: (0.5 sqrt(10))^2 v + (0.5 / sqrt(10))^2 v.
  CHECK(z->type_a.ii == Approx(0.25 * (10 + 0.1) * v).epsilon(1e-9));
  // Welch-Satterthwaite on the two points' contributions (2.75 v and 0.275 v, 15 dof each)
  // gives between 15 and 30.
  CHECK(z->dof_a >= 15);
  CHECK(z->dof_a <= 30);
  // The same resistor's tolerance on both points stays one input.
  int rref_terms = 0;
  for (const auto& t : z->type_b)
    rref_terms += t.name == "rref_tolerance";
  CHECK(rref_terms == 1);
}

TEST_CASE("ideal opens interpolate to an ideal open", "[calibration_curve]") {
  std::vector<ImpedancePoint> grid;
  for (double f : grid_hz())
    grid.push_back(point(f, cplx{1e18, 0}));
  const auto z = tb::dsp::interpolate_open(grid, 1500);
  REQUIRE(z);
  CHECK(std::abs(z->value) >= 1e18);
  CHECK(z->type_b.empty());
  CHECK(z->dof_a == 0);
}

TEST_CASE("a calibration is not extrapolated beyond its grid", "[calibration_curve]") {
  std::vector<ImpedancePoint> grid;
  std::vector<MatchPoint> match;
  for (double f : {100.0, 1000.0, 10000.0}) {
    grid.push_back(point(f, series_rl(f, 0.05, 0.4e-6)));
    match.push_back({f, high_pass(f, 1, 2), 0, 0});
  }
  CHECK_FALSE(tb::dsp::interpolate_short(grid, 98));
  CHECK_FALSE(tb::dsp::interpolate_short(grid, 10200));
  CHECK_FALSE(tb::dsp::interpolate_open(grid, 50));
  CHECK_FALSE(tb::dsp::interpolate_match(match, 20000));
  CHECK_FALSE(tb::dsp::interpolate_match(std::vector<MatchPoint>{}, 1000));
  // Within 0.1 % of an end point: that end point.
  const auto end = tb::dsp::interpolate_short(grid, 10000 * 1.0009);
  REQUIRE(end);
  CHECK(end->value == grid.back().z.value);
  const auto start = tb::dsp::interpolate_match(match, 100 * 0.9991);
  REQUIRE(start);
  CHECK(start->h == match.front().h);
  // Two points give no curvature estimate: only the points themselves.
  const std::vector<MatchPoint> two(match.begin(), match.begin() + 2);
  CHECK_FALSE(tb::dsp::interpolate_match(two, 300));
  CHECK(tb::dsp::interpolate_match(two, 1000));
}

TEST_CASE("a calibration grid out of order is refused", "[calibration_curve]") {
  const std::vector<MatchPoint> grid{{1000, 1, 0, 0}, {100, 1, 0, 0}, {10000, 1, 0, 0}};
  CHECK_THROWS_AS(tb::dsp::interpolate_match(grid, 500), std::invalid_argument);
}
