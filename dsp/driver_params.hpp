// Thiele/Small small-signal parameters of a loudspeaker driver from its impedance curve
// (Thiele, Proc. IRE Aust. 1961 / JAES 19, 1971; Small, JAES 20, 1972; IEC 60268-5).
//
// Two routes:
//   - from the curve (the published f1/f2 method): Re; fs at the |Z| peak Zmax;
//     r0 = Zmax/Re; f1 < fs < f2 where |Z| = Re sqrt(r0); fs = sqrt(f1 f2);
//     Qms = fs sqrt(r0)/(f2 - f1); Qes = Qms/(r0 - 1); Qts = Qms Qes/(Qms + Qes).
//     Exact for Re plus a parallel RLC; a voice-coil inductance lifts f2 a little.
//   - from the fitted equivalent circuit (circuit_fit.hpp, driver_le / driver_l2r2), which
//     carries uncertainties and is not biased by Le.
// Electrical analogue: Res = Re Qms/Qes, Ces = Qes/(2 pi fs Re), Les = 1/((2 pi fs)^2 Ces).
//
// Vas needs one more measurement, by either published method:
//   - added mass M on the cone, resonance moves to f': Mms = M/((fs/f')^2 - 1),
//     Cms = 1/((2 pi fs)^2 Mms), Vas = rho c^2 Sd^2 Cms; then Bl = sqrt(2 pi fs Mms Re / Qes).
//   - a known closed box Vb, giving fc and Qec: Vas = Vb ((fc Qec)/(fs Qes) - 1) (Small,
//     "Closed-box loudspeaker systems", JAES 20, 1972: fc/fs = Qec/Qes = sqrt(1 + Vas/Vb)).
// Air at 20 C and 101.325 kPa (from memory): rho = 1.204 kg/m^3, c = 343.2 m/s.
//
// The parameters hold for the conditions of the sweep only: mounting (free air, on a baffle,
// in a box) and drive level change fs and the Q's, so every result carries them.
//
// Errors: FitError (circuit_fit.hpp) with ids fit.bad_input (bad arrays or arguments) and
// fit.no_peak (no resonance peak inside the sweep, or f1/f2 outside it).
//
// Example: ts_from_curve(f, z, {}).fs_hz  // ~70.7 for the worked example of references.md
#pragma once

#include <complex>
#include <optional>
#include <span>
#include <string>

#include "dsp/circuit_fit.hpp"

namespace tb::dsp {

/// Air at 20 C, 101.325 kPa (from memory: rho = p/(R_air T) = 101325/(287.05 * 293.15);
/// c = 331.3 sqrt(1 + 20/273.15)).
inline constexpr double kAirDensity_kg_m3 = 1.204;
inline constexpr double kSpeedOfSound_m_s = 343.2;

/// How the driver was measured; carried through so a report can state it.
struct DriverConditions {
  std::string mounting = "free air";
  double drive_v_rms = 0;  ///< test voltage across the driver, V rms (0 = not stated)
};

struct DriverParams {
  std::string method;  ///< "curve" (f1/f2 method) or "fit:<model name>"
  DriverConditions conditions;
  double re_ohm = 0, fs_hz = 0, qms = 0, qes = 0, qts = 0;
  double res_ohm = 0, ces_f = 0, les_h = 0;
  /// Standard uncertainties; 0 where the method gives none (the curve method).
  double u_re_ohm = 0, u_fs_hz = 0, u_qms = 0, u_qes = 0, u_qts = 0;
  /// Curve method only: the peak (its frequency and |Z|) and the two side frequencies.
  /// fs_hz is then sqrt(f1 f2), which the Q formulas assume; fpeak_hz lies close to it.
  double fpeak_hz = 0, zmax_ohm = 0, r0 = 0, f1_hz = 0, f2_hz = 0;
};

/// The f1/f2 method on |Z| (the phase is not used). re_ohm: the DC resistance when it was
/// measured with a meter (a sound card cannot see DC); otherwise the smallest |Z| of the
/// sweep is taken, which reads high by the voice-coil inductance's share there. The peak and
/// f1, f2 are interpolated between points (parabola in log f at the peak, linear in log f
/// elsewhere): use a dense sweep around fs. Throws FitError fit.bad_input / fit.no_peak.
DriverParams ts_from_curve(std::span<const double> freq_hz,
                           std::span<const std::complex<double>> z_ohm,
                           const DriverConditions& conditions,
                           std::optional<double> re_ohm = std::nullopt);

/// From a fit of model driver_le or driver_l2r2 (fit.bad_input otherwise).
DriverParams ts_from_fit(const CircuitFit& fit, const DriverConditions& conditions);

struct VasResult {
  std::string method;  ///< "added mass" or "closed box"
  double vas_m3 = 0;
  double cms_m_per_n = 0;  ///< added mass only (0 otherwise)
  double mms_kg = 0;       ///< added mass only
  double bl_tm = 0;        ///< added mass only
  double rho_kg_m3 = kAirDensity_kg_m3, c_m_s = kSpeedOfSound_m_s;
};

/// Added mass: fs and qes of the bare driver, fs_loaded_hz with added_mass_kg on the cone,
/// sd_m2 the effective cone area, re_ohm for Bl. Needs 0 < fs_loaded < fs. Throws FitError
/// fit.bad_input. Example: vas_added_mass(p, 50, 0.01, 0.0220)
VasResult vas_added_mass(const DriverParams& free_air, double fs_loaded_hz, double added_mass_kg,
                         double sd_m2, double rho_kg_m3 = kAirDensity_kg_m3,
                         double c_m_s = kSpeedOfSound_m_s);

/// Closed box of net volume vb_m3 with the driver's resonance fc_hz and electrical Q qec
/// in it. Needs fc Qec > fs Qes. Throws FitError fit.bad_input.
VasResult vas_closed_box(const DriverParams& free_air, double fc_hz, double qec, double vb_m3);

}  // namespace tb::dsp
