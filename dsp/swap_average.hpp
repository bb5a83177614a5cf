// Swap-and-average: the channel ratio read twice, once with the inputs as wired (input A
// on node a, input B on node b) and once with them swapped. With H the mismatch of input B
// against input A and r the divider's true ratio V_b/V_a:
//   normal  r1 = H * r,   swapped  r2 = H / r,   so   r = sqrt(r1 / r2),  H = sqrt(r1 * r2).
// The mismatch cancels without a channel-match calibration, and so does a mismatch that
// changed since the last one (a touched gain knob), as long as it holds still during the
// two captures. (The inputs' own loading does not cancel: see server/swap_average.hpp.)
//
// Of the two square roots, r is the one next to r1 (Re(r conj r1) >= 0): the two inputs
// of one card differ by a fraction of a dB and a few degrees, so H is near 1 and r near r1;
// the other root lies 180 degrees away, a phase no mismatch makes.
//
// Uncertainty: ln r = (ln r1 - ln r2) / 2, so each capture's relative Type A enters with
// weight 1/2 and the two (independent captures) add in quadrature; the degrees of freedom
// follow by Welch-Satterthwaite (JCGM 100:2008 G.4). Type B terms of either input are
// carried with their sensitivities scaled the same way.
#pragma once

#include <complex>

#include "dsp/bridge.hpp"
#include "dsp/uncertainty.hpp"

namespace tb::dsp {

/// A mean ratio from one capture as an uncertain complex: u_rel >= 0 is the relative
/// standard uncertainty of the mean (|complex spread| / sqrt(n) / |mean|, as
/// ToneReading::ratio_u_rel), taken as circular: Re and Im of dr/r each with variance
/// u_rel^2 / 2. dof = blocks used - 1 (0: no Type A estimate).
/// Example: ratio_with_type_a({0.5, 0}, 1e-4, 15).type_a.rr == 0.5 * 0.5 * 1e-8 / 2.
UncertainComplex ratio_with_type_a(std::complex<double> ratio, double u_rel, double dof);

struct SwapAverage {
  UncertainComplex ratio;     ///< r = sqrt(r1 / r2): the divider's ratio, mismatch removed
  UncertainComplex mismatch;  ///< H = sqrt(r1 * r2): the inputs' mismatch during the captures
};

/// Combines the normal (r1) and swapped (r2) ratios. Throws std::domain_error when either
/// is zero or not finite.
/// Example: swap_average({.value = 0.51}, {.value = 2.04}).ratio.value == 0.5 (H = 1.02).
SwapAverage swap_average(const UncertainComplex& normal, const UncertainComplex& swapped);

/// Z from an uncertain ratio through the ideal bridge (bridge.hpp), with the ratio's Type A
/// and Type B carried by dZ/dr, plus "rref_tolerance": a rectangular half-width
/// rref_tolerance_rel (>= 0) of Rref, sensitivity Z per unit relative change of Rref.
/// Throws std::domain_error where the bridge is singular (impedance_from_ratio).
UncertainComplex impedance_from_uncertain_ratio(Layout layout, double rref_ohm,
                                                double rref_tolerance_rel,
                                                const UncertainComplex& ratio);

}  // namespace tb::dsp
