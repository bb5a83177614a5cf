// Has the card's level changed since a calibration? (A touched output or input-1 gain
// knob, a card re-plugged with other mixer settings.) Compares the reading's level at
// node A per unit of output, a = |V_A| / output level (full-scale units), with the level
// the open step saw, allowing for the loading of the card's output by the jig.
//
// The card's output is a source E behind an output impedance Zo, so
//   a(Y) = |E| / |1 + Zo Y|,
// where Y is the jig's admittance seen from node A (1 / (Rref + Z), either layout, the
// card's input B neglected). The open step gives |E| (its Y is taken as 0); the short
// step gives s = a_open / a_short = |1 + x| with x = Zo Y_short. For a reading with
// admittance Y, Zo Y = x rho with rho = Y / Y_short known, so the loading moves the level
// by 1 / |1 + x rho|. x is known only in size through s; its phase is bounded: with a
// resistive short and an output that is resistive or capacitive (a series coupling
// capacitor), arg x lies in [-90°, 0°]. The check takes every x on that arc, and a level
// outside the whole range (plus the tolerance) is drift. When the range is wide (a
// low-impedance part on a small Rref loads the card heavily) the check cannot decide and
// says so rather than guess.
#pragma once

#include <complex>

namespace tb::dsp {

struct SourceReference {
  double a_open = 0;               ///< |V_A| per output level with the jig open (> 0)
  double a_short = 0;              ///< the same with the jig shorted (> 0)
  std::complex<double> y_short{};  ///< jig admittance at the short step, siemens
};

struct DriftCheck {
  bool decidable = false;  ///< the loading bound is small enough to judge
  bool drifted = false;
  double change_rel = 0;   ///< a_reading / a_expected - 1 (expected: a_open)
  double loading_rel = 0;  ///< how far loading alone may move the level, either way
};

/// tolerance_rel: level change accepted as no drift (e.g. 0.02 = 0.17 dB) beyond what
/// loading explains. The check is decidable when loading_rel <= max_loading_rel.
/// Example: a_open 0.5, a_short 0.45 at Y_short = 1/100 S, a reading of 0.40 at
/// Y = 1/10 kS: loading explains under 1 %, the change is -20 %: drifted.
DriftCheck check_source_drift(const SourceReference& ref, double a_reading,
                              std::complex<double> y_reading, double tolerance_rel = 0.02,
                              double max_loading_rel = 0.05);

}  // namespace tb::dsp
