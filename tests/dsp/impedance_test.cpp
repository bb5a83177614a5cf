#include "dsp/impedance.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <initializer_list>
#include <limits>
#include <numbers>
#include <random>
#include <vector>

using tb::dsp::derive;
using tb::dsp::detect_kind;
using tb::dsp::ImpedanceValues;
using tb::dsp::PartKind;

namespace {

constexpr double kPi = std::numbers::pi;

std::complex<double> capacitor(double c_f, double esr_ohm, double f_hz) {
  return {esr_ohm, -1.0 / (2.0 * kPi * f_hz * c_f)};
}

std::complex<double> inductor(double l_h, double rs_ohm, double f_hz) {
  return {rs_ohm, 2.0 * kPi * f_hz * l_h};
}

bool any_nan(const ImpedanceValues& v) {
  for (double x : {v.freq_hz, v.r_ohm, v.x_ohm, v.mag_ohm, v.theta_deg, v.cs_f, v.cp_f, v.ls_h,
                   v.lp_h, v.rp_ohm, v.d, v.q}) {
    if (std::isnan(x)) return true;
  }
  return false;
}

}  // namespace

// Worked example, references.md "Impedance identities" (Nahvi & Edminister, Schaum's Outline
// of Electric Circuits) [calc]: 100 nF with ESR 15.9155 ohm at 1 kHz -> D = 0.0100,
// Cp = 99.990 nF, Rp = 159.17 kohm. Checked to the digits printed there.
TEST_CASE("derive: 100 nF with 15.9155 ohm ESR at 1 kHz", "[impedance]") {
  const double f = 1000.0;
  const double c = 100e-9;
  const double esr = 15.9155;
  const ImpedanceValues v = derive(capacitor(c, esr, f), f);

  CHECK(v.freq_hz == f);
  CHECK(v.r_ohm == esr);
  CHECK(v.cs_f == Approx(c).epsilon(1e-12));
  CHECK(std::abs(v.d - 0.0100) <= 0.00005);
  CHECK(std::abs(v.cp_f * 1e9 - 99.990) <= 0.0005);
  CHECK(std::abs(v.rp_ohm / 1e3 - 159.17) <= 0.005);
  CHECK(v.ls_h == 0.0);
  CHECK(v.lp_h == 0.0);

  // D = tan(delta) = Rs / |Xs| = w Cs Rs (same source), re-derived from the part values.
  const double w = 2.0 * kPi * f;
  CHECK(v.d == Approx(w * c * esr).epsilon(1e-12));
  CHECK(v.q == Approx(1.0 / (w * c * esr)).epsilon(1e-12));
  // Loss angle: theta = -(90 deg - delta) for a capacitor, delta = atan(D).
  CHECK(v.theta_deg == Approx(std::atan(v.d) * 180.0 / kPi - 90.0).epsilon(1e-12));
  CHECK(v.mag_ohm == Approx(std::hypot(esr, 1.0 / (w * c))).epsilon(1e-14));
}

// Worked example, references.md "Impedance identities" (Nahvi & Edminister) [calc]:
// 1 mH with Rs = 2 ohm at 1 kHz -> Q = 3.1416, Lp = 1.10132 mH, Rp = 21.739 ohm.
TEST_CASE("derive: 1 mH with 2 ohm winding resistance at 1 kHz", "[impedance]") {
  const double f = 1000.0;
  const ImpedanceValues v = derive(inductor(1e-3, 2.0, f), f);

  CHECK(v.ls_h == Approx(1e-3).epsilon(1e-12));
  CHECK(std::abs(v.q - 3.1416) <= 0.00005);
  CHECK(std::abs(v.lp_h * 1e3 - 1.10132) <= 0.000005);
  CHECK(std::abs(v.rp_ohm - 21.739) <= 0.0005);
  CHECK(v.cs_f == 0.0);
  CHECK(v.cp_f == 0.0);
  // Q = w Ls / Rs (same source), re-derived.
  CHECK(v.q == Approx(2.0 * kPi * f * 1e-3 / 2.0).epsilon(1e-12));
  CHECK(v.theta_deg == Approx(std::atan(v.q) * 180.0 / kPi).epsilon(1e-12));
}

// Series/parallel identities at the test frequency (Nahvi & Edminister, via references.md):
// D = w Cs Rs = 1/(w Cp Rp), Cp = Cs/(1+D^2), Rp = Rs(1+Q^2); Q = w Ls/Rs = Rp/(w Lp),
// Lp = Ls(1+1/Q^2). Random parts over the audio band, with losses from tiny to large.
TEST_CASE("derive: series/parallel identities hold for random parts", "[impedance]") {
  std::mt19937_64 rng(20240611);
  std::uniform_real_distribution<double> u01(0.0, 1.0);
  auto log_uniform = [&](double lo, double hi) { return lo * std::pow(hi / lo, u01(rng)); };

  for (int i = 0; i < 300; ++i) {
    const double f = log_uniform(10.0, 40000.0);
    const double w = 2.0 * kPi * f;
    const double loss = log_uniform(1e-5, 3.0);  // D of the capacitor, 1/Q of the inductor

    const double cs = log_uniform(1e-12, 0.1);
    const double esr = loss / (w * cs);
    const ImpedanceValues c = derive(capacitor(cs, esr, f), f);
    INFO("capacitor " << cs << " F, ESR " << esr << " ohm, " << f << " Hz");
    const double d = w * cs * esr;
    CHECK(c.d == Approx(d).epsilon(1e-9));
    CHECK(c.cs_f == Approx(cs).epsilon(1e-12));
    CHECK(c.cp_f == Approx(cs / (1.0 + d * d)).epsilon(1e-12));
    CHECK(c.rp_ohm == Approx(esr * (1.0 + 1.0 / (d * d))).epsilon(1e-12));
    CHECK(c.d == Approx(1.0 / (w * c.cp_f * c.rp_ohm)).epsilon(1e-12));
    CHECK(c.ls_h == 0.0);
    CHECK(c.lp_h == 0.0);

    const double ls = log_uniform(1e-7, 10.0);
    const double rs = loss * w * ls;
    const ImpedanceValues l = derive(inductor(ls, rs, f), f);
    INFO("inductor " << ls << " H, Rs " << rs << " ohm, " << f << " Hz");
    const double q = w * ls / rs;
    CHECK(l.q == Approx(q).epsilon(1e-9));
    CHECK(l.ls_h == Approx(ls).epsilon(1e-12));
    CHECK(l.lp_h == Approx(ls * (1.0 + 1.0 / (q * q))).epsilon(1e-12));
    CHECK(l.rp_ohm == Approx(rs * (1.0 + q * q)).epsilon(1e-12));
    CHECK(l.q == Approx(l.rp_ohm / (w * l.lp_h)).epsilon(1e-12));
    CHECK(l.cs_f == 0.0);
    CHECK(l.cp_f == 0.0);
  }
}

TEST_CASE("derive: zero reactance or zero resistance give infinities, never NaN", "[impedance]") {
  const double inf = std::numeric_limits<double>::infinity();

  SECTION("pure resistor: X == 0") {
    const ImpedanceValues v = derive({100.0, 0.0}, 1000.0);
    CHECK_FALSE(any_nan(v));
    CHECK(v.d == inf);
    CHECK(v.q == 0.0);
    CHECK(v.rp_ohm == 100.0);
    CHECK(v.theta_deg == 0.0);
    CHECK(v.cs_f == 0.0);
    CHECK(v.cp_f == 0.0);
    CHECK(v.ls_h == 0.0);
    CHECK(v.lp_h == 0.0);
  }
  SECTION("ideal capacitor: R == 0") {
    const ImpedanceValues v = derive(capacitor(1e-6, 0.0, 1000.0), 1000.0);
    CHECK_FALSE(any_nan(v));
    CHECK(v.q == inf);
    CHECK(v.rp_ohm == inf);
    CHECK(v.d == 0.0);
    CHECK(v.theta_deg == Approx(-90.0).epsilon(1e-15));
    CHECK(v.cp_f == Approx(1e-6).epsilon(1e-12));  // no loss: Cp == Cs
  }
  SECTION("ideal inductor: R == 0") {
    const ImpedanceValues v = derive(inductor(1e-3, 0.0, 50.0), 50.0);
    CHECK_FALSE(any_nan(v));
    CHECK(v.q == inf);
    CHECK(v.rp_ohm == inf);
    CHECK(v.theta_deg == Approx(90.0).epsilon(1e-15));
    CHECK(v.lp_h == Approx(1e-3).epsilon(1e-12));
  }
  SECTION("short: Z == 0") {
    const ImpedanceValues v = derive({0.0, 0.0}, 1000.0);
    CHECK_FALSE(any_nan(v));
    CHECK(v.d == inf);
    CHECK(v.q == inf);
    CHECK(v.rp_ohm == inf);
    CHECK(v.mag_ohm == 0.0);
    CHECK(v.theta_deg == 0.0);
  }
  SECTION("negative zero reactance behaves like zero") {
    const ImpedanceValues v = derive({100.0, -0.0}, 1000.0);
    CHECK_FALSE(any_nan(v));
    CHECK(v.d == inf);
    CHECK(v.cs_f == 0.0);
    CHECK(v.theta_deg == 0.0);
    CHECK_FALSE(std::signbit(v.theta_deg));
  }
}

TEST_CASE("derive: phase stays within -180 to 180 degrees", "[impedance]") {
  // Noise can push R below zero; the negative real axis must read +180, never -180.
  CHECK(derive({-5.0, 0.0}, 1000.0).theta_deg == 180.0);
  CHECK(derive({-5.0, -0.0}, 1000.0).theta_deg == 180.0);
  CHECK(derive({-5.0, -1e-300}, 1000.0).theta_deg == 180.0);
  CHECK(derive({-5.0, -1e-6}, 1000.0).theta_deg > -180.0);
  CHECK(derive({-5.0, -1e-6}, 1000.0).theta_deg < -179.99);
  CHECK(derive({-5.0, 1e-6}, 1000.0).theta_deg < 180.0);
  CHECK(derive({-1.0, -1.0}, 1000.0).theta_deg == Approx(-135.0).epsilon(1e-14));
  for (int i = -720; i <= 720; ++i) {
    const double a = i * kPi / 360.0;
    const double theta = derive(std::polar(3.0, a), 1000.0).theta_deg;
    INFO("angle index " << i);
    CHECK(theta > -180.0);
    CHECK(theta <= 180.0);
  }
}

TEST_CASE("part kind names round-trip", "[impedance]") {
  for (PartKind k : {PartKind::capacitor, PartKind::inductor, PartKind::resistor}) {
    CHECK(tb::dsp::parse_part_kind(tb::dsp::part_kind_name(k)) == k);
  }
  CHECK(tb::dsp::part_kind_name(PartKind::capacitor) == "C");
  CHECK(tb::dsp::part_kind_name(PartKind::inductor) == "L");
  CHECK(tb::dsp::part_kind_name(PartKind::resistor) == "R");
  CHECK(tb::dsp::parse_part_kind("c") == PartKind::capacitor);
  CHECK(tb::dsp::parse_part_kind("Capacitor") == PartKind::capacitor);
  CHECK(tb::dsp::parse_part_kind("INDUCTOR") == PartKind::inductor);
  CHECK(tb::dsp::parse_part_kind("l") == PartKind::inductor);
  CHECK(tb::dsp::parse_part_kind("resistor") == PartKind::resistor);
  CHECK_FALSE(tb::dsp::parse_part_kind("").has_value());
  CHECK_FALSE(tb::dsp::parse_part_kind("cap").has_value());
  CHECK_FALSE(tb::dsp::parse_part_kind("x").has_value());
  CHECK_FALSE(tb::dsp::parse_part_kind("RC").has_value());
}

TEST_CASE("detect_kind: from the sign and size of X against R", "[impedance]") {
  SECTION("pure resistor") {
    CHECK(detect_kind({100.0, 0.0}, 0.0) == PartKind::resistor);
    // A little lead inductance (X = R/50) still reads R.
    CHECK(detect_kind({100.0, 2.0}, 0.0) == PartKind::resistor);
  }
  SECTION("capacitor and inductor") {
    CHECK(detect_kind(capacitor(100e-9, 0.1, 1000.0), 0.0) == PartKind::capacitor);
    CHECK(detect_kind(capacitor(100e-9, 0.0, 1000.0), 0.0) == PartKind::capacitor);
    CHECK(detect_kind(inductor(1e-3, 2.0, 1000.0), 0.0) == PartKind::inductor);
    CHECK(detect_kind(inductor(1e-3, 0.0, 1000.0), 0.0) == PartKind::inductor);
  }
  SECTION("series L-C-R at its resonance reads R") {
    const double l = 1e-3;
    const double c = 1e-6;
    const double r = 0.5;
    const double f0 = 1.0 / (2.0 * kPi * std::sqrt(l * c));
    const double w = 2.0 * kPi * f0;
    const std::complex<double> z{r, w * l - 1.0 / (w * c)};
    CHECK(std::abs(z.imag()) < 1e-9);
    CHECK(detect_kind(z, 0.0) == PartKind::resistor);
    // Slightly off resonance, still well inside a tenth of R.
    const double w2 = w * 1.00001;
    CHECK(detect_kind({r, w2 * l - 1.0 / (w2 * c)}, 0.0) == PartKind::resistor);
  }
  SECTION("X inside its own expanded uncertainty reads R") {
    CHECK(detect_kind({100.0, 15.0}, 20.0) == PartKind::resistor);
    CHECK(detect_kind({100.0, -15.0}, 20.0) == PartKind::resistor);
    CHECK(detect_kind({100.0, 15.0}, 10.0) == PartKind::inductor);
    CHECK(detect_kind({100.0, -15.0}, 10.0) == PartKind::capacitor);
    // Tiny part: all reading is noise.
    CHECK(detect_kind({0.0, -0.3}, 0.5) == PartKind::resistor);
  }
  SECTION("just either side of a tenth of R") {
    CHECK(detect_kind({100.0, 9.99}, 0.0) == PartKind::resistor);
    CHECK(detect_kind({100.0, -10.01}, 0.0) == PartKind::capacitor);
    CHECK(detect_kind({100.0, 10.01}, 0.0) == PartKind::inductor);
  }
  SECTION("lossy electrolytic, D = 0.3, reads C") {
    // 1000 uF at 120 Hz with ESR = 0.3 |Xc| (beyond the 0.19 limit of a 10 V part in
    // references.md "Measurement conditions", so a failing part is still named C).
    const double f = 120.0;
    const double xc = 1.0 / (2.0 * kPi * f * 1000e-6);
    const std::complex<double> z = capacitor(1000e-6, 0.3 * xc, f);
    CHECK(derive(z, f).d == Approx(0.3).epsilon(1e-12));
    CHECK(detect_kind(z, 0.0) == PartKind::capacitor);
    CHECK(detect_kind(z, 0.05 * xc) == PartKind::capacitor);
  }
  SECTION("nothing at all reads R") {
    CHECK(detect_kind({0.0, 0.0}, 0.0) == PartKind::resistor);
  }
}
