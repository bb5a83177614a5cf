// Outside reference for the equivalent-circuit fits (dsp/circuit_fit.hpp): ngspice solves the
// parts as netlists in AC (1 A into the part, so V = Z), a little multiplicative noise is
// added with a fixed seed, and the fit must give the netlist's element values back.
#include "dsp/circuit_fit.hpp"
#include "dsp/driver_params.hpp"
#include "tests/support/spice.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <numbers>
#include <random>
#include <string>
#include <vector>

using tb::dsp::fit_best;
using tb::dsp::FitFamily;
using tb::dsp::FitModel;
using tb::dsp::FitSelection;
using tb::dsp::Sweep;
using tb::test::spice_value;

namespace {

using cplx = std::complex<double>;
constexpr double kPi = std::numbers::pi;
constexpr double kNoise = 5e-4;  // 0.05 % of |Z| on Re and Im each

// ngspice AC analysis of `body` (the part between node p and ground) driven by 1 A, at n
// log-spaced points, with multiplicative noise; the stated u is the noise's own.
Sweep spice_sweep(const std::string& body, double f_lo, double f_hi, unsigned seed, int n = 60) {
  std::vector<double> f;
  for (int i = 0; i < n; ++i)
    f.push_back(f_lo * std::pow(f_hi / f_lo, i / double(n - 1)));
  const auto pts = tb::test::spice_ac("Idrive 0 p AC 1\n" + body, {"p"}, f);
  std::mt19937 rng(seed);
  std::normal_distribution<double> g(0.0, kNoise);
  Sweep s;
  for (const auto& pt : pts) {
    const cplx z = pt.v.at(0);
    s.freq_hz.push_back(pt.freq_hz);
    s.z_ohm.push_back(z * cplx(1 + g(rng), g(rng)));
    s.u_re_ohm.push_back(kNoise * std::abs(z));
    s.u_im_ohm.push_back(kNoise * std::abs(z));
  }
  return s;
}

double rel_err(double got, double want) {
  return std::abs(got / want - 1);
}

// |Z| of the sweep at its lowest point: where a series loss matters most.
double min_mag(const Sweep& s) {
  double m = std::abs(s.z_ohm.front());
  for (cplx z : s.z_ohm)
    m = std::min(m, std::abs(z));
  return m;
}

std::string describe(const FitSelection& sel) {
  std::string out = std::string(tb::dsp::fit_model_name(sel.best.model)) + ":";
  for (const auto& v : sel.best.params)
    out += " " + v.name + "=" + spice_value(v.value);
  for (const auto& c : sel.candidates)
    out += " | " + std::string(tb::dsp::fit_model_name(c.model)) + " chi2r " +
           (c.ok ? std::to_string(c.chi2_reduced) : c.error_id);
  return out;
}

}  // namespace

TEST_CASE("Crossover film capacitor from ngspice: C and ESR recovered", "[fit][spice]") {
  const Sweep s = spice_sweep("R1 p m 0.05\nL1 m k 20n\nC1 k 0 6.8u\n", 20, 20e3, 1);
  const auto sel = fit_best(s, FitFamily::capacitor);
  INFO(describe(sel));
  CHECK(rel_err(sel.best.value("C"), 6.8e-6) < 0.005);  // reference: ngspice AC analysis
  CHECK(std::abs(sel.best.value("ESR") - 0.05) <=
        0.002 * min_mag(s));  // reference: ngspice AC analysis
}

TEST_CASE("Electrolytic from ngspice: C and ESR recovered, no ESL needed", "[fit][spice]") {
  const Sweep s = spice_sweep("R1 p k 0.12\nC1 k 0 470u\n", 20, 20e3, 2);
  const auto sel = fit_best(s, FitFamily::capacitor);
  INFO(describe(sel));
  CHECK(sel.best.model == FitModel::c_esr);
  CHECK(rel_err(sel.best.value("C"), 470e-6) < 0.005);  // reference: ngspice AC analysis
  CHECK(std::abs(sel.best.value("ESR") - 0.12) <=
        0.002 * min_mag(s));  // reference: ngspice AC analysis
}

TEST_CASE("Air-core coil from ngspice: L and winding R recovered", "[fit][spice]") {
  const Sweep s = spice_sweep("R1 p m 0.42\nL1 m 0 1.5m\nC1 p 0 40p\n", 10, 40e3, 3);
  const auto sel = fit_best(s, FitFamily::inductor);
  INFO(describe(sel));
  CHECK(rel_err(sel.best.value("L"), 1.5e-3) < 0.005);  // reference: ngspice AC analysis
  CHECK(rel_err(sel.best.value("R"), 0.42) < 0.005);    // reference: ngspice AC analysis
}

TEST_CASE("Iron-core coil with core loss from ngspice: L, R and Rp recovered", "[fit][spice]") {
  const Sweep s = spice_sweep("R1 p m 0.25\nL1 m 0 3.3m\nR2 m 0 800\n", 20, 20e3, 4);
  const auto sel = fit_best(s, FitFamily::inductor);
  INFO(describe(sel));
  REQUIRE((sel.best.model == FitModel::l_r_rp || sel.best.model == FitModel::l_r_rp_cp));
  CHECK(rel_err(sel.best.value("L"), 3.3e-3) < 0.005);  // reference: ngspice AC analysis
  CHECK(rel_err(sel.best.value("R"), 0.25) < 0.005);    // reference: ngspice AC analysis
  CHECK(rel_err(sel.best.value("Rp"), 800) < 0.02);     // reference: ngspice AC analysis
}

TEST_CASE("Wirewound resistor from ngspice: R and series L recovered", "[fit][spice]") {
  const Sweep s = spice_sweep("R1 p m 4.7\nL1 m 0 2u\n", 20, 20e3, 5);
  const auto sel = fit_best(s, FitFamily::resistor);
  INFO(describe(sel));
  CHECK(sel.best.model == FitModel::r_ls);
  CHECK(rel_err(sel.best.value("R"), 4.7) < 0.005);   // reference: ngspice AC analysis
  CHECK(rel_err(sel.best.value("Ls"), 2e-6) < 0.05);  // reference: ngspice AC analysis
}

TEST_CASE("Woofer from ngspice: Re, fs and the Q's recovered", "[fit][spice]") {
  // Re 6.2 ohm, Le 0.35 mH + (L2 0.9 mH || R2 3.5 ohm), fs 38 Hz, Qms 3.8, Qes 0.45; the
  // motional branch from Small (JAES 20, 1972): Res = Re Qms/Qes, Ces = Qes/(2 pi fs Re),
  // Les = 1/((2 pi fs)^2 Ces).
  const double re = 6.2, fs = 38, qms = 3.8, qes = 0.45;
  const double ces = qes / (2 * kPi * fs * re);
  const double les = 1 / (std::pow(2 * kPi * fs, 2) * ces);
  const std::string body = "R1 p a 6.2\nL1 a b 0.35m\nL2 b c 0.9m\nR2 b c 3.5\n" +
                           ("Rm c 0 " + spice_value(re * qms / qes) + "\n") +
                           ("Cm c 0 " + spice_value(ces) + "\n") +
                           ("Lm c 0 " + spice_value(les) + "\n");
  const Sweep s = spice_sweep(body, 10, 20e3, 6);
  const auto sel = fit_best(s, FitFamily::driver);
  INFO(describe(sel));
  CHECK(sel.best.model == FitModel::driver_l2r2);
  const auto p = tb::dsp::ts_from_fit(sel.best, {"free air", 0.1});
  CHECK(rel_err(p.re_ohm, re) < 0.005);  // reference: ngspice AC analysis
  CHECK(rel_err(p.fs_hz, fs) < 0.005);   // reference: ngspice AC analysis
  CHECK(rel_err(p.qms, qms) < 0.03);     // reference: ngspice AC analysis
  CHECK(rel_err(p.qes, qes) < 0.03);     // reference: ngspice AC analysis
  CHECK(p.conditions.mounting == "free air");
}
