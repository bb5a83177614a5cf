// Open/short/load fixture compensation on the simulated bench, against the part's own
// impedance from an AC solve of its netlist (the truth, apart from the measurement).
// Cards are hidden cards from dsp::draw_card_faults with fixed seeds.
#include <catch2/catch.hpp>
#include <cmath>
#include <complex>

#include "dsp/jig_model.hpp"
#include "server/bench_procedure.hpp"

using namespace tb;
using cplx = std::complex<double>;

namespace {

dsp::Netlist resistor(double ohm) {
  return {{{dsp::ElementKind::resistor, "R1", "p", "n", ohm}}};
}

struct Read {
  double err_rel = 0;  // |Z_read - Z_true| / |Z_true|
  double mag_err_rel = 0;
  double u_mag_rel = 0;  // expanded
};

Read read(SimulatedCard& card, const dsp::JigSetup& jig, const dsp::Netlist& part,
          const MeasureRequest& req, const BenchCorrections& corr) {
  const auto r = measure_on_bench(card, jig, part, req, corr).reading;
  const cplx truth = dsp::part_impedance(part, r.freq_hz);
  return {std::abs(r.z.value - truth) / std::abs(truth),
          std::abs(r.values.mag_ohm - std::abs(truth)) / std::abs(truth),
          r.u_mag.expanded / r.values.mag_ohm};
}

// A bench with this card and part, its jig's Rref `jig_rref` (the true value), and a
// request at f that states Rref as `nominal_rref`.
struct Bench {
  SimulatedBenchConfig cfg;
  MeasureRequest req;
};

Bench bench(const dsp::CardFaults& card, const dsp::Netlist& part, double jig_rref,
            double nominal_rref, double f, std::uint64_t noise_seed) {
  Bench b;
  b.cfg.card = card;
  b.cfg.part = part;
  b.cfg.jig.rref_ohm = jig_rref;
  b.cfg.noise_seed = noise_seed;
  b.req.freq_hz = f;
  b.req.rref_ohm = nominal_rref;
  b.req.duration_s = 0.3;
  return b;
}

BenchCorrections with_load(double nominal_ohm, double tolerance_rel) {
  BenchCorrections c;
  c.load_ohm = nominal_ohm;
  c.load_tolerance_rel = tolerance_rel;
  return c;
}

}  // namespace

TEST_CASE("open/short/load recovers a high part that the card input loads", "[bench]") {
  // 47 kohm in the part-low layout at 10 kHz: input B (10-100 kohm || 50-400 pF) sits across
  // the part. Load standard: a resistor of Rref's nominal value, known to 0.01 %.
  const auto part = resistor(47e3);
  for (std::uint64_t seed : {3u, 8u}) {
    INFO("card seed " << seed);
    auto b = bench(dsp::draw_card_faults({.seed = seed}), part, 10e3, 10e3, 10000, seed + 17);
    b.cfg.rref_tolerance_rel = 0.001;
    SimulatedCard card(b.cfg);

    BenchCorrections none;
    none.open_short = false;
    const Read raw = read(card, b.cfg.jig, part, b.req, none);
    CHECK(raw.err_rel > 0.05);

    const Read got = read(card, b.cfg.jig, part, b.req, with_load(10e3, 1e-4));
    CHECK(got.mag_err_rel <= got.u_mag_rel);
    CHECK(got.err_rel < 0.002);
    WARN("seed " << seed << ": uncorrected " << raw.err_rel * 100 << " %, open/short/load "
                 << got.err_rel * 100 << " % (U " << got.u_mag_rel * 100 << " %)");
  }
}

TEST_CASE("the load removes the scale error of Rref that open/short leaves", "[bench]") {
  // The jig's Rref is 1005 ohm while the measuring code is told 1000 ohm: open/short reads
  // every part 0.5 % off (Z is proportional to Rref in the divider), the load standard
  // (1000 ohm known to 0.01 %) brings the scale back.
  const auto part = resistor(470);
  for (std::uint64_t seed : {5u, 11u}) {
    INFO("card seed " << seed);
    const auto b = bench(dsp::draw_card_faults({.seed = seed}), part, 1005, 1000, 1000, seed + 29);
    SimulatedCard card(b.cfg);

    const Read os = read(card, b.cfg.jig, part, b.req, {});
    CHECK(os.mag_err_rel == Approx(0.005).margin(0.0005));

    const Read got = read(card, b.cfg.jig, part, b.req, with_load(1000, 1e-4));
    CHECK(got.mag_err_rel <= got.u_mag_rel);
    CHECK(got.err_rel < 0.0005);
    WARN("seed " << seed << ": open/short " << os.err_rel * 100 << " %, open/short/load "
                 << got.err_rel * 100 << " % (U " << got.u_mag_rel * 100 << " %)");
  }
}

TEST_CASE("open/short/load removes the crosstalk between the inputs", "[bench]") {
  // An otherwise ideal card whose inputs each pick up 0.3 % of the other: the ratio reads
  // (r + c) / (1 + c r), a bilinear map that open/short cannot undo and open/short/load can
  // (the fixture model of compensation.hpp is bilinear in Z).
  auto faults = dsp::ideal_card();
  faults.crosstalk = 0.003;
  const auto part = resistor(470);
  const auto b = bench(faults, part, 1000, 1000, 1000, 1);
  SimulatedCard card(b.cfg);
  const Read os = read(card, b.cfg.jig, part, b.req, {});
  CHECK(os.err_rel > 1e-3);
  const Read got = read(card, b.cfg.jig, part, b.req, with_load(1000, 1e-5));
  CHECK(got.err_rel < 1e-4);
}

TEST_CASE("a load off its nominal value moves the reading by the same share", "[bench]") {
  // The compensation trusts the load's stated value: a load 0.3 % above nominal reads every
  // part 0.3 % low. This is why the absolute accuracy is no better than the load is known.
  const auto part = resistor(2200);
  const auto b = bench(dsp::draw_card_faults({.seed = 6}), part, 1000, 1000, 1000, 1);
  SimulatedCard card(b.cfg);
  auto osl = with_load(1000, 1e-3);
  osl.load_true_ohm = 1003;
  const auto r = measure_on_bench(card, b.cfg.jig, part, b.req, osl).reading;
  const double ratio = r.values.mag_ohm / std::abs(dsp::part_impedance(part, r.freq_hz));
  CHECK(ratio == Approx(1 / 1.003).margin(3e-4));
}

TEST_CASE("a bench load without open/short is refused", "[bench]") {
  SimulatedBenchConfig cfg;
  cfg.part = resistor(100);
  SimulatedCard card(cfg);
  BenchCorrections c;
  c.open_short = false;
  c.load_ohm = 1000;
  CHECK_THROWS_AS(measure_on_bench(card, cfg.jig, cfg.part, {}, c), std::invalid_argument);
}
