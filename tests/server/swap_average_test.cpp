#include "server/swap_average.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <complex>
#include <numbers>

#include "dsp/jig_model.hpp"
#include "server/bench_procedure.hpp"
#include "server/error.hpp"
#include "server/simulated_card.hpp"

using namespace tb;
using cplx = std::complex<double>;

namespace {

dsp::Netlist capacitor(double farad, double esr) {
  return {{{dsp::ElementKind::capacitor, "C1", "p", "x", farad},
           {dsp::ElementKind::resistor, "R1", "x", "n", esr}}};
}

MeasureRequest request(double f, double rref) {
  MeasureRequest r;
  r.freq_hz = f;
  r.rref_ohm = rref;
  r.duration_s = 0.5;
  return r;
}

// One swap-averaged reading of `part`, the jig rewired by the bench itself.
MeasureResult swapped_reading(SimulatedCard& card, const dsp::JigSetup& jig,
                              const dsp::Netlist& part, const MeasureRequest& req,
                              const std::optional<dsp::FixtureStandards>& fixture) {
  return measure_swap_averaged(card, req, fixture, [&](bool swapped) {
    auto j = jig;
    j.inputs_swapped = swapped;
    card.reconnect(j, part);
  });
}

}  // namespace

TEST_CASE("the simulated card swaps its inputs on request", "[swap_average]") {
  // Ideal card, 100 ohm over 100 ohm: node b is half of node a (divider formula); with the
  // inputs swapped input 1 reads node b, so V_2/V_1 reads 2.
  SimulatedBenchConfig cfg;
  cfg.card = dsp::ideal_card();
  cfg.part = {{{dsp::ElementKind::resistor, "R1", "p", "n", 100}}};
  cfg.jig.rref_ohm = 100;
  SimulatedCard card(cfg);
  const auto normal = capture_uncorrected(card, request(1000, 100));
  auto jig = cfg.jig;
  jig.inputs_swapped = true;
  card.reconnect(jig, cfg.part);
  const auto swapped = capture_uncorrected(card, request(1000, 100));
  CHECK(std::abs(normal.reading.ratio - 0.5) < 1e-4);
  CHECK(std::abs(swapped.reading.ratio - 2.0) < 4e-4);
}

TEST_CASE("swap and average survives a touched gain knob that a stale channel match does not",
          "[swap_average]") {
  // A 22 uF capacitor with 0.2 ohm ESR against 100 ohm at 1 kHz (|Z| ~ 7 ohm, ratio ~ 0.07,
  // so a ratio error shows almost unchanged in Z).
  const auto faults = dsp::draw_card_faults({.seed = 21});
  const auto part = capacitor(22e-6, 0.2);
  SimulatedBenchConfig cfg;
  cfg.card = faults;
  cfg.part = part;
  cfg.jig.rref_ohm = 100;
  SimulatedCard card(cfg);
  const auto req = request(1000, 100);
  const cplx truth = dsp::part_impedance(part, 1000);  // AC solve of the part's netlist

  auto both_on_a = cfg.jig;
  both_on_a.inputs_on_node_a = true;
  card.reconnect(both_on_a, part);
  const auto match = measure_channel_match(card, req);

  // Someone turns input 2's gain up by 0.5 dB (x 1.0593).
  card.set_input_gain(1, faults.in_gain[1] * std::pow(10.0, 0.5 / 20));

  // The stale match: the whole 0.5 dB shows as a ratio error.
  card.reconnect(cfg.jig, part);
  const auto stale = measure_once(card, req, match);
  const double stale_err = std::abs(stale.reading.z.value - truth) / std::abs(truth);
  INFO("stale channel match: error " << stale_err);
  CHECK(stale_err > 0.04);
  CHECK(stale_err < 0.09);

  // Swap-and-average with no channel match, open/short taken the same way. Input loading
  // (10-100 kohm with up to 400 pF, card_faults.hpp) on a 7 ohm part is below 1e-3 and the
  // open removes its mean; the two inputs' difference leaves ~1e-7, second order.
  dsp::FixtureStandards fixture;
  try {
    fixture.open = swapped_reading(card, cfg.jig, open_jig(), req, std::nullopt).reading.z;
  } catch (const dsp::AnalysisError& e) {
    REQUIRE(e.id() == "analysis.bridge_singular");
    fixture.open.value = {1e18, 0};
  }
  fixture.short_ = swapped_reading(card, cfg.jig, shorted_jig(), req, std::nullopt).reading.z;
  fixture.reconnect_half_width_ohm = 0.002;
  const auto r = swapped_reading(card, cfg.jig, part, req, fixture);
  CHECK(r.swap_averaged);
  CHECK(r.fixture_compensated);
  CHECK_FALSE(r.channel_match);
  const auto& v = r.reading;
  const double err = std::abs(v.z.value - truth) / std::abs(truth);
  INFO("truth " << truth << ", swap-averaged " << v.z.value << ", error " << err << ", U(R) "
                << v.u_r.expanded << ", U(X) " << v.u_x.expanded);
  CHECK(std::abs(v.values.r_ohm - truth.real()) <= v.u_r.expanded);
  CHECK(std::abs(v.values.x_ohm - truth.imag()) <= v.u_x.expanded);
  CHECK(err < stale_err / 10);
  WARN("stale match error " << stale_err << "; swap-averaged error " << err << " (R "
                            << v.values.r_ohm << " +- " << v.u_r.expanded << ", X "
                            << v.values.x_ohm << " +- " << v.u_x.expanded << " ohm; truth " << truth
                            << ")");
}

namespace {

// The simulated bench with a flaky link: while `flaky` is set, every stream reports an xrun.
class FlakyBench final : public AudioDevice {
 public:
  explicit FlakyBench(SimulatedBenchConfig c) : card(std::move(c)) {}
  DeviceInfo info() const override { return card.info(); }
  void start(const StreamSpec& spec, DuplexCallback cb) override {
    if (flaky) ++xruns_;
    card.start(spec, std::move(cb));
  }
  void stop() override { card.stop(); }
  bool running() const override { return card.running(); }
  std::uint64_t xruns() const override { return xruns_; }

  SimulatedCard card;
  bool flaky = false;

 private:
  std::uint64_t xruns_ = 0;
};

}  // namespace

TEST_CASE("an xrun in the swapped capture refuses the swap-averaged reading", "[swap_average]") {
  SimulatedBenchConfig cfg;
  cfg.card = dsp::ideal_card();
  cfg.part = capacitor(22e-6, 0.2);
  cfg.jig.rref_ohm = 100;
  FlakyBench dev(cfg);
  try {
    (void)measure_swap_averaged(dev, request(1000, 100), std::nullopt, [&](bool swapped) {
      auto j = cfg.jig;
      j.inputs_swapped = swapped;
      dev.card.reconnect(j, cfg.part);
      dev.flaky = swapped;  // the normal capture is clean, the swapped one is not
    });
    FAIL("the damaged swapped capture was used");
  } catch (const Error& e) {
    CHECK(e.id() == "capture.xrun");
  }
}
