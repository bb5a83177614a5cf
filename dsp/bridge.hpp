// Bridge maths: the part's impedance from the ratio of the two input channels.
//
// Jig: the card output drives node A; input 1 reads node A, input 2 reads node B.
//   part_low : Rref from A to B, part from B to ground.  Z = Rref * r / (1 - r)
//   part_high: part from A to B, Rref from B to ground.  Z = Rref * (1 - r) / r
// where r = V_B / V_A is the complex channel ratio at one frequency.
//
// Corrections applied by solve_bridge(), in this order:
//   1. channel match: r is divided by H(f), the ratio read with both inputs on node A;
//   2. card input impedance at node B (complex, measured): in part_low it sits across
//      the part, in part_high across Rref;
// Fixture compensation (open/short/load) is separate: see compensation.hpp.
#pragma once

#include <complex>
#include <optional>
#include <string_view>

namespace tb::dsp {

using cplx = std::complex<double>;

enum class Layout { part_low, part_high };

std::string_view layout_name(Layout layout);
/// "part-low" / "part-high" (also accepts "low"/"high"); nullopt otherwise.
std::optional<Layout> parse_layout(std::string_view text);

/// A card input as a resistance in parallel with a capacitance (the card plus its cable):
/// its impedance depends on the frequency. r_ohm > 0, c_f >= 0.
struct InputLoad {
  double r_ohm = 47e3;
  double c_f = 0;
  cplx at(double freq_hz) const;
};

struct BridgeConfig {
  Layout layout = Layout::part_low;
  /// Reference resistor as a complex impedance (its own reactance may be included), ohm, |rref| >
  /// 0.
  cplx rref_ohm{1000.0, 0.0};
  /// Channel match H(f) = V_B/V_A with both inputs on node A; 1 when uncalibrated.
  cplx channel_match{1.0, 0.0};
  /// Input impedance of the channel reading node B; nullopt = ideal (infinite).
  std::optional<cplx> input_impedance_ohm;
};

/// Z of an ideal bridge from the raw ratio r = V_B/V_A (no corrections).
/// Example: impedance_from_ratio(Layout::part_low, 1000, 0.5) == 1000.
/// Throws std::domain_error when the ratio makes the bridge singular (r == 1 part_low, r == 0
/// part_high) or Rref is zero or infinite.
cplx impedance_from_ratio(Layout layout, cplx rref_ohm, cplx ratio_b_over_a);

/// Inverse of impedance_from_ratio: the ratio an ideal bridge shows for impedance z. An infinite
/// z gives 1 (part_low) or 0 (part_high); z == -Rref throws std::domain_error.
cplx ratio_from_impedance(Layout layout, cplx rref_ohm, cplx z_ohm);

/// Z with channel match and input loading corrected. Throws std::domain_error when singular:
/// V_A == 0, H == 0, Zin == 0, or (part_low) a reading equal to Zin (the part is open).
cplx solve_bridge(const BridgeConfig& config, cplx v_a, cplx v_b);

/// Parallel combination a || b (ohm). Either may be infinite (returns the other).
cplx parallel(cplx a, cplx b);

}  // namespace tb::dsp
