#include "dsp/compensation.hpp"

#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <limits>
#include <numbers>
#include <random>
#include <stdexcept>
#include <vector>

namespace {

using cplx = std::complex<double>;

constexpr double kTwoPi = 2.0 * std::numbers::pi;

double rel_err(cplx got, cplx want) {
  return std::abs(got - want) / std::abs(want);
}

// Transmission (ABCD) matrix of a fixture two-port, source side first.
struct TwoPort {
  cplx a, b, c, d;

  TwoPort then(const TwoPort& next) const {
    return {a * next.a + b * next.c, a * next.b + b * next.d, c * next.a + d * next.c,
            c * next.b + d * next.d};
  }
  // Impedance seen at the input with `load` at the output; an infinite load is the open limit.
  cplx input_impedance(cplx load) const {
    if (std::isinf(load.real())) return a / c;
    return (a * load + b) / (c * load + d);
  }
};

TwoPort series(cplx z) {
  return {1.0, z, 0.0, 1.0};
}
TwoPort shunt(cplx y) {
  return {1.0, 0.0, y, 1.0};
}

// Parts to recover: near-short to near-open, resistive and reactive.
std::vector<cplx> dut_values(double freq_hz) {
  const double w = kTwoPi * freq_hz;
  return {
      {0.08, -1.0 / (w * 1000e-6)},  // 1000 uF electrolytic
      {0.35, w * 1e-3},              // 1 mH crossover coil
      {8.2, w * 0.5e-6},             // wirewound resistor
      {1.0, -1.0 / (w * 100e-9)},    // 100 nF film
      {0.0, -1.0 / (w * 1e-9)},      // 1 nF, lossless
      {1e6, 0.0},                    // high-value resistor
  };
}

const double kInf = std::numeric_limits<double>::infinity();

}  // namespace

// Source: Torrents & Pallas-Areny, IEEE Trans. Instrum. Meas. 54(5), 2005 (formulas as in the
// shared references), evaluated here literally on arbitrary complex values.
TEST_CASE("compensation matches the published open/short and open/short/load formulas",
          "[compensation]") {
  std::mt19937_64 rng(2005);
  std::uniform_real_distribution<double> part(-100.0, 100.0);
  auto any = [&] { return cplx{part(rng), part(rng)}; };
  for (int i = 0; i < 500; ++i) {
    const cplx zm = any();
    const cplx zo = any() * 1000.0;
    const cplx zs = any() * 0.01;
    const cplx zsm = any();
    const cplx zstd = any();

    const cplx yo = 1.0 / (zo - zs);
    const cplx published_os = (zm - zs) / (1.0 - (zm - zs) * yo);
    CHECK(rel_err(tb::dsp::compensate_open_short(zm, zo, zs), published_os) < 1e-12);

    const cplx published_osl = zstd * (zo - zsm) * (zm - zs) / ((zsm - zs) * (zo - zm));
    CHECK(rel_err(tb::dsp::compensate_open_short_load(zm, zo, zs, zsm, zstd), published_osl) <
          1e-12);
  }
}

TEST_CASE("open/short recovers the part through a series impedance and shunt admittance",
          "[compensation]") {
  // The fixture model behind the open/short formula: lead impedance in series, then stray
  // capacitance and leakage across the part. Readings are computed through that two-port.
  for (double f : {100.0, 1000.0, 20000.0}) {
    const double w = kTwoPi * f;
    const cplx z_series{0.03, w * 0.8e-6};  // 30 mOhm, 0.8 uH of leads
    const cplx y_shunt{2e-9, w * 12e-12};   // 500 MOhm leakage, 12 pF stray
    const TwoPort fixture = series(z_series).then(shunt(y_shunt));

    const cplx z_open = fixture.input_impedance({kInf, 0.0});
    const cplx z_short = fixture.input_impedance(0.0);
    CHECK(rel_err(z_open, z_series + 1.0 / y_shunt) < 1e-14);
    CHECK(z_short == z_series);

    for (cplx dut : dut_values(f)) {
      INFO("f " << f << " dut " << dut);
      const cplx z_meas = fixture.input_impedance(dut);
      const cplx got = tb::dsp::compensate_open_short(z_meas, z_open, z_short);
      CHECK(rel_err(got, dut) < 1e-10);
      // The correction did something: the raw reading is off by more than the check above.
      CHECK(rel_err(z_meas, dut) > 1e-6);
    }
  }
}

TEST_CASE("open/short/load recovers the part exactly through a general fixture", "[compensation]") {
  // A fixture open/short cannot fully describe: series leads on both sides of the stray
  // admittance, plus a 0.4 % scale error from the reference resistor's tolerance.
  for (double f : {120.0, 1000.0, 20000.0}) {
    const double w = kTwoPi * f;
    const TwoPort fixture = series({0.02, w * 0.3e-6})
                                .then(shunt({1e-8, w * 30e-12}))
                                .then(series({0.5, w * 0.6e-6}))
                                .then(TwoPort{1.004, 0.0, 0.0, 1.0});
    const cplx load_true{100.0, w * 0.05e-6};  // 100 ohm standard with a little inductance
    const cplx z_open = fixture.input_impedance({kInf, 0.0});
    const cplx z_short = fixture.input_impedance(0.0);
    const cplx z_load_meas = fixture.input_impedance(load_true);

    // The load standard itself comes back as its known value.
    CHECK(rel_err(tb::dsp::compensate_open_short_load(z_load_meas, z_open, z_short, z_load_meas,
                                                      load_true),
                  load_true) < 1e-13);
    // A short comes back as zero.
    CHECK(std::abs(tb::dsp::compensate_open_short_load(z_short, z_open, z_short, z_load_meas,
                                                       load_true)) == 0.0);

    for (cplx dut : dut_values(f)) {
      INFO("f " << f << " dut " << dut);
      const cplx z_meas = fixture.input_impedance(dut);
      const cplx got =
          tb::dsp::compensate_open_short_load(z_meas, z_open, z_short, z_load_meas, load_true);
      CHECK(rel_err(got, dut) < 1e-9);
    }

    // On this fixture open/short alone leaves the scale error in place (the load is needed).
    const cplx dut{8.2, w * 0.5e-6};
    const cplx z_meas = fixture.input_impedance(dut);
    CHECK(rel_err(tb::dsp::compensate_open_short(z_meas, z_open, z_short), dut) > 1e-3);
  }
}

TEST_CASE("an ideal open reduces the formulas to their limits", "[compensation]") {
  const cplx open{kInf, 0.0};
  const cplx z_meas{12.5, -3.0};
  const cplx z_short{0.04, 0.002};
  CHECK(tb::dsp::compensate_open_short(z_meas, open, z_short) == z_meas - z_short);

  // Series leads and a scale error, no shunt path: the open reads as infinite.
  const TwoPort fixture = series({0.04, 0.002}).then(TwoPort{0.995, 0.0, 0.0, 1.0});
  const cplx load_true = 10.0;
  const cplx dut{3.3, -7.0};
  const cplx got = tb::dsp::compensate_open_short_load(
      fixture.input_impedance(dut), open, fixture.input_impedance(0.0),
      fixture.input_impedance(load_true), load_true);
  CHECK(rel_err(got, dut) < 1e-14);

  // A very large finite open agrees with the limit.
  CHECK(rel_err(tb::dsp::compensate_open_short(z_meas, {1e15, -1e14}, z_short), z_meas - z_short) <
        1e-12);
}

TEST_CASE("degenerate standards throw domain_error", "[compensation]") {
  const cplx z_short{0.01, 0.0};
  const cplx z_open{1e6, -2e6};
  const cplx z_load{100.0, 0.1};
  // Open reading equal to short: no fixture admittance can be formed.
  CHECK_THROWS_AS(tb::dsp::compensate_open_short(5.0, z_short, z_short), std::domain_error);
  // Reading equal to the open: the DUT is unbounded.
  CHECK_THROWS_AS(tb::dsp::compensate_open_short(z_open, z_open, z_short), std::domain_error);
  // Load measured like a short carries no scale information.
  CHECK_THROWS_AS(tb::dsp::compensate_open_short_load(5.0, z_open, z_short, z_short, 100.0),
                  std::domain_error);
  CHECK_THROWS_AS(tb::dsp::compensate_open_short_load(z_open, z_open, z_short, z_load, 100.0),
                  std::domain_error);
  CHECK_THROWS_AS(tb::dsp::compensate_open_short_load(5.0, z_load, z_short, z_load, 100.0),
                  std::domain_error);
  CHECK_NOTHROW(tb::dsp::compensate_open_short_load(5.0, z_open, z_short, z_load, 100.0));
}
