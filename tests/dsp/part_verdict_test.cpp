#include "dsp/part_verdict.hpp"

#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <complex>
#include <cstddef>
#include <limits>
#include <numbers>
#include <random>
#include <set>
#include <stdexcept>
#include <vector>

using tb::dsp::BagSort;
using tb::dsp::check_electrolytic_loss;
using tb::dsp::check_limits;
using tb::dsp::check_match;
using tb::dsp::compare_curves;
using tb::dsp::CurveComparison;
using tb::dsp::electrolytic_loss_limit;
using tb::dsp::LimitCheck;
using tb::dsp::pair_spread;
using tb::dsp::PartReading;
using tb::dsp::set_spread;
using tb::dsp::sort_into_pairs;
using tb::dsp::Spread;
using tb::dsp::SweepPoint;
using tb::dsp::Verdict;

namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kPi = std::numbers::pi;

Verdict decide(double y, double u, double lsl = 4.5, double usl = 5.5) {
  return check_limits(y, u, lsl, usl, 5.0, "").verdict;
}

double spread_of(double a, double b) {
  return 200.0 * std::abs(a - b) / (a + b);
}

struct Best {
  double worst = kInf, total = kInf;
};

/// Every pairing of the bag with at most one part left out, best by (worst, total).
void brute_force(std::vector<double>& left, double worst, double total, bool may_skip, Best& best) {
  if (left.empty() || (left.size() == 1 && may_skip)) {
    if (worst < best.worst - 1e-12 || (std::abs(worst - best.worst) <= 1e-12 && total < best.total))
      best = {worst, total};
    return;
  }
  const double first = left.back();
  left.pop_back();
  if (may_skip) brute_force(left, worst, total, false, best);
  for (std::size_t k = 0; k < left.size(); ++k) {
    std::vector<double> rest = left;
    const double partner = rest[k];
    rest.erase(rest.begin() + static_cast<std::ptrdiff_t>(k));
    const double s = spread_of(first, partner);
    brute_force(rest, std::max(worst, s), total + s, may_skip, best);
  }
  left.push_back(first);
}

SweepPoint point(double f, std::complex<double> z, double u_mag, double u_phase) {
  return SweepPoint{f, z, u_mag, u_phase};
}

}  // namespace

TEST_CASE("guard-band edges decide as ISO 14253-1 writes them", "[verdict]") {
  // ISO 14253-1:2017 with w = U: all values below are exact in binary (LSL 4.5, USL 5.5,
  // U 0.125), so LSL + U etc. are exact and the inequalities are tested at their edge.
  const double u = 0.125;
  CHECK(decide(4.625, u) == Verdict::pass);  // y = LSL + U: conformance proven (inclusive)
  CHECK(decide(5.375, u) == Verdict::pass);  // y = USL - U
  CHECK(decide(std::nextafter(4.625, 0.0), u) == Verdict::inconclusive);  // just outside
  CHECK(decide(std::nextafter(5.375, 10.0), u) == Verdict::inconclusive);
  CHECK(decide(std::nextafter(4.625, 10.0), u) == Verdict::pass);  // just inside
  CHECK(decide(4.375, u) == Verdict::inconclusive);  // y = LSL - U: not yet proven outside
  CHECK(decide(5.625, u) == Verdict::inconclusive);  // y = USL + U
  CHECK(decide(std::nextafter(4.375, 0.0), u) == Verdict::fail);
  CHECK(decide(std::nextafter(5.625, 10.0), u) == Verdict::fail);
  CHECK(decide(4.5, u) == Verdict::inconclusive);  // on the limit itself
  CHECK(decide(4.5, 0) == Verdict::pass);          // without uncertainty the limit is inside
  CHECK(decide(4.4, 0) == Verdict::fail);
  // U wider than half the tolerance band: a pass cannot be proven
  CHECK(decide(5.0, 0.75) == Verdict::inconclusive);

  const LimitCheck c = check_limits(5.25, u, 4.5, 5.5, 5.0, "");
  CHECK(c.accept_low == 4.625);
  CHECK(c.accept_high == 5.375);
  CHECK(c.reject_low == 4.375);
  CHECK(c.reject_high == 5.625);
  CHECK(c.margin_pct == Approx(100.0 * 0.25 / 5.0));
  CHECK(check_limits(5.75, u, 4.5, 5.5, 5.0, "").margin_pct == Approx(-5.0));

  CHECK_THROWS_AS(check_limits(5, -1, 4.5, 5.5, 5, ""), std::invalid_argument);
  CHECK_THROWS_AS(check_limits(5, 0.1, 5.5, 4.5, 5, ""), std::invalid_argument);
  CHECK_THROWS_AS(check_limits(5, 0.1, -kInf, kInf, 5, ""), std::invalid_argument);
  CHECK_THROWS_AS(check_limits(NAN, 0.1, 4.5, 5.5, 5, ""), std::invalid_argument);
}

TEST_CASE("a verdict reads as one sentence", "[verdict]") {
  // 4.7 nF ±5 %: limits 4.465 and 4.935 nF
  const LimitCheck pass = check_limits(4.62e-9, 0.02e-9, 4.465e-9, 4.935e-9, 4.7e-9, "F");
  CHECK(pass.verdict == Verdict::pass);
  CHECK(pass.sentence == "4.62 nF is inside 4.465–4.935 nF by more than its ±0.02 nF: pass");
  const LimitCheck fail = check_limits(5.0e-9, 0.02e-9, 4.465e-9, 4.935e-9, 4.7e-9, "F");
  CHECK(fail.sentence == "5 nF is above 4.935 nF by more than its ±0.02 nF: fail");
  const LimitCheck unsure = check_limits(4.47e-9, 0.02e-9, 4.465e-9, 4.935e-9, 4.7e-9, "F");
  CHECK(unsure.verdict == Verdict::inconclusive);
  CHECK(unsure.sentence.find("of the limit 4.465 nF: inconclusive") != std::string::npos);
}

TEST_CASE("electrolytic loss limits follow the usual datasheet table", "[verdict]") {
  // references.md [calc], common datasheet practice of one maker's series (not a standard):
  // 1000 µF, 10 V, 120 Hz, tan δ 0.19 -> Xc = 1/(2 pi f C) = 1.326 Ω, ESR limit 0.252 Ω
  const auto l = electrolytic_loss_limit(1000e-6, 10, 120);
  const double xc = 1.0 / (2 * kPi * 120 * 1000e-6);
  CHECK(l.tan_delta_max == Approx(0.19));
  CHECK(l.reactance_ohm == Approx(xc));
  CHECK(l.esr_max_ohm == Approx(0.19 * xc));
  CHECK(l.reactance_ohm == Approx(1.326).margin(5e-4));
  CHECK(l.esr_max_ohm == Approx(0.252).margin(5e-4));
  // at 100 Hz the same D is a larger ESR
  CHECK(electrolytic_loss_limit(1000e-6, 10, 100).esr_max_ohm ==
        Approx(0.19 / (2 * kPi * 100 * 1000e-6)));
  // table rows (common datasheet practice, no standard)
  CHECK(electrolytic_loss_limit(100e-6, 6.3, 120).tan_delta_max == Approx(0.22));
  CHECK(electrolytic_loss_limit(100e-6, 63, 120).tan_delta_max == Approx(0.09));
  CHECK(electrolytic_loss_limit(47e-6, 200, 120).tan_delta_max == Approx(0.15));
  CHECK(electrolytic_loss_limit(47e-6, 450, 120).tan_delta_max == Approx(0.25));
  // whole 1000 µF steps above the first add 0.02 each (partial steps vary: not tested)
  CHECK(electrolytic_loss_limit(2000e-6, 16, 120).tan_delta_max == Approx(0.18));
  CHECK(electrolytic_loss_limit(3000e-6, 6.3, 120).tan_delta_max == Approx(0.26));
  CHECK_THROWS_AS(electrolytic_loss_limit(100e-6, 4, 120), std::invalid_argument);
  CHECK_THROWS_AS(electrolytic_loss_limit(100e-6, 80, 120), std::invalid_argument);
  CHECK_THROWS_AS(electrolytic_loss_limit(100e-6, 25, 1000), std::invalid_argument);
  CHECK_THROWS_AS(electrolytic_loss_limit(0, 25, 120), std::invalid_argument);

  // upper limit only, same guard band (the edges are tested on exact values above)
  CHECK(check_electrolytic_loss(0.15, 0.01, l).verdict == Verdict::pass);
  CHECK(check_electrolytic_loss(0.185, 0.01, l).verdict == Verdict::inconclusive);
  CHECK(check_electrolytic_loss(0.21, 0.01, l).verdict == Verdict::fail);
  CHECK(check_electrolytic_loss(0.15, 0.01, l).sentence ==
        "tan δ 0.15 is below 0.19 by more than its ±0.01: pass");
}

TEST_CASE("a shared reference tolerance cancels in pair matching", "[verdict][matching]") {
  // The example: a 1 % Rref still allows 0.2 % matching. Each reading carries a
  // shared 1 % term (the reference) and an independent 0.02 % term.
  const PartReading a{100.0, 0.02, 1.0}, b{100.1, 0.02 * 1.001, 1.001};
  const Spread s = pair_spread(a, b);
  CHECK(s.spread_pct == Approx(spread_of(100.0, 100.1)));
  // [calc] u = sqrt(2) 0.02 % (each derivative ~ 100/mean), U = 2u ~ 0.057 %
  CHECK(s.expanded_pct == Approx(2 * std::sqrt(2.0) * 0.02).epsilon(0.01));
  CHECK(s.expanded_pct < 0.06);
  // treating the shared 1 % as independent would give u ~ sqrt(2) % = 1.4 %; it does not
  const Spread without_shared = pair_spread({100.0, 0.02, 0}, {100.1, 0.02 * 1.001, 0});
  CHECK(s.u_pct == without_shared.u_pct);
  // and a 1 % error of the reference (a common scale) leaves the spread unchanged
  CHECK(pair_spread({101.0, 0.02, 1}, {101.101, 0.02, 1}).spread_pct ==
        Approx(s.spread_pct).epsilon(1e-12));
  CHECK(check_match(s, 0.2).verdict == Verdict::pass);
  CHECK(check_match(s, 0.2).margin_pct == Approx(0.2 - s.spread_pct));
  CHECK(check_match(s, 0.04).verdict == Verdict::fail);
  CHECK(check_match(s, 0.12).verdict == Verdict::inconclusive);

  // Monte Carlo [calc]: draw the shared scale and the independent terms, the spread's
  // scatter matches u from the independent parts alone.
  std::mt19937 rng(12345);
  std::normal_distribution<double> shared(1.0, 0.01), ind(0.0, 0.0002);
  const int n = 20000;
  double sum = 0, sum2 = 0;
  for (int i = 0; i < n; ++i) {
    const double g = shared(rng);
    const double x = g * 100.0 * (1 + ind(rng)), y = g * 100.1 * (1 + ind(rng));
    const double sp = 200.0 * (y - x) / (x + y);
    sum += sp;
    sum2 += sp * sp;
  }
  const double mean = sum / n, sd = std::sqrt(sum2 / n - mean * mean);
  CHECK(sd == Approx(s.u_pct).epsilon(0.03));
}

TEST_CASE("the set spread and its uncertainty", "[verdict][matching]") {
  const std::vector<PartReading> two = {{100.0, 0.03, 0.5}, {100.4, 0.01, 0.5}};
  const Spread a = set_spread(two), b = pair_spread(two[0], two[1]);
  CHECK(a.spread_pct == Approx(b.spread_pct));
  CHECK(a.u_pct == Approx(b.u_pct));

  const std::vector<PartReading> four = {
      {100.0, 0.02, 1}, {100.2, 0.03, 1}, {99.9, 0.01, 1}, {100.05, 0.04, 1}};
  const Spread s = set_spread(four);
  CHECK(s.low == 2);
  CHECK(s.high == 1);
  const double mean = (100.0 + 100.2 + 99.9 + 100.05) / 4;
  CHECK(s.spread_pct == Approx(100.0 * 0.3 / mean));
  // [calc] central differences of the spread in each reading, combined by root-sum-square
  double var = 0;
  for (std::size_t i = 0; i < four.size(); ++i) {
    auto moved = four;
    const double h = 1e-4;
    moved[i].value += h;
    const double up = set_spread(moved).spread_pct;
    moved[i].value -= 2 * h;
    const double down = set_spread(moved).spread_pct;
    const double d = (up - down) / (2 * h);
    var += d * d * four[i].u_independent * four[i].u_independent;
  }
  CHECK(s.u_pct == Approx(std::sqrt(var)).epsilon(1e-6));
  CHECK_THROWS_AS(set_spread(std::vector<PartReading>{{1, 0, 0}}), std::invalid_argument);
  CHECK_THROWS_AS(pair_spread({0, 0, 0}, {1, 0, 0}), std::invalid_argument);
}

TEST_CASE("bag sorting matches brute force on small bags", "[verdict][matching]") {
  std::mt19937 rng(2026);
  std::lognormal_distribution<double> value(std::log(100.0), 0.05);
  for (std::size_t n = 2; n <= 8; ++n) {
    for (int trial = 0; trial < 60; ++trial) {
      std::vector<PartReading> parts;
      std::vector<double> values;
      for (std::size_t i = 0; i < n; ++i) {
        values.push_back(value(rng));
        parts.push_back({values.back(), 0.01, 0.5});
      }
      const BagSort bag = sort_into_pairs(parts);
      Best best;
      std::vector<double> left = values;
      brute_force(left, 0, 0, n % 2 == 1, best);
      INFO("n = " << n << ", trial " << trial);
      CHECK(bag.pairs.size() == n / 2);
      CHECK(bag.left_out.has_value() == (n % 2 == 1));
      CHECK(bag.worst_spread_pct == Approx(best.worst).epsilon(1e-9));
      CHECK(bag.total_spread_pct == Approx(best.total).epsilon(1e-9));
      std::set<std::size_t> used;
      for (const auto& p : bag.pairs) {
        used.insert(p.first);
        used.insert(p.second);
        CHECK(parts[p.first].value <= parts[p.second].value);
        CHECK(p.spread.spread_pct == Approx(spread_of(values[p.first], values[p.second])));
        CHECK(p.spread.expanded_pct > 0);
      }
      if (bag.left_out) used.insert(*bag.left_out);
      CHECK(used.size() == n);
    }
  }
}

TEST_CASE("bag sorting nests pairs when that lowers the total", "[verdict][matching]") {
  // [calc] 100 must pair with 200 (worst 66.7 %). Side by side the rest give
  // s(210,260) + s(260,310) = 21.3 + 17.5 %; nested s(210,310) + s(260,260.0001) = 38.5 %.
  const std::vector<PartReading> parts = {{260.0, 0, 0}, {100, 0, 0}, {310, 0, 0},
                                          {200, 0, 0},   {210, 0, 0}, {260.0001, 0, 0}};
  const BagSort bag = sort_into_pairs(parts);
  REQUIRE(bag.pairs.size() == 3);
  CHECK(bag.pairs[0].first == 1);
  CHECK(bag.pairs[0].second == 3);
  CHECK(bag.pairs[1].first == 4);
  CHECK(bag.pairs[1].second == 2);
  CHECK(bag.pairs[2].first == 0);
  CHECK(bag.pairs[2].second == 5);
  CHECK(bag.total_spread_pct ==
        Approx(spread_of(100, 200) + spread_of(210, 310) + spread_of(260, 260.0001)));

  // odd bag: the outlier is left out
  const std::vector<PartReading> odd = {
      {10.0, 0, 0}, {10.01, 0, 0}, {12, 0, 0}, {10.02, 0, 0}, {10.03, 0, 0}};
  const BagSort o = sort_into_pairs(odd);
  REQUIRE(o.left_out);
  CHECK(*o.left_out == 2);

  CHECK_THROWS_AS(sort_into_pairs(std::vector<PartReading>(1, {1, 0, 0})), std::invalid_argument);
  CHECK_THROWS_AS(sort_into_pairs(std::vector<PartReading>(401, {1, 0, 0})), std::invalid_argument);
}

TEST_CASE("left and right curves are compared within their uncertainty", "[verdict][curves]") {
  // Same sweep on both sides: no difference anywhere.
  std::vector<SweepPoint> left, right;
  for (double f : {100.0, 200.0, 400.0, 800.0, 1600.0}) {
    left.push_back(point(f, std::polar(8.0 + std::log(f), 0.3), 0.01, 0.05));
    right.push_back(point(f, std::polar(8.0 + std::log(f), 0.3), 0.01, 0.05));
  }
  CurveComparison same = compare_curves(left, right);
  CHECK(same.points.size() == 5);
  CHECK(same.agree_everywhere);
  CHECK(same.largest_mag_diff_pct == 0);

  // The right cabinet on another grid: |Z| = 8 + ln f is linear in log f, so the log-f
  // interpolation is exact [calc]; its range 150-1200 Hz leaves 100 and 1600 Hz out.
  std::vector<SweepPoint> other;
  for (double f : {150.0, 300.0, 600.0, 1200.0})
    other.push_back(point(f, std::polar(8.0 + std::log(f), 0.3), 0.01, 0.05));
  const CurveComparison c = compare_curves(left, other);
  CHECK(c.skipped == 2);
  REQUIRE(c.points.size() == 3);
  for (const auto& p : c.points) {
    CHECK(p.mag_diff_pct == Approx(0).margin(1e-9));
    CHECK(p.phase_diff_deg == Approx(0).margin(1e-9));
    // [calc] U = 2 sqrt((u1/m)^2 + (u2/m)^2) 100 % for equal magnitudes m
    const double m = 8.0 + std::log(p.freq_hz);
    CHECK(p.mag_u_pct == Approx(2 * std::sqrt(2.0) * 0.01 / m * 100));
    CHECK(p.phase_u_deg == Approx(2 * std::sqrt(2.0) * 0.05));
  }
  CHECK(c.agree_everywhere);

  // A 1 % step at 400 Hz, far beyond U ~ 0.2 %: found, with its frequency.
  right[2].z *= 1.01;
  const CurveComparison d = compare_curves(left, right);
  CHECK_FALSE(d.agree_everywhere);
  CHECK_FALSE(d.points[2].agrees);
  CHECK(d.points[1].agrees);
  CHECK(d.largest_mag_freq_hz == 400.0);
  CHECK(d.largest_mag_diff_pct == Approx(200.0 * (1 - 1.01) / 2.01));

  // Phases across ±180°: 179° against -179° is 2° apart, not 358°.
  const std::vector<SweepPoint> a = {point(1000, std::polar(1.0, 179.0 * kPi / 180), 0, 0.5)};
  const std::vector<SweepPoint> b = {point(1000, std::polar(1.0, -179.0 * kPi / 180), 0, 0.5)};
  const CurveComparison w = compare_curves(a, b);
  CHECK(w.points[0].phase_diff_deg == Approx(-2.0));
  CHECK(w.largest_phase_freq_hz == 1000);
  CHECK_FALSE(w.points[0].agrees);  // 2° is outside U = 2 sqrt(2) 0.5° = 1.41° [calc]
}
