// Verdicts on measured parts that respect the measurement uncertainty: conformance to
// tolerance limits, the loss limit of aluminium electrolytics, matching of parts to each
// other, sorting a bag of parts into matched pairs, and comparing two impedance curves.
//
// Decision rule (ISO 14253-1:2017, guard band w = U; JCGM 106:2012 §8): with y the measured
// value and U its expanded uncertainty (k = 2, absolute),
//   pass          LSL + U <= y <= USL - U     (conformance proven)
//   fail          y < LSL - U  or  y > USL + U (non-conformance proven)
//   inconclusive  otherwise.
// The inequalities are inclusive exactly as written: y = LSL + U passes, y = LSL - U is
// inconclusive. With w = U the risk of accepting a part that sits exactly at a limit is
// 2.28 % (normal distribution, JCGM 106:2012).
#pragma once

#include <complex>
#include <cstddef>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace tb::dsp {

enum class Verdict { pass, fail, inconclusive };

/// "pass", "fail", "inconclusive".
std::string_view verdict_name(Verdict verdict);

struct LimitCheck {
  Verdict verdict = Verdict::inconclusive;
  double value = 0;        ///< y
  double expanded_u = 0;   ///< U (k = 2), also the guard band w
  double lower_limit = 0;  ///< LSL (-inf: no lower limit)
  double upper_limit = 0;  ///< USL (+inf: no upper limit)
  double accept_low = 0;   ///< LSL + U: pass from here ...
  double accept_high = 0;  ///< ... to USL - U
  double reject_low = 0;   ///< LSL - U: fail below
  double reject_high = 0;  ///< USL + U: fail above
  /// Signed distance of y to the nearest limit in % of the reference value (positive
  /// inside the limits, negative outside). For check_match it is in percentage points.
  double margin_pct = 0;
  /// One line for people: "4.62 nF is inside 4.465–4.935 nF by more than its ±0.02 nF: pass".
  std::string sentence;
};

/// The ISO 14253-1 decision for y against [lsl, usl]. unit: "F", "H", "Ω" print with SI
/// prefixes, "" or "%" as plain numbers (see format_si in dsp/part_marking.hpp); label is put
/// in front of the value in the sentence ("tan δ "). reference > 0 scales margin_pct (the
/// nominal). Requires finite y, finite U >= 0, lsl < usl with at least one finite (either may
/// be infinite for a one-sided limit); else std::invalid_argument.
/// Example: check_limits(4.62e-9, 0.02e-9, 4.465e-9, 4.935e-9, 4.7e-9, "F").verdict == pass.
LimitCheck check_limits(double y, double expanded_u, double lsl, double usl, double reference,
                        std::string_view unit, std::string_view label = "");

// ---- aluminium electrolytics ----
// The maximum tan δ below is the usual figure of one maker's general-purpose series at
// 120 Hz, 20 °C: common datasheet practice, NOT a standard (IEC 60384-4 leaves the limit to
// the detail specification). Test conditions 100 or 120 Hz, <= 0.5 V AC (IEC 60384-4).
//   rated V   6.3   10    16    25    35    50    63    100   160-250 315-350 400-450
//   tan δ     0.22  0.19  0.16  0.14  0.12  0.10  0.09  0.08  0.15    0.20    0.25
// Above 1000 µF add 0.02 for every 1000 µF (or part of it) above the first 1000 µF.

struct ElectrolyticLimit {
  double tan_delta_max = 0;  ///< D limit
  double freq_hz = 0;        ///< test frequency, 100 or 120 Hz
  double reactance_ohm = 0;  ///< Xc = 1 / (ω C) at freq_hz
  double esr_max_ohm = 0;    ///< ESR = D / (ω C): the same limit as a series resistance
};

/// The loss limit of a general-purpose aluminium electrolytic. capacitance_f > 0; the rated
/// voltage must be one of the table's (within 1 %) or inside one of its ranges; freq_hz
/// must be 100 or 120 (±1 Hz). Otherwise std::invalid_argument naming what is accepted.
/// Example: electrolytic_loss_limit(1000e-6, 10, 120).esr_max_ohm ≈ 0.252.
ElectrolyticLimit electrolytic_loss_limit(double capacitance_f, double rated_voltage_v,
                                          double freq_hz);

/// The decision on a measured D (with its U, k = 2) against the upper limit only.
LimitCheck check_electrolytic_loss(double measured_d, double expanded_u_d,
                                   const ElectrolyticLimit& limit);

// ---- matching ----

/// One part's reading for matching: value (any unit, > 0) and two standard uncertainties
/// (k = 1, same unit). u_independent: what differs from part to part (Type A scatter,
/// reconnection, per-part terms). u_shared: what all readings share (reference resistor
/// tolerance, calibration), a common scale of every reading: it cancels in a ratio of two
/// readings, so matching ignores it.
struct PartReading {
  double value = 0;
  double u_independent = 0;
  double u_shared = 0;
};

struct Spread {
  double spread_pct = 0;    ///< (max - min) / mean of the parts, in %
  double u_pct = 0;         ///< standard uncertainty of spread_pct (independent terms only)
  double expanded_pct = 0;  ///< U = 2 u (k = 2)
  std::size_t low = 0;      ///< index of the smallest reading
  std::size_t high = 0;     ///< index of the largest reading
};

/// |a - b| / ((a + b) / 2) in %, with its uncertainty from the independent parts only.
/// Values > 0, u >= 0, finite; else std::invalid_argument.
Spread pair_spread(const PartReading& a, const PartReading& b);

/// (max - min) / mean over n >= 2 readings, same treatment.
Spread set_spread(std::span<const PartReading> parts);

/// The decision on a spread against a requested matching tolerance max_spread_pct > 0
/// (upper limit only); margin_pct is in percentage points.
/// Example: a 0.1 % spread with U 0.06 % against 0.2 % passes.
LimitCheck check_match(const Spread& spread, double max_spread_pct);

// ---- bag sorting ----

struct MatchedPair {
  std::size_t first = 0;  ///< index into the input, the smaller value
  std::size_t second = 0;
  Spread spread;
};

struct BagSort {
  std::vector<MatchedPair> pairs;       ///< floor(n / 2) pairs, ascending by value
  std::optional<std::size_t> left_out;  ///< with n odd: the part without a partner
  double worst_spread_pct = 0;
  double total_spread_pct = 0;  ///< sum of the pairs' spreads
};

/// Pairs a bag of n >= 2 parts so that the worst pair spread is smallest and, among the
/// pairings that reach it, the sum of spreads is smallest (with n odd, one part is left out).
/// Exact: O(n^3) interval dynamic programme on the sorted values. 2 <= n <= 400, values > 0,
/// u >= 0; else std::invalid_argument.
BagSort sort_into_pairs(std::span<const PartReading> parts);

// ---- curve comparison ----

/// One point of a sweep. u_mag_ohm and u_phase_deg are standard uncertainties (k = 1) of |Z|
/// and θ. When both sweeps were taken on the same set-up pass only the terms that differ
/// between them (Type A, reconnection): a common reference scale cancels in the ratio.
struct SweepPoint {
  double freq_hz = 0;
  std::complex<double> z;
  double u_mag_ohm = 0;
  double u_phase_deg = 0;
};

struct CurveDifference {
  double freq_hz = 0;
  double mag_diff_pct = 0;    ///< 100 (|Z1| - |Z2|) / mean(|Z1|, |Z2|)
  double mag_u_pct = 0;       ///< expanded (k = 2)
  double phase_diff_deg = 0;  ///< θ1 - θ2, wrapped to (-180, 180]
  double phase_u_deg = 0;     ///< expanded (k = 2)
  bool agrees = true;         ///< both differences within their U
};

struct CurveComparison {
  std::vector<CurveDifference>
      points;                       ///< at the first sweep's frequencies inside the second's range
  std::size_t skipped = 0;          ///< first-sweep points outside the second's range
  double largest_mag_diff_pct = 0;  ///< signed, the largest |difference|
  double largest_mag_freq_hz = 0;
  double largest_phase_diff_deg = 0;
  double largest_phase_freq_hz = 0;
  bool agree_everywhere = true;
};

/// Compares sweep `second` to sweep `first` at first's frequencies; where they differ the
/// second is interpolated linearly in log f (|Z|, θ and their u), inside its own range only.
/// Each sweep: >= 1 point, frequencies > 0 and strictly increasing, |Z| > 0; no overlap or bad
/// input: std::invalid_argument.
CurveComparison compare_curves(std::span<const SweepPoint> first,
                               std::span<const SweepPoint> second);

}  // namespace tb::dsp
