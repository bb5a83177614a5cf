#include "dsp/part_verdict.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <limits>
#include <numbers>
#include <numeric>
#include <stdexcept>
#include <utility>

#include "dsp/part_marking.hpp"

namespace tb::dsp {
namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();

template <typename... Parts>
std::string cat(const Parts&... parts) {
  std::string s;
  (s.append(std::string_view(parts)), ...);
  return s;
}

// The engineering exponent format_si would use for v (SI units only).
int si_exponent(double v) {
  if (v == 0 || !std::isfinite(v)) return 0;
  int e3 = static_cast<int>(std::floor(std::log10(std::abs(v)) / 3.0)) * 3;
  if (std::abs(v) / std::pow(10.0, e3) >= 999.95) e3 += 3;
  return std::clamp(e3, -12, 9);
}

std::string_view prefix_of(int e3) {
  switch (e3) {
    case -12:
      return "p";
    case -9:
      return "n";
    case -6:
      return "µ";
    case -3:
      return "m";
    case 3:
      return "k";
    case 6:
      return "M";
    case 9:
      return "G";
    default:
      return "";
  }
}

/// Numbers of one sentence share the prefix of its value, so "4.465–4.935 nF" and
/// "±0.02 nF" read at a glance.
struct Printer {
  std::string_view unit;
  int e3 = 0;
  bool si = false;

  std::string number(double v) const {
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.4g", si ? v / std::pow(10.0, e3) : v);
    return buf;
  }
  std::string suffix() const {
    if (unit.empty()) return "";
    if (!si) return cat(" ", unit);
    return cat(" ", prefix_of(e3), unit);
  }
  std::string quantity(double v) const { return cat(number(v), suffix()); }
};

void require(bool ok, const char* message) {
  if (!ok) throw std::invalid_argument(message);
}

}  // namespace

std::string_view verdict_name(Verdict verdict) {
  switch (verdict) {
    case Verdict::pass:
      return "pass";
    case Verdict::fail:
      return "fail";
    case Verdict::inconclusive:
      break;
  }
  return "inconclusive";
}

// ISO 14253-1:2017 decision rules with the guard band w = U (JCGM 106:2012, §8.3).
LimitCheck check_limits(double y, double expanded_u, double lsl, double usl, double reference,
                        std::string_view unit, std::string_view label) {
  require(std::isfinite(y), "check_limits: the measured value must be finite");
  require(std::isfinite(expanded_u) && expanded_u >= 0,
          "check_limits: the expanded uncertainty must be finite and >= 0");
  require(!std::isnan(lsl) && !std::isnan(usl) && lsl < usl &&
              (std::isfinite(lsl) || std::isfinite(usl)),
          "check_limits: need lower < upper limit, at least one of them finite");
  require(std::isfinite(reference) && reference > 0, "check_limits: the reference must be > 0");

  LimitCheck c;
  c.value = y;
  c.expanded_u = expanded_u;
  c.lower_limit = lsl;
  c.upper_limit = usl;
  c.accept_low = lsl + expanded_u;
  c.accept_high = usl - expanded_u;
  c.reject_low = lsl - expanded_u;
  c.reject_high = usl + expanded_u;
  if (y >= c.accept_low && y <= c.accept_high)
    c.verdict = Verdict::pass;
  else if (y < c.reject_low || y > c.reject_high)
    c.verdict = Verdict::fail;
  else
    c.verdict = Verdict::inconclusive;
  c.margin_pct = 100.0 * std::min(y - lsl, usl - y) / reference;

  const bool si = unit == "F" || unit == "H" || unit == "Ω";
  const Printer p{unit, si ? si_exponent(y) : 0, si};
  const bool two_sided = std::isfinite(lsl) && std::isfinite(usl);
  const std::string u_text = cat("±", p.quantity(expanded_u));
  std::string where;
  switch (c.verdict) {
    case Verdict::pass:
      where = two_sided ? cat("inside ", p.number(lsl), "–", p.quantity(usl))
                        : (std::isfinite(usl) ? cat("below ", p.quantity(usl))
                                              : cat("above ", p.quantity(lsl)));
      c.sentence = cat(label, p.quantity(y), " is ", where, " by more than its ", u_text, ": pass");
      break;
    case Verdict::fail:
      where = y > usl ? cat("above ", p.quantity(usl)) : cat("below ", p.quantity(lsl));
      c.sentence = cat(label, p.quantity(y), " is ", where, " by more than its ", u_text, ": fail");
      break;
    case Verdict::inconclusive: {
      const double nearest = (y - lsl <= usl - y) ? lsl : usl;
      c.sentence =
          cat(label, p.quantity(y), " is within its ", u_text, " of the limit ",
              p.quantity(nearest), ": inconclusive, measure with a smaller uncertainty to decide");
      break;
    }
  }
  return c;
}

// ---- electrolytics ----

namespace {

struct LossRow {
  double v_low, v_high, tan_delta;
};

// One maker's general-purpose series, 120 Hz, 20 °C: common datasheet practice, not a
// standard (see the header).
constexpr std::array<LossRow, 11> kLossTable = {{{6.3, 6.3, 0.22},
                                                 {10, 10, 0.19},
                                                 {16, 16, 0.16},
                                                 {25, 25, 0.14},
                                                 {35, 35, 0.12},
                                                 {50, 50, 0.10},
                                                 {63, 63, 0.09},
                                                 {100, 100, 0.08},
                                                 {160, 250, 0.15},
                                                 {315, 350, 0.20},
                                                 {400, 450, 0.25}}};

}  // namespace

ElectrolyticLimit electrolytic_loss_limit(double capacitance_f, double rated_voltage_v,
                                          double freq_hz) {
  require(std::isfinite(capacitance_f) && capacitance_f > 0,
          "electrolytic loss limit: the capacitance must be > 0");
  require(std::abs(freq_hz - 100) <= 1 || std::abs(freq_hz - 120) <= 1,
          "electrolytic loss limit: the table holds for 100 Hz or 120 Hz tests only");
  const LossRow* row = nullptr;
  for (const LossRow& r : kLossTable)
    if (rated_voltage_v >= r.v_low * 0.99 && rated_voltage_v <= r.v_high * 1.01) row = &r;
  require(row != nullptr,
          "electrolytic loss limit: no typical tan δ for this rated voltage; the table has 6.3, "
          "10, 16, 25, 35, 50, 63, 100, 160-250, 315-350 and 400-450 V");
  ElectrolyticLimit l;
  l.freq_hz = freq_hz;
  l.tan_delta_max = row->tan_delta;
  // Large capacitances: +0.02 for every started 1000 µF above the first 1000 µF (makers
  // differ on partial steps; this reading is the lenient one).
  const double above_uf = capacitance_f * 1e6 - 1000.0;
  if (above_uf > 0) l.tan_delta_max += 0.02 * std::ceil(above_uf / 1000.0 - 1e-9);
  const double omega = 2 * std::numbers::pi * freq_hz;
  l.reactance_ohm = 1.0 / (omega * capacitance_f);
  l.esr_max_ohm = l.tan_delta_max * l.reactance_ohm;  // D = ωC·ESR
  return l;
}

LimitCheck check_electrolytic_loss(double measured_d, double expanded_u_d,
                                   const ElectrolyticLimit& limit) {
  return check_limits(measured_d, expanded_u_d, -kInf, limit.tan_delta_max, limit.tan_delta_max, "",
                      "tan δ ");
}

// ---- matching ----

namespace {

void require_reading(const PartReading& r) {
  require(std::isfinite(r.value) && r.value > 0, "matching: every value must be > 0");
  require(std::isfinite(r.u_independent) && r.u_independent >= 0 && std::isfinite(r.u_shared) &&
              r.u_shared >= 0,
          "matching: uncertainties must be finite and >= 0");
}

}  // namespace

// s = 200 (a - b) / (a + b). A term shared by both readings is a common scale g: a = g a0,
// b = g b0, so s = 200 g (a0 - b0) / (g (a0 + b0)) = 200 (a0 - b0) / (a0 + b0) does not depend
// on g: ds/dg = 0 and u_shared drops out. The independent terms propagate with
// ds/da = 400 b / (a + b)^2 and ds/db = -400 a / (a + b)^2 (GUM, JCGM 100:2008, 5.1.2).
Spread pair_spread(const PartReading& a, const PartReading& b) {
  require_reading(a);
  require_reading(b);
  const double sum = a.value + b.value;
  Spread s;
  s.spread_pct = 200.0 * std::abs(a.value - b.value) / sum;
  const double da = 400.0 * b.value / (sum * sum), db = 400.0 * a.value / (sum * sum);
  s.u_pct = std::hypot(da * a.u_independent, db * b.u_independent);
  s.expanded_pct = 2 * s.u_pct;
  s.low = a.value <= b.value ? 0 : 1;
  s.high = 1 - s.low;
  return s;
}

// s = 100 (max - min) / mean. As for a pair, a common scale cancels. ds/dx_i =
// 100 ([i = max] - [i = min]) / mean - s / (n mean). Which part is the max or min is taken
// as read; near-equal parts make the spread biased upwards by their scatter, as any range.
Spread set_spread(std::span<const PartReading> parts) {
  require(parts.size() >= 2, "set spread: needs at least two parts");
  for (const PartReading& r : parts)
    require_reading(r);
  Spread s;
  double sum = 0;
  for (std::size_t i = 0; i < parts.size(); ++i) {
    sum += parts[i].value;
    if (parts[i].value < parts[s.low].value) s.low = i;
    if (parts[i].value > parts[s.high].value) s.high = i;
  }
  if (s.low == s.high) s.high = (s.low == 0) ? 1 : 0;
  const double n = static_cast<double>(parts.size());
  const double mean = sum / n;
  s.spread_pct = 100.0 * (parts[s.high].value - parts[s.low].value) / mean;
  double var = 0;
  for (std::size_t i = 0; i < parts.size(); ++i) {
    double d = -s.spread_pct / (n * mean);
    if (i == s.high) d += 100.0 / mean;
    if (i == s.low) d -= 100.0 / mean;
    var += d * d * parts[i].u_independent * parts[i].u_independent;
  }
  s.u_pct = std::sqrt(var);
  s.expanded_pct = 2 * s.u_pct;
  return s;
}

LimitCheck check_match(const Spread& spread, double max_spread_pct) {
  require(std::isfinite(max_spread_pct) && max_spread_pct > 0,
          "match check: the matching tolerance must be > 0 %");
  return check_limits(spread.spread_pct, spread.expanded_pct, -kInf, max_spread_pct, 100.0, "%",
                      "spread ");
}

// ---- bag sorting ----
//
// On sorted values a pairing with two crossing pairs (a < b < c < d paired a-c, b-d) is never
// better than the side-by-side one (a-b, c-d): each new pair spans less, and the spread grows
// with the span, so neither the worst nor the sum gets worse. The optimum is therefore among
// the non-crossing pairings (side by side or nested), which an interval programme enumerates
// exactly. Nested ones matter for the sum: the spread is concave in log(b/a), so pairing two
// close middle parts can beat two side-by-side pairs. Two passes: the smallest worst spread
// W, then the smallest sum using only pairs with spread <= W (one lexicographic pass would
// not decompose).

namespace {

class PairingProgramme {
 public:
  explicit PairingProgramme(std::vector<double> sorted)
      : v_(std::move(sorted)),
        n_(v_.size()),
        memo_((n_ + 1) * (n_ + 1) * 2, kUnset),
        choice_((n_ + 1) * (n_ + 1) * 2, kNoChoice) {}

  double cost(std::size_t i, std::size_t k) const {
    return 200.0 * (v_[k] - v_[i]) / (v_[k] + v_[i]);
  }

  /// Best objective over [i, j) with `skips` parts left out. minimise_worst: the worst pair
  /// spread; else the sum of spreads with pairs above `cap` forbidden.
  double solve(std::size_t i, std::size_t j, int skips) {
    const std::size_t len = j - i;
    if (len < static_cast<std::size_t>(skips) || (len - static_cast<std::size_t>(skips)) % 2)
      return kInf;
    if (len == 0) return 0;
    double& m = memo_[key(i, j, skips)];
    if (m != kUnset) return m;
    double best = kInf;
    std::size_t best_choice = kNoChoice;
    if (skips == 1) {
      best = solve(i + 1, j, 0);
      best_choice = kSkip;
    }
    for (std::size_t k = i + 1; k < j; ++k) {
      const double c = cost(i, k);
      if (!minimise_worst_ && c > cap_) continue;
      for (int inner = 0; inner <= skips; ++inner) {
        const double a = solve(i + 1, k, inner), b = solve(k + 1, j, skips - inner);
        if (a == kInf || b == kInf) continue;
        const double total = minimise_worst_ ? std::max({c, a, b}) : c + a + b;
        if (total < best) {
          best = total;
          best_choice = k * 2 + static_cast<std::size_t>(inner);
        }
      }
    }
    choice_[key(i, j, skips)] = best_choice;
    return m = best;
  }

  void set_sum_mode(double cap) {
    minimise_worst_ = false;
    cap_ = cap;
    std::fill(memo_.begin(), memo_.end(), kUnset);
    std::fill(choice_.begin(), choice_.end(), kNoChoice);
  }

  /// The pairs (sorted positions) and the skipped position of the solved optimum.
  void collect(std::size_t i, std::size_t j, int skips,
               std::vector<std::pair<std::size_t, std::size_t>>& pairs,
               std::optional<std::size_t>& skipped) const {
    if (j <= i) return;
    const std::size_t c = choice_[key(i, j, skips)];
    if (c == kSkip) {
      skipped = i;
      collect(i + 1, j, 0, pairs, skipped);
      return;
    }
    const std::size_t k = c / 2;
    const int inner = static_cast<int>(c % 2);
    pairs.emplace_back(i, k);
    collect(i + 1, k, inner, pairs, skipped);
    collect(k + 1, j, skips - inner, pairs, skipped);
  }

 private:
  static constexpr double kUnset = -1;
  static constexpr std::size_t kNoChoice = std::numeric_limits<std::size_t>::max();
  static constexpr std::size_t kSkip = kNoChoice - 1;

  std::size_t key(std::size_t i, std::size_t j, int skips) const {
    return (i * (n_ + 1) + j) * 2 + static_cast<std::size_t>(skips);
  }

  std::vector<double> v_;
  std::size_t n_;
  std::vector<double> memo_;
  std::vector<std::size_t> choice_;
  bool minimise_worst_ = true;
  double cap_ = kInf;
};

}  // namespace

BagSort sort_into_pairs(std::span<const PartReading> parts) {
  require(parts.size() >= 2, "bag sorting: needs at least two parts");
  // O(n^3) time and O(n^2) memory: a bag of 400 takes a fraction of a second.
  require(parts.size() <= 400, "bag sorting: at most 400 parts at a time; split the bag");
  for (const PartReading& r : parts)
    require_reading(r);
  std::vector<std::size_t> order(parts.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return parts[a].value < parts[b].value; });
  std::vector<double> sorted;
  for (std::size_t i : order)
    sorted.push_back(parts[i].value);

  const std::size_t n = parts.size();
  const int skips = static_cast<int>(n % 2);
  PairingProgramme programme(sorted);
  const double worst = programme.solve(0, n, skips);
  programme.set_sum_mode(worst * (1 + 1e-12) + 1e-15);
  programme.solve(0, n, skips);
  std::vector<std::pair<std::size_t, std::size_t>> pairs;
  std::optional<std::size_t> skipped;
  programme.collect(0, n, skips, pairs, skipped);
  std::sort(pairs.begin(), pairs.end());

  BagSort bag;
  for (const auto& [i, k] : pairs) {
    MatchedPair mp;
    mp.first = order[i];
    mp.second = order[k];
    mp.spread = pair_spread(parts[mp.first], parts[mp.second]);
    mp.spread.low = mp.first;
    mp.spread.high = mp.second;
    bag.worst_spread_pct = std::max(bag.worst_spread_pct, mp.spread.spread_pct);
    bag.total_spread_pct += mp.spread.spread_pct;
    bag.pairs.push_back(mp);
  }
  if (skipped) bag.left_out = order[*skipped];
  return bag;
}

// ---- curve comparison ----

namespace {

constexpr double kDegPerRad = 180.0 / std::numbers::pi;

double wrap_deg(double d) {
  d = std::remainder(d, 360.0);
  return d <= -180.0 ? d + 360.0 : d;
}

void require_sweep(std::span<const SweepPoint> s, const char* name) {
  require(!s.empty(), name);
  for (std::size_t i = 0; i < s.size(); ++i) {
    require(std::isfinite(s[i].freq_hz) && s[i].freq_hz > 0 && std::abs(s[i].z) > 0 &&
                std::isfinite(std::abs(s[i].z)) && s[i].u_mag_ohm >= 0 && s[i].u_phase_deg >= 0,
            name);
    require(i == 0 || s[i].freq_hz > s[i - 1].freq_hz, name);
  }
}

struct Polar {
  double mag, phase_deg, u_mag, u_phase;
};

Polar polar(const SweepPoint& p) {
  return {std::abs(p.z), std::arg(p.z) * kDegPerRad, p.u_mag_ohm, p.u_phase_deg};
}

// The second sweep at f, linear in log f between its neighbours; nullopt outside its range.
std::optional<Polar> at_frequency(std::span<const SweepPoint> s, double f) {
  constexpr double kSame = 1e-9;
  if (f < s.front().freq_hz * (1 - kSame) || f > s.back().freq_hz * (1 + kSame))
    return std::nullopt;
  const auto it = std::lower_bound(s.begin(), s.end(), f * (1 - kSame),
                                   [](const SweepPoint& p, double x) { return p.freq_hz < x; });
  if (it == s.end()) return polar(s.back());
  if (std::abs(it->freq_hz - f) <= kSame * f || it == s.begin()) return polar(*it);
  const Polar a = polar(*(it - 1)), b = polar(*it);
  const double t = std::log(f / (it - 1)->freq_hz) / std::log(it->freq_hz / (it - 1)->freq_hz);
  auto lerp = [t](double x, double y) { return x + t * (y - x); };
  // Phase along the shorter way round; u interpolated like the values (a smooth sweep's
  // uncertainty changes slowly between neighbouring points).
  const double phase = a.phase_deg + t * wrap_deg(b.phase_deg - a.phase_deg);
  return Polar{lerp(a.mag, b.mag), phase, lerp(a.u_mag, b.u_mag), lerp(a.u_phase, b.u_phase)};
}

}  // namespace

CurveComparison compare_curves(std::span<const SweepPoint> first,
                               std::span<const SweepPoint> second) {
  require_sweep(first,
                "curve comparison: the first sweep needs points with f > 0 strictly increasing, "
                "|Z| > 0 and u >= 0");
  require_sweep(second,
                "curve comparison: the second sweep needs points with f > 0 strictly increasing, "
                "|Z| > 0 and u >= 0");
  CurveComparison c;
  double largest_mag = -1, largest_phase = -1;
  for (const SweepPoint& p : first) {
    const std::optional<Polar> b = at_frequency(second, p.freq_hz);
    if (!b) {
      ++c.skipped;
      continue;
    }
    const Polar a = polar(p);
    CurveDifference d;
    d.freq_hz = p.freq_hz;
    // As for pair_spread: 200 (m1 - m2) / (m1 + m2) with its two partial derivatives.
    const double sum = a.mag + b->mag;
    d.mag_diff_pct = 200.0 * (a.mag - b->mag) / sum;
    d.mag_u_pct = 2 * std::hypot(400.0 * b->mag / (sum * sum) * a.u_mag,
                                 400.0 * a.mag / (sum * sum) * b->u_mag);
    d.phase_diff_deg = wrap_deg(a.phase_deg - b->phase_deg);
    d.phase_u_deg = 2 * std::hypot(a.u_phase, b->u_phase);
    d.agrees =
        std::abs(d.mag_diff_pct) <= d.mag_u_pct && std::abs(d.phase_diff_deg) <= d.phase_u_deg;
    c.agree_everywhere = c.agree_everywhere && d.agrees;
    if (std::abs(d.mag_diff_pct) > largest_mag) {
      largest_mag = std::abs(d.mag_diff_pct);
      c.largest_mag_diff_pct = d.mag_diff_pct;
      c.largest_mag_freq_hz = d.freq_hz;
    }
    if (std::abs(d.phase_diff_deg) > largest_phase) {
      largest_phase = std::abs(d.phase_diff_deg);
      c.largest_phase_diff_deg = d.phase_diff_deg;
      c.largest_phase_freq_hz = d.freq_hz;
    }
    c.points.push_back(d);
  }
  require(!c.points.empty(),
          "curve comparison: the sweeps share no frequency range; sweep both over the same band");
  return c;
}

}  // namespace tb::dsp
