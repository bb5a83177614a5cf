#include "dsp/bridge.hpp"

#include <cmath>
#include <limits>
#include <numbers>
#include <stdexcept>

namespace tb::dsp {

namespace {

bool is_infinite(cplx z) {
  return std::isinf(z.real()) || std::isinf(z.imag());
}

void require_rref(cplx rref_ohm) {
  // A zero reference makes every reading zero; non-finite values come from a broken config.
  if (!(std::abs(rref_ohm) > 0.0) || is_infinite(rref_ohm)) {
    throw std::domain_error("bridge: reference resistor must be finite and non-zero");
  }
}

}  // namespace

std::string_view layout_name(Layout layout) {
  switch (layout) {
    case Layout::part_low:
      return "part-low";
    case Layout::part_high:
      return "part-high";
  }
  return "unknown";
}

std::optional<Layout> parse_layout(std::string_view text) {
  if (text == "part-low" || text == "low") return Layout::part_low;
  if (text == "part-high" || text == "high") return Layout::part_high;
  return std::nullopt;
}

cplx impedance_from_ratio(Layout layout, cplx rref_ohm, cplx ratio_b_over_a) {
  require_rref(rref_ohm);
  const cplx one{1.0, 0.0};
  const cplx r = ratio_b_over_a;
  switch (layout) {
    case Layout::part_low:
      // Divider Rref over Z: r = Z / (Rref + Z). r == 1 means node B follows A: Z unbounded.
      if (r == one)
        throw std::domain_error("bridge (part-low): ratio is 1, the part reads as open");
      return rref_ohm * r / (one - r);
    case Layout::part_high:
      // Divider Z over Rref: r = Rref / (Z + Rref). r == 0 means no current: Z unbounded.
      if (r == cplx{})
        throw std::domain_error("bridge (part-high): ratio is 0, the part reads as open");
      return rref_ohm * (one - r) / r;
  }
  throw std::domain_error("bridge: unknown layout");
}

cplx ratio_from_impedance(Layout layout, cplx rref_ohm, cplx z_ohm) {
  require_rref(rref_ohm);
  if (is_infinite(z_ohm)) {
    // An open part: the limits of the divider formulas, which would otherwise give inf/inf.
    return layout == Layout::part_low ? cplx{1.0, 0.0} : cplx{};
  }
  const cplx total = rref_ohm + z_ohm;
  if (total == cplx{}) {
    // Only a non-passive "part" cancels the reference; no finite ratio describes it.
    throw std::domain_error("bridge: part impedance cancels the reference (Z == -Rref)");
  }
  switch (layout) {
    case Layout::part_low:
      return z_ohm / total;
    case Layout::part_high:
      return rref_ohm / total;
  }
  throw std::domain_error("bridge: unknown layout");
}

cplx solve_bridge(const BridgeConfig& config, cplx v_a, cplx v_b) {
  if (v_a == cplx{}) throw std::domain_error("bridge: V_A is zero, no excitation");
  if (config.channel_match == cplx{}) {
    throw std::domain_error("bridge: channel match H(f) is zero");
  }
  // The channel-B path read H times node A when both probes sat on node A; undo that gain.
  const cplx ratio = (v_b / v_a) / config.channel_match;

  if (!config.input_impedance_ohm || is_infinite(*config.input_impedance_ohm)) {
    return impedance_from_ratio(config.layout, config.rref_ohm, ratio);
  }
  const cplx z_in = *config.input_impedance_ohm;
  if (z_in == cplx{}) throw std::domain_error("bridge: input impedance is zero");

  if (config.layout == Layout::part_high) {
    // The input sits across Rref: the bridge effectively used Rref || Zin as its reference.
    return impedance_from_ratio(Layout::part_high, parallel(config.rref_ohm, z_in), ratio);
  }

  // part_low: the input sits across the part, so the divider saw Zmeas = Z || Zin.
  // Solving 1/Zmeas = 1/Z + 1/Zin for Z.
  const cplx z_meas = impedance_from_ratio(Layout::part_low, config.rref_ohm, ratio);
  if (z_meas == z_in) {
    throw std::domain_error("bridge (part-low): reading equals the input impedance, part is open");
  }
  return z_meas * z_in / (z_in - z_meas);
}

cplx parallel(cplx a, cplx b) {
  if (is_infinite(a)) return b;
  if (is_infinite(b)) return a;
  if (a == cplx{} || b == cplx{}) return cplx{};
  const cplx sum = a + b;
  // A lossless resonance (e.g. L || C at its frequency): the combination is an open.
  if (sum == cplx{}) return {std::numeric_limits<double>::infinity(), 0.0};
  return a * b / sum;
}

cplx InputLoad::at(double freq_hz) const {
  return 1.0 / cplx(1.0 / r_ohm, 2 * std::numbers::pi * freq_hz * c_f);
}

}  // namespace tb::dsp
