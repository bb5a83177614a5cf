#include "dsp/circuit_fit.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <unsupported/Eigen/LevenbergMarquardt>

#include "dsp/driver_params.hpp"

namespace tb::dsp {
namespace {

using cplx = std::complex<double>;
constexpr double kPi = std::numbers::pi;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// A log-parameter further than this from its start has run away (factor 10^6).
const double kRunaway = std::log(1e6);

struct ParamInfo {
  const char* name;
  const char* unit;
};

// Everything the fitter needs to know about one model. Parameters are SI values, in the
// order of `params`.
struct ModelSpec {
  FitModel model;
  FitFamily family;
  const char* name;
  const char* description;
  std::vector<ParamInfo> params;
  std::vector<ParamInfo> derived;  // computed by derive()
  bool has_srf;
};

cplx par(cplx a, cplx b) {
  return a * b / (a + b);
}

// Motional branch of a driver from (Re, fs, Qms, Qes): Res, Ces, Les (Small 1972).
struct Motional {
  double res, ces, les;
};
Motional motional(double re, double fs, double qms, double qes) {
  const double ces = qes / (2 * kPi * fs * re);
  return {re * qms / qes, ces, 1.0 / (std::pow(2 * kPi * fs, 2) * ces)};
}

cplx eval(FitModel m, const double* p, double f) {
  const double w = 2 * kPi * f;
  const cplx j{0, 1};
  switch (m) {
    case FitModel::c_esr:
      return p[1] + 1.0 / (j * w * p[0]);
    case FitModel::c_esr_esl:
      return p[1] + j * w * p[2] + 1.0 / (j * w * p[0]);
    case FitModel::l_r:
      return p[1] + j * w * p[0];
    case FitModel::l_r_cp:
      return par(p[1] + j * w * p[0], 1.0 / (j * w * p[2]));
    case FitModel::l_r_rp:
      return p[1] + par(j * w * p[0], p[2]);
    case FitModel::l_r_rp_cp:
      return par(p[1] + par(j * w * p[0], p[2]), 1.0 / (j * w * p[3]));
    case FitModel::r:
      return p[0];
    case FitModel::r_ls:
      return p[0] + j * w * p[1];
    case FitModel::r_cp:
      return p[0] / (1.0 + j * w * p[0] * p[1]);
    case FitModel::driver_le:
    case FitModel::driver_l2r2: {
      const bool l2r2 = m == FitModel::driver_l2r2;
      const double re = p[0], le = p[1];
      const double* mp = p + (l2r2 ? 4 : 2);
      const Motional mo = motional(re, mp[0], mp[1], mp[2]);
      const cplx ymot = 1.0 / mo.res + j * w * mo.ces + 1.0 / (j * w * mo.les);
      cplx z = re + j * w * le + 1.0 / ymot;
      if (l2r2) z += par(j * w * p[2], p[3]);
      return z;
    }
  }
  return kNaN;
}

const std::vector<ModelSpec>& specs() {
  static const std::vector<ModelSpec> table = {
      {FitModel::c_esr,
       FitFamily::capacitor,
       "c_esr",
       "capacitor: C in series with ESR",
       {{"C", "F"}, {"ESR", "ohm"}},
       {},
       false},
      {FitModel::c_esr_esl,
       FitFamily::capacitor,
       "c_esr_esl",
       "capacitor: C in series with ESR and ESL",
       {{"C", "F"}, {"ESR", "ohm"}, {"ESL", "H"}},
       {},
       true},
      {FitModel::l_r,
       FitFamily::inductor,
       "l_r",
       "inductor: L in series with winding R",
       {{"L", "H"}, {"R", "ohm"}},
       {},
       false},
      {FitModel::l_r_cp,
       FitFamily::inductor,
       "l_r_cp",
       "inductor: L in series with winding R, winding capacitance Cp across both",
       {{"L", "H"}, {"R", "ohm"}, {"Cp", "F"}},
       {},
       true},
      {FitModel::l_r_rp,
       FitFamily::inductor,
       "l_r_rp",
       "inductor: L with core-loss resistance Rp across it, in series with winding R",
       {{"L", "H"}, {"R", "ohm"}, {"Rp", "ohm"}},
       {},
       false},
      {FitModel::l_r_rp_cp,
       FitFamily::inductor,
       "l_r_rp_cp",
       "inductor: L with core loss Rp across it, winding R in series, winding capacitance Cp "
       "across all",
       {{"L", "H"}, {"R", "ohm"}, {"Rp", "ohm"}, {"Cp", "F"}},
       {},
       true},
      {FitModel::r, FitFamily::resistor, "r", "resistor: R alone", {{"R", "ohm"}}, {}, false},
      {FitModel::r_ls,
       FitFamily::resistor,
       "r_ls",
       "resistor: R in series with L",
       {{"R", "ohm"}, {"Ls", "H"}},
       {},
       false},
      {FitModel::r_cp,
       FitFamily::resistor,
       "r_cp",
       "resistor: R in parallel with C",
       {{"R", "ohm"}, {"Cp", "F"}},
       {},
       false},
      {FitModel::driver_le,
       FitFamily::driver,
       "driver_le",
       "driver: Re + voice-coil Le + motional Res || Ces || Les",
       {{"Re", "ohm"}, {"Le", "H"}, {"fs", "Hz"}, {"Qms", ""}, {"Qes", ""}},
       {{"Qts", ""}, {"Res", "ohm"}, {"Ces", "F"}, {"Les", "H"}},
       false},
      {FitModel::driver_l2r2,
       FitFamily::driver,
       "driver_l2r2",
       "driver: Re + voice-coil Le + (L2 || R2) + motional Res || Ces || Les",
       {{"Re", "ohm"},
        {"Le", "H"},
        {"L2", "H"},
        {"R2", "ohm"},
        {"fs", "Hz"},
        {"Qms", ""},
        {"Qes", ""}},
       {{"Qts", ""}, {"Res", "ohm"}, {"Ces", "F"}, {"Les", "H"}},
       false},
  };
  return table;
}

const ModelSpec& spec(FitModel m) {
  for (const ModelSpec& s : specs())
    if (s.model == m) return s;
  throw FitError("fit.bad_input", "unknown fit model", "use one of the listed models");
}

// Derived values (driver) and the self-resonance, from SI parameters.
std::vector<double> derive_values(FitModel m, const double* p) {
  switch (m) {
    case FitModel::c_esr_esl:
      return {1.0 / (2 * kPi * std::sqrt(p[2] * p[0]))};
    case FitModel::l_r_cp: {
      const double w2 = 1.0 / (p[0] * p[2]) - (p[1] * p[1]) / (p[0] * p[0]);
      return {w2 > 0 ? std::sqrt(w2) / (2 * kPi) : kNaN};
    }
    case FitModel::l_r_rp_cp:
      return {1.0 / (2 * kPi * std::sqrt(p[0] * p[3]))};
    case FitModel::driver_le:
    case FitModel::driver_l2r2: {
      const double* mp = p + (m == FitModel::driver_l2r2 ? 4 : 2);
      const Motional mo = motional(p[0], mp[0], mp[1], mp[2]);
      return {mp[1] * mp[2] / (mp[1] + mp[2]), mo.res, mo.ces, mo.les};
    }
    default:
      return {};
  }
}

void check_sweep(const Sweep& s) {
  const std::size_t n = s.freq_hz.size();
  if (s.z_ohm.size() != n || s.u_re_ohm.size() != n || s.u_im_ohm.size() != n)
    throw FitError("fit.bad_input", "sweep arrays differ in length",
                   "give one frequency, impedance and pair of uncertainties per point");
  for (std::size_t i = 0; i < n; ++i) {
    if (!(s.freq_hz[i] > 0) || !std::isfinite(s.freq_hz[i]))
      throw FitError("fit.bad_input", "frequency " + std::to_string(i) + " is not positive",
                     "drop the point or fix the frequency");
    if (!std::isfinite(s.z_ohm[i].real()) || !std::isfinite(s.z_ohm[i].imag()))
      throw FitError("fit.bad_input", "impedance at point " + std::to_string(i) + " is not finite",
                     "drop the point (an open or shorted reading) and fit again");
    if (!(s.u_re_ohm[i] > 0) || !(s.u_im_ohm[i] > 0) || !std::isfinite(s.u_re_ohm[i]) ||
        !std::isfinite(s.u_im_ohm[i]))
      throw FitError("fit.bad_input",
                     "uncertainty at point " + std::to_string(i) + " is not a positive number",
                     "give each point's standard uncertainty of Re Z and Im Z (> 0)");
  }
}

// Indices of the points sorted by frequency.
std::vector<std::size_t> by_freq(const Sweep& s) {
  std::vector<std::size_t> idx(s.freq_hz.size());
  for (std::size_t i = 0; i < idx.size(); ++i)
    idx[i] = i;
  std::sort(idx.begin(), idx.end(),
            [&](std::size_t a, std::size_t b) { return s.freq_hz[a] < s.freq_hz[b]; });
  return idx;
}

double omega(const Sweep& s, std::size_t i) {
  return 2 * kPi * s.freq_hz[i];
}

// Weighted mean of Re Z over points idx (ESR / winding R start).
double mean_re(const Sweep& s, std::span<const std::size_t> idx) {
  double num = 0, den = 0;
  for (std::size_t i : idx) {
    const double wt = 1.0 / (s.u_re_ohm[i] * s.u_re_ohm[i]);
    num += wt * s.z_ohm[i].real();
    den += wt;
  }
  return num / den;
}

// The lowest third of the points (at least 3, at most all).
std::span<const std::size_t> low_third(const std::vector<std::size_t>& idx) {
  return std::span(idx).first(std::min(idx.size(), std::max<std::size_t>(3, idx.size() / 3)));
}

double positive_or(double v, double fallback) {
  return (v > 0 && std::isfinite(v)) ? v : fallback;
}

// Starting values from the data, SI, in the model's parameter order. Why each: see the
// comments; a good start matters more than anything else for LM on these models.
std::vector<double> start_values(const Sweep& s, FitModel m) {
  const auto idx = by_freq(s);
  const std::size_t lo = idx.front(), hi = idx.back();
  const double w_hi = omega(s, hi);
  double zmin = std::abs(s.z_ohm[lo]);
  for (std::size_t i : idx)
    zmin = std::min(zmin, std::abs(s.z_ohm[i]));

  switch (fit_model_family(m)) {
    case FitFamily::capacitor: {
      // w X = -1/C + w^2 ESL is linear in (1/C, ESL): weighted least squares on every point.
      Eigen::Matrix2d a = Eigen::Matrix2d::Zero();
      Eigen::Vector2d b = Eigen::Vector2d::Zero();
      for (std::size_t i : idx) {
        const double w = omega(s, i), sig = w * s.u_im_ohm[i];
        const Eigen::Vector2d row(-1.0 / sig, w * w / sig);
        a += row * row.transpose();
        b += row * (w * s.z_ohm[i].imag() / sig);
      }
      const Eigen::Vector2d x = a.ldlt().solve(b);
      const double c_lo = -1.0 / (omega(s, lo) * s.z_ohm[lo].imag());
      const double c = x(0) > 0 ? 1.0 / x(0) : positive_or(c_lo, 1e-6);
      const double esr = positive_or(mean_re(s, idx), 1e-3 * zmin);
      if (m == FitModel::c_esr) return {c, esr};
      // Unseen ESL: start with the series resonance ten times above the sweep.
      return {c, esr, positive_or(x(1), 1.0 / (100 * w_hi * w_hi * c))};
    }
    case FitFamily::inductor: {
      const auto low = low_third(idx);
      double num = 0, den = 0;  // X = w L on the low points, weighted
      for (std::size_t i : low) {
        const double w = omega(s, i), sig = s.u_im_ohm[i];
        num += w * s.z_ohm[i].imag() / (sig * sig);
        den += w * w / (sig * sig);
      }
      const double l = positive_or(num / den, 1e-3);
      const double r = positive_or(mean_re(s, low), 1e-3 * zmin);
      // Winding capacitance: from a sign change of X (+ to -) inside the sweep, else from
      // the top point's excess susceptance, else a resonance ten times above the sweep.
      double cp = 1.0 / (100 * w_hi * w_hi * l);
      for (std::size_t k = 1; k < idx.size(); ++k) {
        if (s.z_ohm[idx[k - 1]].imag() > 0 && s.z_ohm[idx[k]].imag() <= 0) {
          const double w0 = std::sqrt(omega(s, idx[k - 1]) * omega(s, idx[k]));
          cp = 1.0 / (w0 * w0 * l);
          break;
        }
      }
      if (cp == 1.0 / (100 * w_hi * w_hi * l)) {
        const cplx y = 1.0 / s.z_ohm[hi];
        const double b_excess = y.imag() + w_hi * l / (r * r + w_hi * w_hi * l * l);
        if (b_excess > 0) cp = std::max(cp, b_excess / w_hi);
      }
      // Core loss: Re Z - R ~ (w L)^2 / Rp at the top point when Rp >> w L.
      const double extra = s.z_ohm[hi].real() - r;
      const double rp = positive_or(std::pow(w_hi * l, 2) / extra, 100 * w_hi * l);
      switch (m) {
        case FitModel::l_r:
          return {l, r};
        case FitModel::l_r_cp:
          return {l, r, cp};
        case FitModel::l_r_rp:
          return {l, r, std::max(rp, w_hi * l)};
        default:
          return {l, r, std::max(rp, w_hi * l), cp};
      }
    }
    case FitFamily::resistor: {
      const double r = positive_or(mean_re(s, low_third(idx)), zmin);
      const double x = s.z_ohm[hi].imag();
      if (m == FitModel::r) return {r};
      if (m == FitModel::r_ls) return {r, positive_or(x / w_hi, 1e-3 * r / w_hi)};
      return {r, positive_or(-x / (w_hi * r * r), 1e-3 / (w_hi * r))};
    }
    case FitFamily::driver: {
      // Re: the smallest real part (the motional branch and L2R2 only add to it). fs and
      // the Q's by the published f1/f2 method on the curve, when the sweep holds the peak.
      double re = s.z_ohm[lo].real();
      for (std::size_t i : idx)
        re = std::min(re, s.z_ohm[i].real());
      re = positive_or(re, zmin);
      double fs = std::sqrt(s.freq_hz[lo] * s.freq_hz[hi]), qms = 4, qes = 0.5;
      try {
        std::vector<double> f;
        std::vector<cplx> z;
        for (std::size_t i : idx) {
          f.push_back(s.freq_hz[i]);
          z.push_back(s.z_ohm[i]);
        }
        const DriverParams tp = ts_from_curve(f, z, {}, re);
        fs = tp.fs_hz;
        qms = tp.qms;
        qes = tp.qes;
      } catch (const FitError&) {
        // keep the rough start; LM may still find the peak
      }
      // Voice coil: the reactance at the top point, shared between Le and L2.
      const double xl = positive_or(s.z_ohm[hi].imag() / w_hi, 1e-4);
      if (m == FitModel::driver_le) return {re, xl, fs, qms, qes};
      const double r2 = positive_or(2 * (s.z_ohm[hi].real() - re), re);
      return {re, 0.5 * xl, xl, r2, fs, qms, qes};
    }
  }
  return {};
}

// Residuals in log-parameter space for Eigen's LM.
struct Residuals : Eigen::DenseFunctor<double> {
  const Sweep& s;
  FitModel m;
  Eigen::VectorXd x0;  // starting log-parameters (clamping window)

  Residuals(const Sweep& sweep, FitModel model, const Eigen::VectorXd& start)
      : DenseFunctor<double>(static_cast<int>(start.size()),
                             static_cast<int>(2 * sweep.freq_hz.size())),
        s(sweep),
        m(model),
        x0(start) {}

  // Clamped to +-40 (factor 2e17) around the start, so exp() cannot overflow while LM
  // explores; a parameter that reaches the window is reported as a runaway.
  std::vector<double> params(const Eigen::VectorXd& x) const {
    std::vector<double> p(static_cast<std::size_t>(x.size()));
    for (Eigen::Index k = 0; k < x.size(); ++k)
      p[static_cast<std::size_t>(k)] = std::exp(std::clamp(x(k), x0(k) - 40.0, x0(k) + 40.0));
    return p;
  }

  int operator()(const Eigen::VectorXd& x, Eigen::VectorXd& fvec) const {
    const auto p = params(x);
    for (std::size_t i = 0; i < s.freq_hz.size(); ++i) {
      const cplx d = eval(m, p.data(), s.freq_hz[i]) - s.z_ohm[i];
      const auto r = static_cast<Eigen::Index>(2 * i);
      fvec(r) = d.real() / s.u_re_ohm[i];
      fvec(r + 1) = d.imag() / s.u_im_ohm[i];
      if (!std::isfinite(fvec(r)) || !std::isfinite(fvec(r + 1))) fvec(r) = fvec(r + 1) = 1e150;
    }
    return 0;
  }

  // Central differences in log space: h = 1e-6 keeps truncation (h^2) and rounding
  // (eps/h) both near 1e-10 relative, far below what the covariance needs.
  int df(const Eigen::VectorXd& x, Eigen::MatrixXd& jac) const {
    constexpr double h = 1e-6;
    Eigen::VectorXd xp = x, fp(values()), fm(values());
    for (Eigen::Index k = 0; k < x.size(); ++k) {
      xp(k) = x(k) + h;
      (*this)(xp, fp);
      xp(k) = x(k) - h;
      (*this)(xp, fm);
      xp(k) = x(k);
      jac.col(k) = (fp - fm) / (2 * h);
    }
    return 0;
  }
};

std::string fmt_model(FitModel m) {
  return std::string(fit_model_name(m));
}

}  // namespace

Sweep sweep_from_polar_u(std::span<const double> freq_hz, std::span<const cplx> z_ohm,
                         std::span<const double> u_mag_rel, std::span<const double> u_theta_rad) {
  const std::size_t n = freq_hz.size();
  if (z_ohm.size() != n || u_mag_rel.size() != n || u_theta_rad.size() != n)
    throw FitError("fit.bad_input", "sweep arrays differ in length",
                   "give one frequency, impedance and pair of uncertainties per point");
  Sweep s;
  for (std::size_t i = 0; i < n; ++i) {
    const double mag = std::abs(z_ohm[i]), t = std::arg(z_ohm[i]);
    const double a = mag * u_mag_rel[i], b = mag * u_theta_rad[i];
    s.freq_hz.push_back(freq_hz[i]);
    s.z_ohm.push_back(z_ohm[i]);
    s.u_re_ohm.push_back(std::hypot(std::cos(t) * a, std::sin(t) * b));
    s.u_im_ohm.push_back(std::hypot(std::sin(t) * a, std::cos(t) * b));
  }
  return s;
}

std::string_view fit_model_name(FitModel model) {
  return spec(model).name;
}

std::optional<FitModel> parse_fit_model(std::string_view name) {
  for (const ModelSpec& s : specs())
    if (name == s.name) return s.model;
  return std::nullopt;
}

std::string_view fit_family_name(FitFamily family) {
  switch (family) {
    case FitFamily::capacitor:
      return "capacitor";
    case FitFamily::inductor:
      return "inductor";
    case FitFamily::resistor:
      return "resistor";
    case FitFamily::driver:
      return "driver";
  }
  return "";
}

FitFamily fit_model_family(FitModel model) {
  return spec(model).family;
}

std::vector<FitModel> fit_candidates(FitFamily family) {
  std::vector<FitModel> out;
  for (const ModelSpec& s : specs())
    if (s.family == family) out.push_back(s.model);
  return out;
}

std::vector<std::string> fit_parameter_names(FitModel model) {
  std::vector<std::string> out;
  for (const ParamInfo& p : spec(model).params)
    out.emplace_back(p.name);
  return out;
}

cplx model_impedance(FitModel model, std::span<const double> params, double freq_hz) {
  if (params.size() != spec(model).params.size())
    throw FitError("fit.bad_input", "wrong number of parameters for model " + fmt_model(model),
                   "give them in the order of fit_parameter_names");
  return eval(model, params.data(), freq_hz);
}

const FitValue& CircuitFit::get(std::string_view name) const {
  for (const FitValue& v : params)
    if (v.name == name) return v;
  for (const FitValue& v : derived)
    if (v.name == name) return v;
  if (srf && name == srf->name) return *srf;
  throw FitError("fit.bad_input",
                 "model " + fmt_model(model) + " has no value '" + std::string(name) + "'",
                 "use a name from fit_parameter_names");
}

cplx CircuitFit::z_at(double f_hz) const {
  std::vector<double> p;
  for (const FitValue& v : params)
    p.push_back(v.value);
  return eval(model, p.data(), f_hz);
}

std::vector<cplx> CircuitFit::curve(std::span<const double> f) const {
  std::vector<cplx> out;
  out.reserve(f.size());
  for (double x : f)
    out.push_back(z_at(x));
  return out;
}

CircuitFit fit_model(const Sweep& sweep, FitModel model) {
  const ModelSpec& sp = spec(model);
  check_sweep(sweep);
  const std::size_t n = sweep.freq_hz.size();
  const std::size_t k = sp.params.size();
  if (n < k + 2)
    throw FitError(
        "fit.too_few_points",
        "model " + fmt_model(model) + " has " + std::to_string(k) +
            " parameters but the sweep has only " + std::to_string(n) + " points",
        "sweep at least " + std::to_string(k + 2) + " frequencies (60 log-spaced points is usual)");

  const std::vector<double> p0 = start_values(sweep, model);
  Eigen::VectorXd x(static_cast<Eigen::Index>(k));
  for (std::size_t i = 0; i < k; ++i)
    x(static_cast<Eigen::Index>(i)) = std::log(p0[i]);
  Residuals fn(sweep, model, x);
  Eigen::LevenbergMarquardt<Residuals> lm(fn);
  lm.setXtol(1e-8);
  lm.setFtol(1e-10);
  lm.setMaxfev(400 * static_cast<Eigen::Index>(k + 1));
  const auto status = lm.minimize(x);
  using namespace Eigen::LevenbergMarquardtSpace;
  if (status == TooManyFunctionEvaluation || status == ImproperInputParameters ||
      status == UserAsked)
    throw FitError("fit.no_convergence",
                   "the " + fmt_model(model) + " fit did not converge (status " +
                       std::to_string(static_cast<int>(status)) + ")",
                   "check that the sweep shows the part (no open or shorted points), or try "
                   "another model");

  for (Eigen::Index i = 0; i < x.size(); ++i) {
    if (std::abs(x(i) - fn.x0(i)) > kRunaway || !std::isfinite(x(i)))
      throw FitError("fit.absurd_result",
                     "the " + fmt_model(model) + " fit drove " +
                         sp.params[static_cast<std::size_t>(i)].name +
                         " more than a million times away from what the data suggest",
                     "the sweep does not show this element: use a simpler model, or sweep "
                     "where the element matters");
  }

  Eigen::VectorXd fvec(2 * static_cast<Eigen::Index>(n));
  fn(x, fvec);
  Eigen::MatrixXd jac(fvec.size(), x.size());
  fn.df(x, jac);
  CircuitFit out;
  out.model = model;
  out.description = sp.description;
  out.chi2 = fvec.squaredNorm();
  out.dof = static_cast<int>(2 * n - k);
  out.chi2_reduced = out.chi2 / out.dof;
  out.iterations = static_cast<int>(lm.iterations());
  if (!std::isfinite(out.chi2))
    throw FitError("fit.no_convergence",
                   "the " + fmt_model(model) + " fit ended on a non-finite misfit",
                   "check the sweep for broken points");

  // Covariance of the log-parameters by SVD of J: a parameter the data cannot pin down
  // shows as a tiny singular value rather than a silent garbage inverse.
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(jac, Eigen::ComputeThinV);
  const Eigen::VectorXd sv = svd.singularValues();
  if (sv.size() == 0 || !(sv(sv.size() - 1) > 1e-10 * sv(0)))
    throw FitError("fit.absurd_result",
                   "the " + fmt_model(model) + " fit cannot tell its parameters apart",
                   "use a simpler model, or sweep over a wider range of frequencies");
  const Eigen::MatrixXd v = svd.matrixV();
  Eigen::MatrixXd cov = v * sv.cwiseInverse().cwiseAbs2().asDiagonal() * v.transpose();
  if (out.chi2_reduced > 1) {
    cov *= out.chi2_reduced;
    out.u_scaled = true;
  }

  const std::vector<double> p = fn.params(x);
  for (std::size_t i = 0; i < k; ++i) {
    const auto ii = static_cast<Eigen::Index>(i);
    out.params.push_back(
        {sp.params[i].name, sp.params[i].unit, p[i], p[i] * std::sqrt(cov(ii, ii))});
  }
  // Derived values: gradient in log space by central differences, u^2 = g^T cov g.
  const std::vector<double> d0 = derive_values(model, p.data());
  if (!d0.empty()) {
    Eigen::MatrixXd g(static_cast<Eigen::Index>(d0.size()), x.size());
    for (Eigen::Index c = 0; c < x.size(); ++c) {
      Eigen::VectorXd xp = x, xm = x;
      xp(c) += 1e-6;
      xm(c) -= 1e-6;
      const auto dp = derive_values(model, fn.params(xp).data());
      const auto dm = derive_values(model, fn.params(xm).data());
      for (std::size_t r = 0; r < d0.size(); ++r)
        g(static_cast<Eigen::Index>(r), c) = (dp[r] - dm[r]) / 2e-6;
    }
    const Eigen::MatrixXd dcov = g * cov * g.transpose();
    for (std::size_t r = 0; r < d0.size(); ++r) {
      const double u = std::sqrt(dcov(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(r)));
      if (sp.has_srf) {
        if (std::isfinite(d0[r])) out.srf = FitValue{"srf", "Hz", d0[r], u};
      } else {
        out.derived.push_back({sp.derived[r].name, sp.derived[r].unit, d0[r], u});
      }
    }
  }

  out.freq_hz = sweep.freq_hz;
  for (std::size_t i = 0; i < n; ++i) {
    out.residual_rel.push_back((eval(model, p.data(), sweep.freq_hz[i]) - sweep.z_ohm[i]) /
                               std::abs(sweep.z_ohm[i]));
  }
  return out;
}

FitSelection fit_best(const Sweep& sweep, std::optional<FitFamily> family) {
  check_sweep(sweep);
  std::vector<FitModel> models;
  if (family) {
    models = fit_candidates(*family);
  } else {
    for (const ModelSpec& s : specs())
      models.push_back(s.model);
  }
  FitSelection sel;
  std::vector<std::optional<CircuitFit>> fits;
  int too_few = 0;
  for (FitModel m : models) {
    FitCandidate c;
    c.model = m;
    try {
      CircuitFit fit = fit_model(sweep, m);
      // An element the data cannot pin down (u above its value: a driver's motional branch
      // fitted to a plain resistor) makes the model a description of noise, not of the part.
      for (const FitValue& v : fit.params) {
        if (!(v.u < std::abs(v.value)))
          throw FitError("fit.undetermined", "the sweep does not determine " + v.name,
                         "use a simpler model");
      }
      c.ok = true;
      c.chi2_reduced = fit.chi2_reduced;
      fits.push_back(std::move(fit));
    } catch (const FitError& e) {
      fits.emplace_back();
      c.error_id = e.id();
      if (e.id() == "fit.too_few_points") ++too_few;
    }
    sel.candidates.push_back(c);
  }
  if (too_few == static_cast<int>(models.size()))
    throw FitError("fit.too_few_points", "the sweep has too few points for any candidate model",
                   "sweep more frequencies (60 log-spaced points is usual)");

  double min_red = std::numeric_limits<double>::infinity();
  for (const FitCandidate& c : sel.candidates)
    if (c.ok) min_red = std::min(min_red, c.chi2_reduced);
  if (!std::isfinite(min_red))
    throw FitError("fit.no_model", "no candidate model could be fitted to the sweep",
                   "check the sweep (wiring, open or shorted part) and the part family");
  sel.dispersion = std::max(1.0, min_red);

  const double n_res = 2.0 * static_cast<double>(sweep.freq_hz.size());
  std::size_t best = 0;
  double best_bic = std::numeric_limits<double>::infinity();
  for (std::size_t i = 0; i < sel.candidates.size(); ++i) {
    FitCandidate& c = sel.candidates[i];
    if (!c.ok) continue;
    const double k = static_cast<double>(fits[i]->params.size());
    c.bic = fits[i]->chi2 / sel.dispersion + k * std::log(n_res);
    if (c.bic < best_bic) {
      best_bic = c.bic;
      best = i;
    }
  }
  sel.best = std::move(*fits[best]);
  return sel;
}

}  // namespace tb::dsp
