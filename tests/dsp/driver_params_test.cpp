#include "dsp/driver_params.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <numbers>
#include <vector>

using tb::dsp::DriverConditions;
using tb::dsp::DriverParams;
using tb::dsp::FitError;
using tb::dsp::FitModel;
using tb::dsp::model_impedance;
using tb::dsp::ts_from_curve;
using tb::dsp::vas_added_mass;
using tb::dsp::vas_closed_box;

namespace {

using cplx = std::complex<double>;
constexpr double kPi = std::numbers::pi;

// Re plus the parallel Res, Ces, Les on a dense log grid (no voice-coil inductance).
void ideal_curve(double re, double res, double ces, double les, std::vector<double>& f,
                 std::vector<cplx>& z) {
  const int n = 4001;
  for (int i = 0; i < n; ++i) {
    const double fi = 10.0 * std::pow(100.0, static_cast<double>(i) / (n - 1));  // 10 Hz-1 kHz
    const double w = 2 * kPi * fi;
    const cplx y = 1.0 / res + cplx(0, w * ces) + 1.0 / cplx(0, w * les);
    f.push_back(fi);
    z.push_back(re + 1.0 / y);
  }
}

}  // namespace

TEST_CASE("The worked driver example: analogue values and the curve's f1, f2", "[driver_params]") {
  // Worked example of references.md [pub/calc] (Thiele 1961/1971; Small, JAES 20, 1972):
  // Re 6 ohm, fs 70.7 Hz, Qms 4.27, Qes 0.34 -> Res 75.35 ohm, Ces 127.56 uF, Les 39.73 mH.
  const double re = 6, fs = 70.7, qms = 4.27, qes = 0.34;
  const double res = re * qms / qes;
  const double ces = qes / (2 * kPi * fs * re);
  const double les = 1 / (std::pow(2 * kPi * fs, 2) * ces);
  CHECK(res == Approx(75.35).margin(0.005));
  CHECK(ces == Approx(127.56e-6).margin(0.005e-6));
  CHECK(les == Approx(39.73e-3).margin(0.005e-3));

  std::vector<double> f;
  std::vector<cplx> z;
  ideal_curve(re, res, ces, les, f, z);
  const DriverConditions cond{"free air", 0.5};
  const DriverParams p = ts_from_curve(f, z, cond, re);  // Re as a meter reads it at DC
  // Same worked example: its curve gives Zmax 81.35 ohm, f1 46.51 Hz, f2 107.48 Hz.
  CHECK(p.zmax_ohm == Approx(81.35).margin(0.01));
  CHECK(p.f1_hz == Approx(46.51).margin(0.01));
  CHECK(p.f2_hz == Approx(107.48).margin(0.01));
  CHECK(p.fs_hz == Approx(70.7).margin(0.01));
  CHECK(p.fpeak_hz == Approx(70.7).margin(0.05));
  CHECK(p.qms == Approx(4.27).margin(0.005));
  CHECK(p.qes == Approx(0.34).margin(0.0005));
  CHECK(p.qts == Approx(4.27 * 0.34 / (4.27 + 0.34)).margin(0.0005));
  CHECK(p.res_ohm == Approx(75.35).margin(0.05));
  CHECK(p.conditions.mounting == "free air");
  CHECK(p.conditions.drive_v_rms == 0.5);
  CHECK(p.method == "curve");

  // Without the DC reading the curve's minimum stands in for Re: at 1 kHz the motional
  // branch still adds 0.15 ohm, so Re reads high and Qes with it.
  const DriverParams no_dc = ts_from_curve(f, z, cond);
  CHECK(no_dc.re_ohm > 6.1);
  CHECK(no_dc.qes > 0.34);
}

TEST_CASE("Vas by added mass and by a closed box agree on one driver", "[driver_params]") {
  // An invented driver from its mechanical values; the two methods must give back its Vas.
  const double re = 6.0, bl = 7.0, mms = 0.025, cms = 0.6e-3, sd = 0.0220;
  const double rho = tb::dsp::kAirDensity_kg_m3, c = tb::dsp::kSpeedOfSound_m_s;
  const double vas = rho * c * c * sd * sd * cms;  // about 41 litres
  DriverParams p;
  p.re_ohm = re;
  p.fs_hz = 1 / (2 * kPi * std::sqrt(mms * cms));
  p.qes = 2 * kPi * p.fs_hz * mms * re / (bl * bl);  // Qes = w_s Mms Re / Bl^2

  const double m_added = 0.010;
  const double f_loaded = 1 / (2 * kPi * std::sqrt((mms + m_added) * cms));
  const auto am = vas_added_mass(p, f_loaded, m_added, sd);
  CHECK(am.mms_kg == Approx(mms).epsilon(1e-9));
  CHECK(am.cms_m_per_n == Approx(cms).epsilon(1e-9));
  CHECK(am.vas_m3 == Approx(vas).epsilon(1e-9));
  CHECK(am.bl_tm == Approx(bl).epsilon(1e-9));

  // Closed box Vb: the box adds stiffness Vas/Vb, so fc = fs sqrt(1 + Vas/Vb) and Qec
  // rises by the same factor (Small, JAES 20, 1972).
  const double vb = 0.020, alpha = vas / vb;
  const auto cb =
      vas_closed_box(p, p.fs_hz * std::sqrt(1 + alpha), p.qes * std::sqrt(1 + alpha), vb);
  CHECK(cb.vas_m3 == Approx(vas).epsilon(1e-9));
  CHECK(cb.vas_m3 == Approx(am.vas_m3).epsilon(1e-9));
  CHECK(cb.vas_m3 == Approx(0.0412).epsilon(0.01));  // rho c^2 Sd^2 Cms by hand

  CHECK_THROWS_AS(vas_added_mass(p, p.fs_hz * 1.1, m_added, sd), FitError);
  CHECK_THROWS_AS(vas_closed_box(p, p.fs_hz * 0.9, p.qes, vb), FitError);
}

TEST_CASE("Driver parameters from a fitted model", "[driver_params]") {
  const std::vector<double> truth{6.2, 0.35e-3, 38.0, 3.8, 0.45};  // Re, Le, fs, Qms, Qes
  tb::dsp::Sweep s;
  for (int i = 0; i < 60; ++i) {
    const double f = 20 * std::pow(1000.0, i / 59.0);
    const cplx z = model_impedance(FitModel::driver_le, truth, f);
    s.freq_hz.push_back(f);
    s.z_ohm.push_back(z);
    s.u_re_ohm.push_back(1e-4 * std::abs(z));
    s.u_im_ohm.push_back(1e-4 * std::abs(z));
  }
  const auto fit = tb::dsp::fit_model(s, FitModel::driver_le);
  const DriverParams p = tb::dsp::ts_from_fit(fit, {"on a baffle", 1.0});
  CHECK(p.method == "fit:driver_le");
  CHECK(p.conditions.mounting == "on a baffle");
  CHECK(p.fs_hz == Approx(38).epsilon(1e-6));
  CHECK(p.qms == Approx(3.8).epsilon(1e-6));
  CHECK(p.qes == Approx(0.45).epsilon(1e-6));
  CHECK(p.u_fs_hz > 0);

  // The curve method on the same sweep is biased a little by Le and by the coarse grid.
  const DriverParams c = ts_from_curve(s.freq_hz, s.z_ohm, {}, 6.2);
  CHECK(c.fs_hz == Approx(38).epsilon(0.02));
  CHECK(c.qes == Approx(0.45).epsilon(0.05));
}

TEST_CASE("A curve without a resonance peak is refused", "[driver_params]") {
  std::vector<double> f;
  std::vector<cplx> z;
  for (int i = 0; i < 20; ++i) {
    f.push_back(100.0 * (i + 1));
    z.push_back({8.0, 2 * kPi * f.back() * 1e-3});  // a coil: |Z| rises to the end
  }
  try {
    ts_from_curve(f, z, {});
    FAIL("no peak accepted");
  } catch (const FitError& e) {
    CHECK(e.id() == "fit.no_peak");
  }
}
