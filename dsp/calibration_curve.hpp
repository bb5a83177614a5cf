// Calibrations between their frequency points. A calibration (channel match, open, short,
// load) is measured on a grid of frequencies (3-6 per decade plus the usual test
// frequencies); a reading between two grid points needs the correction interpolated, with
// an uncertainty term for the interpolation itself.
//
// Each calibration is interpolated in the quantities in which its usual physical model is
// flat or smooth against log f, with a shape-preserving cubic (PCHIP: monotone piecewise
// cubic Hermite, Fritsch & Carlson, SIAM J. Numer. Anal. 17(2), 1980; interior slopes by
// the weighted harmonic mean of Fritsch & Butland, SIAM J. Sci. Stat. Comput. 5(2), 1984):
//   channel match H = V_B/V_A: gain in dB and unwrapped phase;
//   open:  admittance Y = 1/Z = G + jB as G and C = B/omega (a shunt R || C is then exact);
//   short, load: R and L = X/omega (a series R-L is then exact).
// PCHIP never overshoots its data (no ringing between points, an open's conductance stays
// positive), and it reproduces a constant exactly.
//
// Uncertainty of an interpolated value:
//  - the points' own Type A (and their Type B terms), scaled by the linear interpolation
//    weights (1 - t, t) of the two bracketing points, t the position in log f; the points
//    are independent captures, so their Type A adds in quadrature;
//  - "interpolation": a rectangular half-width, PCHIP's slopes against those of the
//    polynomial through the five nearest points (the .cpp says why), zero on a point.
//
// Grid rules: points in strictly ascending frequency (else std::invalid_argument). A
// frequency within 0.1 % of a grid point returns that point exactly (the same tolerance
// with which a stored point is matched to a reading); outside the grid, beyond 0.1 % of an
// end point, the answer is std::nullopt (no extrapolation). An empty grid gives nullopt;
// a grid of fewer than 3 points answers only on its points (no curvature to judge by).
#pragma once

#include <complex>
#include <optional>
#include <span>

#include "dsp/uncertainty.hpp"

namespace tb::dsp {

/// One channel-match point: H = V_B/V_A with both inputs on node A, and the standard
/// uncertainties of its gain (relative) and phase (rad). freq_hz > 0.
struct MatchPoint {
  double freq_hz = 0;
  std::complex<double> h{1, 0};
  double u_gain_rel = 0;
  double u_phase_rad = 0;
};

struct MatchEstimate {
  std::complex<double> h{1, 0};
  double u_gain_rel = 0;   ///< the points' own uncertainty, interpolated
  double u_phase_rad = 0;  ///< the points' own uncertainty, interpolated
  /// Interpolation half-widths (rectangular; 0 on a grid point): the bound on the error.
  double interp_gain_half_rel = 0;
  double interp_phase_half_rad = 0;
  bool on_grid_point = false;
  /// u of the gain and phase with the interpolation included (its u = half-width / sqrt 3).
  double total_gain_u_rel() const;
  double total_phase_u_rad() const;
};

/// One open, short or load point: the standard as measured, with its budget. freq_hz > 0.
/// An open the bridge could not resolve may be stored as an ideal open: value 1e18 ohm
/// (or more), no Type A.
struct ImpedancePoint {
  double freq_hz = 0;
  UncertainComplex z;
};

/// H at freq_hz (> 0) from the grid. Example: with points at 100 Hz and 1 kHz both
/// holding H = 1.01, interpolate_match(points, 316) gives h = 1.01.
std::optional<MatchEstimate> interpolate_match(std::span<const MatchPoint> grid, double freq_hz);

/// The open at freq_hz, interpolated as G and C = B/omega. When both bracketing points are
/// ideal opens (|Z| >= 1e18 ohm) so is the result. Type B terms "interpolation_g" (per
/// siemens) and "interpolation_c" (per farad) carry the interpolation.
std::optional<UncertainComplex> interpolate_open(std::span<const ImpedancePoint> grid,
                                                 double freq_hz);

/// The short at freq_hz, interpolated as R and L = X/omega. Type B terms "interpolation_r"
/// (per ohm) and "interpolation_l" (per henry) carry the interpolation.
std::optional<UncertainComplex> interpolate_short(std::span<const ImpedancePoint> grid,
                                                  double freq_hz);

/// A load standard (a measured known resistor) at freq_hz: interpolated as the short is.
std::optional<UncertainComplex> interpolate_load(std::span<const ImpedancePoint> grid,
                                                 double freq_hz);

}  // namespace tb::dsp
