#include "dsp/circuit_fit.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <numbers>
#include <random>
#include <vector>

using tb::dsp::CircuitFit;
using tb::dsp::fit_best;
using tb::dsp::fit_model;
using tb::dsp::FitError;
using tb::dsp::FitFamily;
using tb::dsp::FitModel;
using tb::dsp::model_impedance;
using tb::dsp::Sweep;

namespace {

using cplx = std::complex<double>;

std::vector<double> log_freqs(double f_lo, double f_hi, int n) {
  std::vector<double> f;
  for (int i = 0; i < n; ++i)
    f.push_back(f_lo * std::pow(f_hi / f_lo, static_cast<double>(i) / (n - 1)));
  return f;
}

// The model's curve with Gaussian noise of standard deviation u_rel * |Z| on Re and Im
// each; the sweep states exactly that u, so the fit's uncertainties should cover the truth.
Sweep synthetic(FitModel m, const std::vector<double>& p, double u_rel, unsigned seed,
                double f_lo = 20, double f_hi = 20e3, int n = 60) {
  std::mt19937 rng(seed);
  std::normal_distribution<double> g(0.0, 1.0);
  Sweep s;
  for (double f : log_freqs(f_lo, f_hi, n)) {
    const cplx z = model_impedance(m, p, f);
    const double u = u_rel * std::abs(z);
    s.freq_hz.push_back(f);
    s.z_ohm.push_back(z + cplx(u * g(rng), u * g(rng)));
    s.u_re_ohm.push_back(u);
    s.u_im_ohm.push_back(u);
  }
  return s;
}

// |fitted - truth| within k standard uncertainties.
bool within(const CircuitFit& fit, const char* name, double truth, double k) {
  const auto& v = fit.get(name);
  return std::abs(v.value - truth) <= k * v.u;
}

}  // namespace

TEST_CASE("A capacitor with visible ESL picks the ESL model and recovers its values",
          "[circuit_fit]") {
  const std::vector<double> truth{1e-6, 0.1,
                                  1e-6};  // C, ESR, ESL: |X_L| is 1.6 % of |X_C| at 20 kHz
  const Sweep s = synthetic(FitModel::c_esr_esl, truth, 1e-3, 1);
  const auto sel = fit_best(s, FitFamily::capacitor);
  REQUIRE(sel.best.model == FitModel::c_esr_esl);
  REQUIRE(sel.candidates.size() == 2);
  CHECK(sel.candidates[0].chi2_reduced > 3 * sel.candidates[1].chi2_reduced);
  CHECK(within(sel.best, "C", truth[0], 4));
  CHECK(within(sel.best, "ESR", truth[1], 4));
  CHECK(within(sel.best, "ESL", truth[2], 4));
  CHECK(sel.best.get("C").u / truth[0] < 1e-3);
  REQUIRE(sel.best.srf.has_value());
  // 159 kHz, eight times above the sweep: known only to its (large) uncertainty.
  CHECK(std::abs(sel.best.srf->value - 1.0 / (2 * std::numbers::pi * 1e-6)) <= 4 * sel.best.srf->u);
  CHECK(sel.best.chi2_reduced == Approx(1).margin(0.35));
  CHECK(sel.best.residual_rel.size() == 60);
  CHECK(std::abs(sel.best.z_at(1000) - model_impedance(FitModel::c_esr_esl, truth, 1000)) <
        2e-3 * std::abs(sel.best.z_at(1000)));
}

TEST_CASE("A capacitor without ESL picks the simpler model", "[circuit_fit]") {
  const std::vector<double> truth{470e-6, 0.12};
  int simple = 0;
  for (unsigned seed = 1; seed <= 10; ++seed) {
    const auto sel = fit_best(synthetic(FitModel::c_esr, truth, 5e-4, seed), FitFamily::capacitor);
    if (sel.best.model == FitModel::c_esr) ++simple;
  }
  // BIC keeps an extra element only when chi2 drops by ln(120) = 4.8: pure noise does that
  // about 3 % of the time (chi-squared with 1 degree of freedom above 4.8).
  CHECK(simple >= 9);
}

TEST_CASE("Uncertainties of the fitted values cover the truth about 68 % of the time",
          "[circuit_fit]") {
  const std::vector<double> truth{6.8e-6, 0.05, 2e-7};
  int n = 0, c_in = 0, esr_in = 0, esl_in = 0;
  for (unsigned seed = 100; seed < 300; ++seed) {
    const CircuitFit fit =
        fit_model(synthetic(FitModel::c_esr_esl, truth, 1e-3, seed), FitModel::c_esr_esl);
    ++n;
    c_in += within(fit, "C", truth[0], 1);
    esr_in += within(fit, "ESR", truth[1], 1);
    esl_in += within(fit, "ESL", truth[2], 1);
  }
  // 200 trials: a binomial with p = 0.683 has a standard deviation of 3.3 %.
  for (int in : {c_in, esr_in, esl_in}) {
    CHECK(static_cast<double>(in) / n > 0.58);
    CHECK(static_cast<double>(in) / n < 0.78);
  }
}

TEST_CASE("An iron-core coil picks the core-loss model", "[circuit_fit]") {
  const std::vector<double> truth{3.3e-3, 0.25, 800.0};  // L, R, Rp across L
  const auto sel = fit_best(synthetic(FitModel::l_r_rp, truth, 5e-4, 7), FitFamily::inductor);
  REQUIRE((sel.best.model == FitModel::l_r_rp || sel.best.model == FitModel::l_r_rp_cp));
  CHECK(within(sel.best, "L", truth[0], 4));
  CHECK(within(sel.best, "R", truth[1], 4));
  CHECK(within(sel.best, "Rp", truth[2], 4));
}

TEST_CASE("A coil with winding capacitance gives its self-resonance", "[circuit_fit]") {
  const std::vector<double> truth{10e-3, 2.0, 2e-9};  // SRF ~ 35.6 kHz, inside the sweep
  const auto sel =
      fit_best(synthetic(FitModel::l_r_cp, truth, 5e-4, 8, 10, 40e3), FitFamily::inductor);
  REQUIRE(sel.best.model == FitModel::l_r_cp);
  REQUIRE(sel.best.srf.has_value());
  const double w2 = 1.0 / (truth[0] * truth[2]) - std::pow(truth[1] / truth[0], 2);
  const double srf = std::sqrt(w2) / (2 * std::numbers::pi);
  CHECK(std::abs(sel.best.srf->value - srf) <= 4 * sel.best.srf->u);
  CHECK(within(sel.best, "Cp", truth[2], 4));
}

TEST_CASE("Resistors: series L and parallel C are told apart", "[circuit_fit]") {
  const auto wirewound =
      fit_best(synthetic(FitModel::r_ls, {4.7, 2e-6}, 5e-4, 3), FitFamily::resistor);
  CHECK(wirewound.best.model == FitModel::r_ls);
  CHECK(within(wirewound.best, "Ls", 2e-6, 4));
  const auto high = fit_best(synthetic(FitModel::r_cp, {100e3, 20e-12}, 5e-4, 4), std::nullopt);
  CHECK(high.best.model == FitModel::r_cp);
  CHECK(within(high.best, "R", 100e3, 4));
  CHECK(high.candidates.size() == 11);
}

TEST_CASE("A driver with a lossy voice coil picks the L2R2 model", "[circuit_fit]") {
  // Re, Le, L2, R2, fs, Qms, Qes (an invented woofer)
  const std::vector<double> truth{6.2, 0.35e-3, 0.9e-3, 3.5, 38.0, 3.8, 0.45};
  const auto sel = fit_best(synthetic(FitModel::driver_l2r2, truth, 5e-4, 5), FitFamily::driver);
  REQUIRE(sel.best.model == FitModel::driver_l2r2);
  CHECK(within(sel.best, "Re", truth[0], 4));
  CHECK(within(sel.best, "fs", truth[4], 4));
  CHECK(within(sel.best, "Qms", truth[5], 4));
  CHECK(within(sel.best, "Qes", truth[6], 4));
  const double qts = truth[5] * truth[6] / (truth[5] + truth[6]);
  CHECK(within(sel.best, "Qts", qts, 4));
  CHECK(sel.best.value("Res") == Approx(6.2 * 3.8 / 0.45).epsilon(0.01));
}

TEST_CASE("Understated uncertainties are scaled by the reduced chi-squared", "[circuit_fit]") {
  const std::vector<double> truth{1e-6, 0.1, 1e-6};
  Sweep s = synthetic(FitModel::c_esr_esl, truth, 1e-3, 11);
  const CircuitFit honest = fit_model(s, FitModel::c_esr_esl);
  for (double& u : s.u_re_ohm)
    u /= 10;
  for (double& u : s.u_im_ohm)
    u /= 10;
  const CircuitFit scaled = fit_model(s, FitModel::c_esr_esl);
  CHECK(scaled.u_scaled);
  CHECK(scaled.chi2_reduced == Approx(100 * honest.chi2_reduced).epsilon(0.01));
  // Same points, same weights up to a factor: the scaled u equals the honest one.
  CHECK(scaled.get("C").u == Approx(honest.get("C").u).epsilon(0.2));
}

TEST_CASE("Polar uncertainties become Re and Im uncertainties", "[circuit_fit]") {
  const std::vector<double> f{100, 200};
  const std::vector<cplx> z{{10, 0}, {0, -10}};
  const std::vector<double> u_rel{1e-3, 1e-3}, u_t{2e-3, 2e-3};
  const Sweep s = tb::dsp::sweep_from_polar_u(f, z, u_rel, u_t);
  CHECK(s.u_re_ohm[0] == Approx(0.01));  // along Z: the magnitude's u
  CHECK(s.u_im_ohm[0] == Approx(0.02));  // across Z: |Z| times the phase's u
  CHECK(s.u_re_ohm[1] == Approx(0.02));
  CHECK(s.u_im_ohm[1] == Approx(0.01));
}

TEST_CASE("Fit errors carry stable ids", "[circuit_fit]") {
  Sweep s = synthetic(FitModel::c_esr, {1e-6, 0.1}, 1e-3, 2, 100, 1000, 4);
  try {
    fit_model(s, FitModel::c_esr_esl);
    FAIL("4 points fit 3 parameters");
  } catch (const FitError& e) {
    CHECK(e.id() == "fit.too_few_points");
    CHECK(!e.hint().empty());
  }
  Sweep bad = synthetic(FitModel::c_esr, {1e-6, 0.1}, 1e-3, 2);
  bad.u_im_ohm[5] = 0;
  try {
    fit_best(bad, FitFamily::capacitor);
    FAIL("zero uncertainty accepted");
  } catch (const FitError& e) {
    CHECK(e.id() == "fit.bad_input");
  }
  bad = synthetic(FitModel::c_esr, {1e-6, 0.1}, 1e-3, 2);
  bad.freq_hz.pop_back();
  CHECK_THROWS_AS(fit_model(bad, FitModel::c_esr), FitError);
  const CircuitFit fit =
      fit_model(synthetic(FitModel::c_esr, {1e-6, 0.1}, 1e-3, 2), FitModel::c_esr);
  CHECK_THROWS_AS(fit.get("ESL"), FitError);
  // A resistor has no peak for the driver's motional branch to sit on.
  const auto sel = fit_best(synthetic(FitModel::r, {8.0}, 1e-3, 2), std::nullopt);
  CHECK(sel.best.model == FitModel::r);
}
