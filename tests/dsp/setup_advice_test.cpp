#include "dsp/setup_advice.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <vector>

using namespace tb::dsp;
using cplx = std::complex<double>;

namespace {

const std::vector<double> kSet{1, 10, 100, 1000, 10000, 100000};

// A card read with 70 dB per-block SNR on node A over 5 blocks; the input loading
// corrected to 5 % of itself (an input-impedance calibration).
SetupModel quiet_card() {
  SetupModel m;
  m.noise_a_rel = std::pow(10.0, -70 / 20.0) / std::sqrt(5.0);
  m.noise_b_rel_a = m.noise_a_rel;
  m.input_residual_rel = 0.05;
  m.rref_tolerance_rel = 0.001;
  return m;
}

}  // namespace

TEST_CASE("the divider's noise sensitivity is lowest near Rref", "[setup_advice]") {
  // Noise only, equal on both inputs: the relative error is lowest for |Z| near Rref and
  // about 4 times worse at 10x or 0.1x (references.md, reference-resistor divider [calc]).
  SetupModel m;
  m.noise_a_rel = m.noise_b_rel_a = 1e-5;
  m.crosstalk_rel = 0;
  m.input_residual_rel = 0;
  m.rref_tolerance_rel = 0;
  const double at = predict_setup(m, 1000, Layout::part_low, 1000).u_rel;
  // Resistor equal to Rref, part-low: sensitivities 2 (V_A) and 4 (V_B) [calc].
  CHECK(at == Approx(1e-5 * std::sqrt(20.0)).epsilon(1e-9));
  const double ten = predict_setup(m, 1000, Layout::part_low, 100).u_rel;
  const double tenth = predict_setup(m, 1000, Layout::part_low, 10000).u_rel;
  CHECK(ten / at > 2.5);
  CHECK(ten / at < 5);
  CHECK(tenth / at > 2.5);
  CHECK(tenth / at < 5);
}

TEST_CASE("a resistor is advised an Rref near its value", "[setup_advice]") {
  for (double r : {10.0, 100.0, 1000.0}) {
    const auto best = best_setup(quiet_card(), r, kSet);
    INFO("R = " << r << " -> Rref " << best.rref_ohm);
    CHECK(best.rref_ohm >= r / 10);
    CHECK(best.rref_ohm <= r * 10);
  }
  // 470 ohm: the nearest references of the set are 100 and 1000 ohm.
  const auto b470 = best_setup(quiet_card(), 470, kSet);
  CHECK((b470.rref_ohm == 100 || b470.rref_ohm == 1000));
}

TEST_CASE("1 Mohm goes part-high and 0.5 ohm part-low on 1 ohm", "[setup_advice]") {
  // Part-low puts the card's input across the megohm (47 kohm: a 20x error before
  // correction); part-high puts it across Rref only.
  const auto high = best_setup(quiet_card(), 1e6, kSet);
  CHECK(high.layout == Layout::part_high);
  const auto low = best_setup(quiet_card(), 0.5, kSet);
  CHECK(low.layout == Layout::part_low);
  CHECK(low.rref_ohm == 1);
  // Uncorrected loading pushes a megohm to a smaller Rref in part-high, never part-low.
  SetupModel raw = quiet_card();
  raw.input_residual_rel = 1;
  CHECK(best_setup(raw, 1e6, kSet).layout == Layout::part_high);
  // The prediction holds its terms: tolerance 0.1 % rectangular = 5.77e-4 (JCGM 100 4.3.7).
  CHECK(low.u_rref_rel == Approx(0.001 / std::sqrt(3.0)));
  CHECK(low.u_rel >= low.u_rref_rel);
}

TEST_CASE("a capacitor's reactance is advised like a resistor's magnitude", "[setup_advice]") {
  // 100 nF at 1 kHz: |Z| = 1.59 kohm [calc]. A reactive part moves the ratio off the real
  // axis, which only helps the divider; the choice stays near |Z|.
  const cplx z{0.5, -1 / (2 * 3.141592653589793 * 1000 * 100e-9)};
  SetupModel m = quiet_card();
  m.freq_hz = 1000;
  const auto best = best_setup(m, z, kSet);
  CHECK(best.rref_ohm >= 100);
  CHECK(best.rref_ohm <= 10000);
  CHECK_THROWS_AS(best_setup(m, z, std::vector<double>{}), std::invalid_argument);
  CHECK_THROWS_AS(predict_setup(m, 0, Layout::part_low, 100), std::invalid_argument);
}
