// Equivalent-circuit fits over a sweep: a capacitor, an inductor, a resistor or a
// loudspeaker driver described by a few ideal elements whose values best explain the
// measured complex impedance, with standard uncertainties.
//
// Method: weighted non-linear least squares by Levenberg-Marquardt (Eigen's unsupported
// LevenbergMarquardt module, a port of MINPACK's lmder). The residuals are the real and
// imaginary parts of (Z_model - Z_meas) / u, u the standard uncertainty of that part of
// each point. The fit runs in the logarithms of the element values: every value stays
// positive and a parameter of 20 nH sits next to one of 470 uF without ruining the
// conditioning.
//
// Uncertainties: the covariance is (J^T J)^-1 of the weighted Jacobian at the solution
// (first order, GUM-style). When the reduced chi-squared exceeds 1 the points scatter more
// than their stated u says, so the covariance is multiplied by it (u_scaled is then true).
// Values derived from the fitted ones (self-resonance, Qts, Res, ...) get their u by
// propagating that covariance through a numerical gradient.
//
// Models (values in SI units: ohm, F, H, Hz):
//   capacitor  c_esr          C + ESR in series
//              c_esr_esl      C + ESR + ESL in series; series self-resonance 1/(2 pi sqrt(ESL C))
//              No leakage resistance: the card's inputs are AC-coupled, so no sweep it takes
//              can see DC leakage; a parallel R would only soak up noise at the lowest points.
//   inductor   l_r            L + winding R in series
//              l_r_cp         (L + R) parallel Cp (winding capacitance): self-resonance where
//                             Im Z = 0, 1/(2 pi) sqrt(1/(L Cp) - R^2/L^2)
//              l_r_rp         R + (L parallel Rp): core loss as a resistance across L
//              l_r_rp_cp      (R + (L parallel Rp)) parallel Cp; self-resonance quoted as
//                             1/(2 pi sqrt(L Cp)) (Rp and R shift it by well under 1 %
//                             for coils worth fitting)
//   resistor   r              R alone
//              r_ls           R + series L (wirewound)
//              r_cp           R parallel C (high values)
//   driver     driver_le      Re + jw Le + motional parallel Res, Ces, Les
//              driver_l2r2    Re + jw Le + (L2 parallel R2) + the same motional branch
//              The motional branch is fitted as fs, Qms, Qes (better conditioned than Res,
//              Ces, Les) with Res = Re Qms/Qes, Ces = Qes/(2 pi fs Re), Les = 1/((2 pi fs)^2 Ces)
//              (Thiele, Proc. IRE Aust. 1961 / JAES 1971; Small, JAES 20, 1972).
//              Voice-coil losses by the L2R2 network rather than a semi-inductance K (jw)^n
//              (Leach, JAES 50(6), 2002; Wright, JAES 38(10), 1990 for the empirical form):
//              L2R2 is made of ordinary R and L, so the fitted driver can be simulated by
//              ngspice and by our own circuit model (dsp/circuit.hpp), and it follows the
//              rise of |Z| above a few hundred hertz to a few per cent, which is what the
//              small-signal parameters need (common practice, no source).
//
// Model choice: fit_best fits every candidate of the family (or of all families) and keeps
// the lowest BIC = chi2 / s + k ln(2N) (Schwarz 1978), k parameters, 2N residuals, where s is
// the smallest reduced chi-squared among the candidates when that exceeds 1 (dispersion
// scaling, as in QAIC; Burnham & Anderson, Model Selection and Multimodel Inference, 2002):
// with understated u every extra element would otherwise look worth it. An element is thus
// kept only when it lowers chi2 by more than ln(2N) (about 4.8 for 60 points).
//
// Errors: FitError with a stable id (listed in docs/errors.md):
//   fit.bad_input         arrays of different length, a frequency <= 0, a non-finite Z or
//                         u <= 0, an unknown model name
//   fit.too_few_points    fewer points than the model's parameters + 2
//   fit.no_convergence    Levenberg-Marquardt stopped without meeting its tolerances
//   fit.absurd_result     a value ran off by more than 10^6 from its start, or the
//                         parameters cannot be told apart (singular covariance)
//   fit.undetermined      fit_best, per candidate: a parameter's u exceeds its value (the
//                         sweep cannot tell it; the candidate is not chosen)
//   fit.no_model          fit_best: no candidate gave a usable fit
//
// Example:
//   Sweep s = ...;                                  // 60 points of a 6.8 uF crossover cap
//   FitSelection sel = fit_best(s, FitFamily::capacitor);
//   double c = sel.best.value("C");                 // ~6.8e-6
//   std::complex<double> z = sel.best.z_at(1000);   // the model's curve at 1 kHz
#pragma once

#include <complex>
#include <optional>
#include <span>
#include <stdexcept>
#include <string>
#include <string_view>
#include <vector>

namespace tb::dsp {

/// A measured sweep. Every vector has one entry per point; u_re_ohm / u_im_ohm are the
/// standard uncertainties of Re Z and Im Z (> 0). Any order of frequencies.
struct Sweep {
  std::vector<double> freq_hz;
  std::vector<std::complex<double>> z_ohm;
  std::vector<double> u_re_ohm;
  std::vector<double> u_im_ohm;
};

/// A sweep from uncertainties stated in polar form: u_mag_rel of |Z| relative (0.001 =
/// 0.1 %) and u_theta_rad of the phase, per point. Converted to Re/Im by first-order
/// propagation, u_re^2 = (cos t |Z| u_rel)^2 + (sin t |Z| u_t)^2 and the like for Im; the
/// correlation between Re and Im this creates is dropped (it matters only when the two
/// relative uncertainties differ a lot). Throws FitError fit.bad_input on unequal lengths.
Sweep sweep_from_polar_u(std::span<const double> freq_hz,
                         std::span<const std::complex<double>> z_ohm,
                         std::span<const double> u_mag_rel, std::span<const double> u_theta_rad);

enum class FitFamily { capacitor, inductor, resistor, driver };

enum class FitModel {
  c_esr,
  c_esr_esl,
  l_r,
  l_r_cp,
  l_r_rp,
  l_r_rp_cp,
  r,
  r_ls,
  r_cp,
  driver_le,
  driver_l2r2,
};

std::string_view fit_model_name(FitModel model);  ///< "c_esr_esl", ...
std::optional<FitModel> parse_fit_model(std::string_view name);
std::string_view fit_family_name(FitFamily family);  ///< "capacitor", ...
FitFamily fit_model_family(FitModel model);
/// The candidates fit_best tries for a family, simplest first.
std::vector<FitModel> fit_candidates(FitFamily family);
/// Parameter names of a model, in the order of CircuitFit::params (e.g. "C", "ESR", "ESL").
std::vector<std::string> fit_parameter_names(FitModel model);

/// The model's impedance at freq_hz for parameter values in the order of
/// fit_parameter_names (SI units). Example: model_impedance(FitModel::r_ls, {{8.0, 1e-6}}, 1e3).
std::complex<double> model_impedance(FitModel model, std::span<const double> params,
                                     double freq_hz);

struct FitValue {
  std::string name;  ///< "C", "ESR", "srf", "Qts", ...
  std::string unit;  ///< "F", "ohm", "H", "Hz", "" for ratios
  double value = 0;
  double u = 0;  ///< standard uncertainty (k = 1)
};

struct CircuitFit {
  FitModel model = FitModel::r;
  std::string description;        ///< one line: the model in words
  std::vector<FitValue> params;   ///< fitted, in the order of fit_parameter_names
  std::vector<FitValue> derived;  ///< computed from params (driver: Qts, Res, Ces, Les)
  std::optional<FitValue> srf;    ///< self-resonant frequency when the model has one
  double chi2 = 0;                ///< sum of squared weighted residuals
  double chi2_reduced = 0;        ///< chi2 / (2N - k)
  int dof = 0;                    ///< 2N - k
  bool u_scaled = false;          ///< true when u were multiplied by sqrt(chi2_reduced) > 1
  int iterations = 0;
  std::vector<double> freq_hz;  ///< the sweep's frequencies, as given
  /// (Z_model - Z_meas) / |Z_meas| per point: the misfit relative to the reading.
  std::vector<std::complex<double>> residual_rel;

  /// A fitted or derived value by name; throws FitError fit.bad_input for an unknown name.
  const FitValue& get(std::string_view name) const;
  double value(std::string_view name) const { return get(name).value; }
  /// The fitted model's impedance (the curve to draw over the points).
  std::complex<double> z_at(double f_hz) const;
  std::vector<std::complex<double>> curve(std::span<const double> f_hz) const;
};

/// One candidate of a model choice, fitted or not.
struct FitCandidate {
  FitModel model = FitModel::r;
  bool ok = false;
  double chi2_reduced = 0;  ///< when ok
  double bic = 0;           ///< when ok, with the dispersion scaling described above
  std::string error_id;     ///< when !ok: the FitError id that stopped it
};

struct FitSelection {
  CircuitFit best;
  std::vector<FitCandidate> candidates;  ///< in the order tried
  /// The dispersion s that divided chi2 in the BIC (1 when the u were adequate).
  double dispersion = 1;
};

/// A fit that cannot be made. id() is stable; what() says what is wrong, hint() what to do.
class FitError : public std::runtime_error {
 public:
  FitError(std::string id, const std::string& message, std::string hint)
      : std::runtime_error(message), id_(std::move(id)), hint_(std::move(hint)) {}
  const std::string& id() const { return id_; }
  const std::string& hint() const { return hint_; }

 private:
  std::string id_, hint_;
};

/// Fits one model. Starting values come from the data (see circuit_fit.cpp). Throws FitError.
CircuitFit fit_model(const Sweep& sweep, FitModel model);

/// Fits the family's candidates (all models when family is empty) and returns the one with
/// the lowest BIC. Throws FitError: fit.bad_input, fit.too_few_points (for every candidate),
/// fit.no_model when no candidate could be fitted.
FitSelection fit_best(const Sweep& sweep, std::optional<FitFamily> family);

}  // namespace tb::dsp
