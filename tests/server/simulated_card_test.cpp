#include "server/simulated_card.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>

#include "dsp/circuit.hpp"
#include "server/bench_procedure.hpp"
#include "server/capture.hpp"
#include "server/error.hpp"
#include "server/measurement.hpp"
#include "tests/support/signals.hpp"

using namespace tb;
using cplx = std::complex<double>;

namespace {

dsp::Netlist resistor(double ohm) {
  return {{{dsp::ElementKind::resistor, "R1", "p", "n", ohm}}};
}

dsp::Netlist capacitor(double farad, double esr, double charged_v = 0) {
  dsp::Netlist n{{{dsp::ElementKind::capacitor, "C1", "p", "x", farad},
                  {dsp::ElementKind::resistor, "R1", "x", "n", esr}}};
  n.elements[0].initial_voltage_v = charged_v;
  return n;
}

SimulatedBenchConfig bench(const dsp::CardFaults& card, const dsp::Netlist& part, double rref,
                           dsp::Layout layout = dsp::Layout::part_low) {
  SimulatedBenchConfig c;
  c.card = card;
  c.part = part;
  c.jig.rref_ohm = rref;
  c.jig.layout = layout;
  return c;
}

MeasureRequest request(double f, double rref, dsp::Layout layout = dsp::Layout::part_low) {
  MeasureRequest r;
  r.freq_hz = f;
  r.rref_ohm = rref;
  r.layout = layout;
  r.duration_s = 0.5;
  return r;
}

}  // namespace

TEST_CASE("an ideal simulated card reads the divider exactly", "[simulated_card]") {
  // Ideal card: no loading, no coupling, unit gains, no noise. The capture's channel ratio
  // must equal the divider of Rref and the part (shared references, divider formula).
  SimulatedCard card(bench(dsp::ideal_card(), capacitor(1e-6, 0.5), 220));
  const auto res = measure_once(card, request(1000, 220), std::nullopt);
  const cplx truth{0.5, -1 / (2 * std::numbers::pi * 1000 * 1e-6)};
  // Left: trapezoidal frequency warping at 32 steps per sample, (w dt)^2 / 12 ~ 1.4e-6 here.
  CHECK(test::vector_error(res.reading.z.value, truth) < 5e-6);
  CHECK(res.reading.freq_hz == Approx(1000).epsilon(1e-9));
}

TEST_CASE("the simulated card delays its output by the drawn latency", "[simulated_card]") {
  auto card_faults = dsp::ideal_card();
  card_faults.latency_frames = 100;
  SimulatedCard card(bench(card_faults, resistor(1000), 1000));
  std::vector<float> out(512, 0.0f), a(512), b(512);
  out[10] = 0.5f;
  card.render(out, a, b);
  // 100 frames of latency plus the group delays of the DAC's reconstruction filter
  // (767/64 = 11.98 frames) and the ADC's anti-alias filter (191/16 = 11.94 frames): the
  // band-limited impulse played at frame 10 peaks 133 or 134 frames later.
  const auto peak = std::max_element(a.begin(), a.end()) - a.begin();
  CHECK(peak >= 133);
  CHECK(peak <= 134);
  CHECK(a[static_cast<std::size_t>(peak)] > 0.3f);
  // A resistive divider halves node B at every instant.
  for (std::size_t i = 0; i < a.size(); ++i)
    CHECK(b[i] == Approx(0.5 * a[i]).margin(1e-7));
}

TEST_CASE("a charged capacitor is detected before any tone is played", "[simulated_card][safety]") {
  // A 470 uF capacitor left at 35 V: the jump it makes on the inputs stops the measurement.
  SimulatedCard card(bench(dsp::draw_card_faults({.seed = 3}), capacitor(470e-6, 0.1, 35), 10));
  try {
    measure_once(card, request(120, 10), std::nullopt);
    FAIL("a charged part was measured");
  } catch (const Error& e) {
    CHECK(e.id() == "part.charged");
    CHECK(std::string(e.hint()).find("discharge") != std::string::npos);
  }
  // The same part discharged measures normally.
  SimulatedCard discharged(bench(dsp::draw_card_faults({.seed = 3}), capacitor(470e-6, 0.1), 10));
  CHECK_NOTHROW(measure_once(discharged, request(120, 10), std::nullopt));
}

TEST_CASE("high impedances read better in the part-high layout", "[simulated_card]") {
  // The card input at node B loads the part in part-low but only Rref in part-high
  // (design notes: the loading argument). A 220 kohm resistor on a hidden card, against a
  // 10 kohm reference in both layouts (no input-impedance calibration yet):
  const auto faults = dsp::draw_card_faults({.seed = 11});
  const double part = 220e3;
  SimulatedCard low(bench(faults, resistor(part), 10e3, dsp::Layout::part_low));
  SimulatedCard high(bench(faults, resistor(part), 10e3, dsp::Layout::part_high));
  const auto r_low = measure_once(low, request(1000, 10e3, dsp::Layout::part_low), std::nullopt);
  const auto r_high = measure_once(high, request(1000, 10e3, dsp::Layout::part_high), std::nullopt);
  const double err_low = std::abs(r_low.reading.values.mag_ohm - part) / part;
  const double err_high = std::abs(r_high.reading.values.mag_ohm - part) / part;
  INFO("part-low error " << err_low << ", part-high error " << err_high);
  CHECK(err_high < err_low / 3);
  CHECK(r_low.advice.layout == dsp::Layout::part_high);
}

TEST_CASE("channel match removes the hidden gain and timing mismatch", "[simulated_card]") {
  // A 100 ohm resistor against 100 ohm: loading is negligible (>= 10 kohm inputs), so what
  // is left without the channel match is the inputs' mismatch (up to 0.3 dB, 20 us).
  const auto faults = dsp::draw_card_faults({.seed = 5});
  SimulatedBenchConfig cfg = bench(faults, resistor(100), 100);
  SimulatedCard card(cfg);
  auto req = request(5000, 100);
  const auto plain = measure_once(card, req, std::nullopt);
  auto jig = cfg.jig;
  jig.inputs_on_node_a = true;
  card.reconnect(jig, cfg.part);
  const auto match = measure_channel_match(card, req);
  card.reconnect(cfg.jig, cfg.part);
  const auto matched = measure_once(card, req, match);
  const double err_plain = test::vector_error(plain.reading.z.value, 100);
  const double err_matched = test::vector_error(matched.reading.z.value, 100);
  INFO("without " << err_plain << ", with " << err_matched);
  CHECK(err_matched < err_plain / 5);
  // What is left: input B (>= 10 kohm) across the 100 ohm part, up to 1 %, its capacitance
  // (<= 400 pF: >= 80 kohm at 5 kHz, 0.13 %) and the leads (2 x 50 mohm at most, 0.1 %);
  // open/short compensation removes them.
  CHECK(err_matched < 1.3e-2);
}

TEST_CASE("the simulated card refuses bad stream settings", "[simulated_card]") {
  SimulatedCard card(bench(dsp::ideal_card(), resistor(100), 100));
  auto id_of = [&](const StreamSpec& s) {
    try {
      card.start(s, [](auto, auto, auto) { return true; });
      card.stop();
    } catch (const Error& e) {
      return e.id();
    }
    return std::string("none");
  };
  CHECK(id_of({.sample_rate_hz = 12345}) == "device.bad_rate");
  CHECK(id_of({.sample_rate_hz = 48000, .period_frames = 1}) == "device.bad_period");
  CHECK(id_of({.sample_rate_hz = 48000, .period_frames = 256}) == "none");
}

TEST_CASE("open/short on a card that does not load the jig treats the open as ideal",
          "[simulated_card]") {
  // An ideal card's open reads node B equal to node A: beyond resolution, i.e. infinite.
  const auto part = capacitor(2.2e-6, 0.3);
  SimulatedBenchConfig cfg = bench(dsp::ideal_card(), part, 100);
  SimulatedCard card(cfg);
  const auto r = measure_on_bench(card, cfg.jig, part, request(1000, 100), {});
  const cplx truth{0.3, -1 / (2 * std::numbers::pi * 1000 * 2.2e-6)};
  CHECK(r.fixture_compensated);
  CHECK(test::vector_error(r.reading.z.value, truth) < 1e-5);
}
