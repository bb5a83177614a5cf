// The level-drift check against the Thevenin model of the card's output (Thevenin's
// theorem: any linear source is an EMF behind an impedance; common practice, no source).
#include "dsp/source_drift.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>

using namespace tb::dsp;
using cplx = std::complex<double>;

namespace {

// Level at node A per unit output for a source E behind Zo driving admittance y.
double level(double e, cplx zo, cplx y) {
  return e / std::abs(1.0 + zo * y);
}

cplx output_impedance(double r_ohm, double c_f, double f_hz) {
  return cplx(r_ohm, -1 / (2 * std::numbers::pi * f_hz * c_f));
}

}  // namespace

TEST_CASE("an unchanged card is not called drifted at any load the check can judge",
          "[source_drift]") {
  int judged = 0;
  for (double r_out : {1.0, 10.0, 100.0}) {
    for (double f : {100.0, 1000.0, 10000.0}) {
      const cplx zo = output_impedance(r_out, 220e-6, f);
      const double rref = 100;
      const cplx y_open = 1.0 / cplx(rref + 47e3, 0), y_short = 1.0 / cplx(rref + 0.04, 0);
      const SourceReference ref{level(0.6, zo, y_open), level(0.6, zo, y_short), y_short};
      for (double z : {1.0, 100.0, 1e3, 1e5}) {
        for (double phase : {-1.5, 0.0, 1.5}) {
          const cplx y = 1.0 / (rref + std::polar(z, phase));
          const auto c = check_source_drift(ref, level(0.6, zo, y), y);
          INFO("Rout " << r_out << " f " << f << " |Z| " << z << " phase " << phase);
          if (c.decidable) {
            ++judged;
            CHECK_FALSE(c.drifted);
          }
        }
      }
    }
  }
  // 108 cases; 60 are judged: those where a 100 ohm reference loads a 100 ohm output
  // (loading moves the level by tens of per cent) are left undecided, as they should be.
  CHECK(judged >= 50);
}

TEST_CASE("a gain changed by half a decibel is found when the jig loads the card lightly",
          "[source_drift]") {
  const cplx zo = output_impedance(47, 100e-6, 1000);
  const cplx y_short = 1.0 / cplx(1000.04, 0);
  const SourceReference ref{level(0.8, zo, 1e-5), level(0.8, zo, y_short), y_short};
  const cplx y = 1.0 / cplx(1000 + 4700, 0);
  const double gain = std::pow(10, 0.5 / 20);
  const auto up = check_source_drift(ref, gain * level(0.8, zo, y), y);
  REQUIRE(up.decidable);
  CHECK(up.drifted);
  CHECK(up.change_rel == Approx(gain - 1).margin(0.01));
  const auto down = check_source_drift(ref, level(0.8, zo, y) / gain, y);
  CHECK(down.drifted);
}

TEST_CASE("a heavily loaded card cannot be judged and says so", "[source_drift]") {
  // 50 ohm output into a 1 ohm reference with a 0.5 ohm part: loading moves the level by
  // far more than any drift worth finding.
  const cplx zo = output_impedance(50, 470e-6, 1000);
  const cplx y_short = 1.0 / cplx(1.04, 0);
  const SourceReference ref{level(0.5, zo, 1e-3), level(0.5, zo, y_short), y_short};
  const cplx y = 1.0 / cplx(1.5, 0);
  const auto c = check_source_drift(ref, level(0.5, zo, y) * 1.2, y);
  CHECK_FALSE(c.decidable);
  CHECK_FALSE(c.drifted);
  CHECK(c.loading_rel > 0.05);
}

TEST_CASE("missing reference levels give no verdict", "[source_drift]") {
  const auto c = check_source_drift({0, 0.4, 0.01}, 0.4, 0.001);
  CHECK_FALSE(c.decidable);
}
