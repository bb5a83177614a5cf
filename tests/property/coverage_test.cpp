// Property test of the stated uncertainty: random parts on random hidden simulated cards,
// measured with the full calibration (channel match, open/short/load with a load of Rref's
// nominal value), and the share of readings whose true value lies inside +-U counted. The
// Type B inputs are randomised, not left at their nominal values: the true Rref lies
// uniformly within its stated tolerance (SimulatedBenchConfig.rref_tolerance_rel; with a
// load it cancels) and the true load uniformly within its stated tolerance.
//
// Open/short/load corrects any bilinear error of the reading, and the card's crosstalk
// between its inputs is one: (r + c) / (1 + c r) for a ratio r and crosstalk c, a Moebius
// map of r, as Z is of r. With open/short alone that crosstalk (about 0.02 %) was left
// uncorrected and outside the budget, a bias; with the load it goes.
//
// The stated coverage is 95.45 %; the share must lie between 93 % and 98.5 % (too many misses, or
// an uncertainty so wide that it never misses, both fail). With 300 trials the binomial standard
// deviation at 95.45 % is 1.2 %, so the band is about -2 and +2.5 standard deviations wide. Truth:
// the part's impedance from an AC solve of its netlist, apart from the measurement.
//
// Every draw is seeded and the free-running bench renders exactly the frames each capture
// asks for, so the figures repeat run to run (|Z| 95.7 %, theta 94.7 %, none refused): a
// change in them is a change in the code, not luck.
#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <random>

#include "dsp/jig_model.hpp"
#include "server/bench_procedure.hpp"
#include "server/error.hpp"

using namespace tb;

namespace {

// The load standard's stated tolerance, half-width: a 0.01 % resistor. With a 0.1 % load
// its rectangular term dominates U(|Z|) in most trials, and k = 2 on a dominant rectangular
// term covers it entirely (its 95 % point is at 1.65 u, JCGM 100:2008 G.2.3, from memory):
// the |Z| coverage then read 98.7 % and 99.3 % in two runs, a property of the k-factor rule,
// not of this budget. At 0.01 % the other terms share the budget and the test says more.
constexpr double kLoadTolRel = 1e-4;

struct Trial {
  dsp::Netlist part;
  double freq_hz;
  double rref_ohm;
  double load_offset_rel;  // the true load's offset, in units of its stated tolerance
  std::string what;
};

Trial draw_trial(std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  auto log_uniform = [&](double lo, double hi) {
    return std::exp(std::uniform_real_distribution<double>(std::log(lo), std::log(hi))(rng));
  };
  Trial t;
  const double z = log_uniform(1, 1e6);
  t.freq_hz = std::round(log_uniform(20, 20000) / 10) * 10;  // on the 10 Hz grid
  const double w = 2 * std::numbers::pi * t.freq_hz;
  const int kind = std::uniform_int_distribution<int>(0, 2)(rng);
  using K = dsp::ElementKind;
  if (kind == 0) {
    t.part = {{{K::resistor, "R", "p", "n", z}}};
    t.what = "R " + std::to_string(z);
  } else if (kind == 1) {
    const double d = log_uniform(1e-3, 0.1);
    t.part = {{{K::capacitor, "C", "p", "x", 1 / (w * z)}, {K::resistor, "Resr", "x", "n", d * z}}};
    t.what = "C " + std::to_string(1 / (w * z)) + " D " + std::to_string(d);
  } else {
    const double q = log_uniform(1, 100);
    t.part = {{{K::inductor, "L", "p", "x", z / w}, {K::resistor, "Rw", "x", "n", z / q}}};
    t.what = "L " + std::to_string(z / w) + " Q " + std::to_string(q);
  }
  // Rref of the usual decade set nearest |Z| (log scale).
  t.rref_ohm = std::pow(10.0, std::clamp(std::round(std::log10(z)), 0.0, 5.0));
  // Drawn last so the parts stay those the open/short version of this test drew.
  t.load_offset_rel = std::uniform_real_distribution<double>(-1, 1)(rng);
  return t;
}

}  // namespace

TEST_CASE("stated uncertainty covers the truth about 95 % of the time on hidden cards",
          "[property]") {
  const std::uint64_t first_seed = 1000;
  const int trials = 300;
  int inside_mag = 0, inside_theta = 0, measured = 0, refused = 0;
  for (int i = 0; i < trials; ++i) {
    const auto seed = first_seed + static_cast<std::uint64_t>(i);
    const Trial t = draw_trial(seed);
    SimulatedBenchConfig cfg;
    cfg.card = dsp::draw_card_faults({.seed = seed});
    cfg.part = t.part;
    cfg.jig.rref_ohm = t.rref_ohm;
    cfg.noise_seed = seed * 31 + 7;
    cfg.rref_tolerance_rel = 0.001;
    SimulatedCard card(cfg);
    MeasureRequest req;
    req.freq_hz = t.freq_hz;
    req.rref_ohm = t.rref_ohm;
    req.rref_tolerance_rel = 0.001;
    // The simulated reference resistor does not change with temperature: no tempco term
    // (a real jig's budget keeps it; docs/accuracy.md says so).
    req.rref_tempco_ppm_per_k = 0;
    // The technician states the local mains frequency; the hidden card hums at it.
    req.mains_hz = cfg.card.hum_hz;
    req.duration_s = 0.2;
    req.stream.sample_rate_hz = t.freq_hz > 12000 ? 96000 : 48000;
    BenchCorrections corr;
    corr.load_ohm = t.rref_ohm;
    corr.load_tolerance_rel = kLoadTolRel;
    corr.load_true_ohm = t.rref_ohm * (1 + kLoadTolRel * t.load_offset_rel);
    try {
      const auto r = measure_on_bench(card, cfg.jig, t.part, req, corr).reading;
      // The part as the bench simulates it: its trapezoidal steps see the tone at a slightly
      // higher frequency (SimulatedCard::circuit_frequency_hz). At the AC frequency itself a
      // reactance would be off by (2 pi f dt)^2 / 12, up to 1.3e-4 at 20 kHz: a model error
      // of the simulator, not of the measurement, and outside its budget.
      const auto truth = dsp::part_impedance(
          t.part, SimulatedCard::circuit_frequency_hz(r.freq_hz, req.stream.sample_rate_hz));
      const bool mag_ok = std::abs(r.values.mag_ohm - std::abs(truth)) <= r.u_mag.expanded;
      const double dtheta =
          std::remainder(r.values.theta_deg - std::arg(truth) * 180 / std::numbers::pi, 360.0);
      const bool theta_ok = std::abs(dtheta) <= r.u_theta_deg.expanded;
      inside_mag += mag_ok;
      inside_theta += theta_ok;
      ++measured;
      if (!mag_ok || !theta_ok) {
        UNSCOPED_INFO("miss: seed " << seed << " " << t.what << " at " << t.freq_hz << " Hz, Rref "
                                    << t.rref_ohm << ": |Z| err "
                                    << r.values.mag_ohm - std::abs(truth) << " U "
                                    << r.u_mag.expanded << ", theta err " << dtheta << " U "
                                    << r.u_theta_deg.expanded);
      }
    } catch (const std::exception& e) {
      ++refused;
      UNSCOPED_INFO("refused: seed " << seed << " " << t.what << " at " << t.freq_hz
                                     << " Hz: " << e.what());
    }
  }
  const double cov_mag = static_cast<double>(inside_mag) / measured;
  const double cov_theta = static_cast<double>(inside_theta) / measured;
  INFO("measured " << measured << ", refused " << refused << ", coverage |Z| " << cov_mag
                   << ", theta " << cov_theta);
  CHECK(refused <= trials / 20);
  CHECK(cov_mag >= 0.93);
  CHECK(cov_mag <= 0.985);
  CHECK(cov_theta >= 0.93);
  CHECK(cov_theta <= 0.985);
  WARN("coverage |Z| " << cov_mag << ", theta " << cov_theta << " over " << measured
                       << " readings");
}
