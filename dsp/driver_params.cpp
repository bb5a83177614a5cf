#include "dsp/driver_params.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <vector>

namespace tb::dsp {
namespace {

constexpr double kPi = std::numbers::pi;

bool finite_positive(double v) {
  return v > 0 && std::isfinite(v);
}

void require(bool ok, const std::string& what, const std::string& hint) {
  if (!ok) throw FitError("fit.bad_input", what, hint);
}

// Frequency where |Z| crosses `level` between points a and b, linear in log f.
double crossing(double fa, double ma, double fb, double mb, double level) {
  const double t = (level - ma) / (mb - ma);
  return std::exp(std::log(fa) + t * (std::log(fb) - std::log(fa)));
}

}  // namespace

DriverParams ts_from_curve(std::span<const double> freq_hz,
                           std::span<const std::complex<double>> z_ohm,
                           const DriverConditions& conditions, std::optional<double> re_ohm) {
  const std::size_t n = freq_hz.size();
  require(z_ohm.size() == n, "frequency and impedance arrays differ in length",
          "give one impedance per frequency");
  require(n >= 5, "the curve has fewer than 5 points", "sweep densely around the resonance");
  std::vector<std::size_t> idx(n);
  for (std::size_t i = 0; i < n; ++i) {
    require(finite_positive(freq_hz[i]) && std::isfinite(std::abs(z_ohm[i])),
            "a frequency is not positive or an impedance is not finite", "drop the broken point");
    idx[i] = i;
  }
  std::sort(idx.begin(), idx.end(),
            [&](std::size_t a, std::size_t b) { return freq_hz[a] < freq_hz[b]; });
  std::vector<double> f(n), m(n);
  for (std::size_t i = 0; i < n; ++i) {
    f[i] = freq_hz[idx[i]];
    m[i] = std::abs(z_ohm[idx[i]]);
  }

  DriverParams out;
  out.method = "curve";
  out.conditions = conditions;
  out.re_ohm = re_ohm ? *re_ohm : *std::min_element(m.begin(), m.end());
  require(finite_positive(out.re_ohm), "Re is not a positive number",
          "give the voice coil's DC resistance in ohms");

  // The highest interior local maximum: above a few kHz the voice-coil inductance can lift
  // |Z| at the top of the sweep beyond the resonance peak.
  std::size_t peak = 0;
  for (std::size_t i = 1; i + 1 < n; ++i)
    if (m[i] >= m[i - 1] && m[i] >= m[i + 1] && (peak == 0 || m[i] > m[peak])) peak = i;
  if (peak == 0)
    throw FitError("fit.no_peak", "|Z| has no resonance peak inside the sweep",
                   "sweep from well below to well above the driver's resonance");
  // Parabola through the three points around the peak, in log f.
  const double x0 = std::log(f[peak - 1]), x1 = std::log(f[peak]), x2 = std::log(f[peak + 1]);
  const double y0 = m[peak - 1], y1 = m[peak], y2 = m[peak + 1];
  const double d01 = (y1 - y0) / (x1 - x0), d12 = (y2 - y1) / (x2 - x1);
  const double a = (d12 - d01) / (x2 - x0);
  const double b = d01 - a * (x0 + x1);
  double xp = x1, zmax = y1;
  if (a < 0) {
    xp = std::clamp(-b / (2 * a), x0, x2);
    zmax = std::max(y1, y0 + (xp - x0) * (d01 + a * (xp - x1)));
  }
  out.fpeak_hz = std::exp(xp);
  out.zmax_ohm = zmax;
  out.r0 = zmax / out.re_ohm;
  if (!(out.r0 > 1.05))
    throw FitError("fit.no_peak", "the |Z| peak is less than 5 % above Re",
                   "check Re and that the sweep holds the driver's resonance");

  const double level = out.re_ohm * std::sqrt(out.r0);
  std::size_t i = peak;
  while (i > 0 && m[i - 1] >= level)
    --i;
  if (i == 0)
    throw FitError("fit.no_peak", "|Z| does not fall to Re sqrt(r0) below the peak",
                   "start the sweep lower (about fs/3)");
  out.f1_hz = crossing(f[i - 1], m[i - 1], f[i], m[i], level);
  i = peak;
  while (i + 1 < n && m[i + 1] >= level)
    ++i;
  if (i + 1 == n)
    throw FitError("fit.no_peak", "|Z| does not fall to Re sqrt(r0) above the peak",
                   "extend the sweep upwards (about 3 fs)");
  out.f2_hz = crossing(f[i], m[i], f[i + 1], m[i + 1], level);

  out.fs_hz = std::sqrt(out.f1_hz * out.f2_hz);
  out.qms = out.fs_hz * std::sqrt(out.r0) / (out.f2_hz - out.f1_hz);
  out.qes = out.qms / (out.r0 - 1);
  out.qts = out.qms * out.qes / (out.qms + out.qes);
  out.res_ohm = out.re_ohm * out.qms / out.qes;
  out.ces_f = out.qes / (2 * kPi * out.fs_hz * out.re_ohm);
  out.les_h = 1.0 / (std::pow(2 * kPi * out.fs_hz, 2) * out.ces_f);
  return out;
}

DriverParams ts_from_fit(const CircuitFit& fit, const DriverConditions& conditions) {
  require(fit.model == FitModel::driver_le || fit.model == FitModel::driver_l2r2,
          "the fit is not of a driver model", "fit driver_le or driver_l2r2");
  DriverParams out;
  out.method = "fit:" + std::string(fit_model_name(fit.model));
  out.conditions = conditions;
  out.re_ohm = fit.value("Re");
  out.u_re_ohm = fit.get("Re").u;
  out.fs_hz = fit.value("fs");
  out.u_fs_hz = fit.get("fs").u;
  out.qms = fit.value("Qms");
  out.u_qms = fit.get("Qms").u;
  out.qes = fit.value("Qes");
  out.u_qes = fit.get("Qes").u;
  out.qts = fit.value("Qts");
  out.u_qts = fit.get("Qts").u;
  out.res_ohm = fit.value("Res");
  out.ces_f = fit.value("Ces");
  out.les_h = fit.value("Les");
  return out;
}

VasResult vas_added_mass(const DriverParams& p, double fs_loaded_hz, double added_mass_kg,
                         double sd_m2, double rho_kg_m3, double c_m_s) {
  require(finite_positive(p.fs_hz) && finite_positive(p.qes) && finite_positive(p.re_ohm),
          "the driver's fs, Qes and Re must be positive", "measure the bare driver first");
  require(finite_positive(fs_loaded_hz) && fs_loaded_hz < p.fs_hz,
          "the resonance with the added mass must lie below the bare fs",
          "measure again with the mass fixed to the cone");
  require(finite_positive(added_mass_kg) && finite_positive(sd_m2) && finite_positive(rho_kg_m3) &&
              finite_positive(c_m_s),
          "added mass, cone area, air density and speed of sound must be positive",
          "enter the mass in kg and Sd in m^2");
  VasResult out;
  out.method = "added mass";
  out.rho_kg_m3 = rho_kg_m3;
  out.c_m_s = c_m_s;
  out.mms_kg = added_mass_kg / (std::pow(p.fs_hz / fs_loaded_hz, 2) - 1);
  out.cms_m_per_n = 1.0 / (std::pow(2 * kPi * p.fs_hz, 2) * out.mms_kg);
  out.vas_m3 = rho_kg_m3 * c_m_s * c_m_s * sd_m2 * sd_m2 * out.cms_m_per_n;
  out.bl_tm = std::sqrt(2 * kPi * p.fs_hz * out.mms_kg * p.re_ohm / p.qes);
  return out;
}

VasResult vas_closed_box(const DriverParams& p, double fc_hz, double qec, double vb_m3) {
  require(finite_positive(p.fs_hz) && finite_positive(p.qes),
          "the driver's fs and Qes must be positive", "measure the bare driver first");
  require(finite_positive(fc_hz) && finite_positive(qec) && finite_positive(vb_m3),
          "fc, Qec and the box volume must be positive", "enter Vb in m^3");
  const double ratio = fc_hz * qec / (p.fs_hz * p.qes);
  require(ratio > 1, "fc Qec is not above fs Qes: the box did not stiffen the driver",
          "check that the box is sealed and the driver measured in it");
  VasResult out;
  out.method = "closed box";
  out.vas_m3 = vb_m3 * (ratio - 1);
  return out;
}

}  // namespace tb::dsp
