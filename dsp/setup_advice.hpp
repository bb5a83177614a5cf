// Which reference resistor and jig layout read a given impedance best: the predicted
// relative uncertainty of Z for every Rref of the jig's set in both layouts, from the
// present reading's own noise. Pure model; the wording of the advice is the server's.
//
// Terms, combined as a root sum of squares (standard uncertainties, relative to |Z|):
//  - noise: each input's noise (standard deviation of its mean complex amplitude, from the
//    reading's block SNR) is a property of the card, not of the set-up, so it carries over;
//    node A is assumed to keep its present level. Sensitivities of the divider
//    (r = V_B/V_A, V_A = 1):
//      part_low : dZ/Z per dV_A = -1/(1 - r),  per dV_B = 1/(r (1 - r))
//      part_high: dZ/Z per dV_A =  1/(1 - r),  per dV_B = -1/(r (1 - r));
//  - crosstalk/distortion floor: an error of crosstalk_rel * |V_A| on each input that
//    averaging does not remove, through the same sensitivities;
//  - input loading left after correction: the input at node B sits across the part in
//    part_low (relative error |Z / Zin|) and across Rref in part_high (|Rref / (Rref + Zin)|),
//    times the fraction of it the correction leaves (1 = uncorrected);
//  - Rref tolerance, rectangular: tol / sqrt 3 (JCGM 100 4.3.7).
// Magnitudes are added without regard to phase, so the figure bounds the relative
// uncertainty of |Z| from above (it is the vector error's).
#pragma once

#include <complex>
#include <span>
#include <vector>

#include "dsp/bridge.hpp"

namespace tb::dsp {

struct SetupModel {
  double freq_hz = 1000;              ///< > 0
  double noise_a_rel = 0;             ///< std. dev. of V_A's mean amplitude / |V_A|, >= 0
  double noise_b_rel_a = 0;           ///< std. dev. of V_B's mean amplitude / |V_A|, >= 0
  double crosstalk_rel = 1e-4;        ///< -80 dB: mid of the range in card_faults.hpp (from memory)
  InputLoad input{47e3, 100e-12};     ///< typical consumer input (from memory), node B
  double input_residual_rel = 1;      ///< fraction of the loading left after correction, [0, 1]
  double rref_tolerance_rel = 0.001;  ///< half-width, rectangular
};

struct SetupPrediction {
  double rref_ohm = 0;
  Layout layout = Layout::part_low;
  double u_rel = 0;  ///< combined standard uncertainty of Z, relative
  double u_noise_rel = 0, u_floor_rel = 0, u_loading_rel = 0, u_rref_rel = 0;  ///< its terms
};

/// Predicted relative uncertainty of reading z_ohm (|z| > 0, finite) with reference rref_ohm
/// (> 0) in `layout`. Throws std::invalid_argument for values outside those ranges.
/// Example: for a resistor equal to Rref in part_low the noise sensitivities are 2 and 4.
SetupPrediction predict_setup(const SetupModel& model, std::complex<double> z_ohm, Layout layout,
                              double rref_ohm);

/// Every reference of `rrefs` in both layouts (part_low first), in that order.
std::vector<SetupPrediction> predict_setups(const SetupModel& model, std::complex<double> z_ohm,
                                            std::span<const double> rrefs);

/// The set-up of predict_setups with the lowest u_rel (the first of equals). rrefs not empty,
/// else std::invalid_argument.
SetupPrediction best_setup(const SetupModel& model, std::complex<double> z_ohm,
                           std::span<const double> rrefs);

}  // namespace tb::dsp
