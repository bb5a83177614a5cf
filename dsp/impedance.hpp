// Quantities derived from one complex impedance Z = R + jX at angular frequency w.
//
// Textbook identities (Nahvi & Edminister, Schaum's Outline of Electric Circuits):
//   Rs = R, Xs = X, |Z|, theta = atan2(X, R)
//   Cs = -1/(w X)   Ls = X / w                       (series equivalents)
//   D  = |R| / |X|   Q = 1/D
//   Cp = Cs / (1 + D^2)   Lp = Ls (1 + 1/Q^2)   Rp = (R^2 + X^2) / R   (parallel equivalents)
// Cs/Cp are only meaningful for X < 0, Ls/Lp for X > 0; the other pair is reported as 0.
#pragma once

#include <complex>
#include <optional>
#include <string_view>

namespace tb::dsp {

enum class PartKind { capacitor, inductor, resistor };

std::string_view part_kind_name(PartKind kind);  // "C", "L", "R"
/// Accepts "C"/"L"/"R" and the full words, case-insensitive.
std::optional<PartKind> parse_part_kind(std::string_view text);

struct ImpedanceValues {
  double freq_hz = 0;
  double r_ohm = 0;      ///< Rs = Re Z (ESR of a capacitor); may be < 0 through noise
  double x_ohm = 0;      ///< Xs = Im Z
  double mag_ohm = 0;    ///< |Z|
  double theta_deg = 0;  ///< phase of Z, degrees, (-180, 180]
  double cs_f = 0;       ///< series capacitance (X < 0), else 0
  double cp_f = 0;       ///< parallel capacitance (X < 0), else 0
  double ls_h = 0;       ///< series inductance (X > 0), else 0
  double lp_h = 0;       ///< parallel inductance (X > 0), else 0
  double rp_ohm = 0;     ///< parallel resistance (R^2+X^2)/R; infinity when R == 0
  double d = 0;          ///< dissipation factor |R|/|X|; infinity when X == 0
  double q = 0;          ///< quality factor |X|/|R|; infinity when R == 0
};

/// All derived values at freq_hz (> 0). Example: derive({15.9155, -1591.55}, 1000).cs_f ~ 1e-7.
ImpedanceValues derive(std::complex<double> z_ohm, double freq_hz);

/// The part type from a reading: resistor when |X| is below a tenth of |R| or within its
/// own expanded uncertainty of zero (so a pure resistor and a part at self-resonance
/// read as R); otherwise capacitor for X < 0 and inductor for X > 0.
/// u_x_ohm is the expanded uncertainty of X (0 if unknown).
PartKind detect_kind(std::complex<double> z_ohm, double u_x_ohm);

}  // namespace tb::dsp
