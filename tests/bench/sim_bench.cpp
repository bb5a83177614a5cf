// tonebridge-sim-bench: what the simulated bench shows about accuracy, and how fast it runs.
//
// Prints figures only (no pass/fail checks; always exits 0).
//
// 1. Accuracy. A ladder of parts from 1 ohm to 100 kohm (ideal resistors, and capacitors
//    and inductors with a loss of 1e-3 of their reactance) is read at 1 kHz in the
//    part-low layout, with the reference resistor of {1, 10, 100, 1k, 10k, 100k} ohm that
//    is nearest |Z| on a log scale. Every reading goes through the normal path: the
//    channel-match step (both inputs on node A), then measure_once with that match. The
//    reading is compared with the part's own impedance from an AC solve of its netlist,
//    and the reported expanded uncertainties (k = 2) are printed beside the errors.
//    Cards: the hidden card of seed 1, then seeds 1..N for mean and worst. A last table
//    switches single faults of the seed-1 card off to show which one limits each end.
// 2. Speed. SimulatedCard::render() in a loop, 256-frame periods of a 1 kHz sine, at 48 and
//    96 kHz with a capacitor on the jig: seconds of audio per wall second and per CPU
//    second of this process ("x real time").
//
// Usage: tonebridge-sim-bench [--quick] [--seeds N]
//   --quick    fewer parts and cards, short tones and short timing runs (smoke test)
//   --seeds N  cards drawn for the mean/worst table (default 10, quick 2)
#include <algorithm>
#include <chrono>
#include <cmath>
#include <complex>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <ctime>
#include <fstream>
#include <functional>
#include <numbers>
#include <span>
#include <string>
#include <thread>
#include <vector>

#include "dsp/card_faults.hpp"
#include "dsp/circuit.hpp"
#include "dsp/jig_model.hpp"
#include "dsp/part_spec.hpp"
#include "dsp/recording_analysis.hpp"
#include "server/bench_procedure.hpp"
#include "server/error.hpp"
#include "server/measurement.hpp"
#include "server/simulated_card.hpp"
#include "tests/bench/bench_common.hpp"

namespace {

using cplx = std::complex<double>;

constexpr double kFreqHz = 1000;
constexpr double kLossRatio = 1e-3;  // series loss of the reactive parts: R = 1e-3 |X|
const std::vector<double> kRrefSet = {1, 10, 100, 1e3, 10e3, 100e3};

struct Options {
  bool quick = false;
  int seeds = 10;
  double tone_s = 1.0;      // analysed tone per reading (measure's default)
  double render_s = 5;      // audio per timed render run
  int render_runs = 3;      // best of
  bool open_short = false;  // also apply the open/short compensation (bench_procedure)
};

// ---------------------------------------------------------------------------------------
// Parts and their truth

using tb::bench::Family;
using tb::bench::family_name;
using tb::bench::Outcome;
using tb::bench::si;

std::string part_text(Family f, double z_mag) {
  return tb::bench::part_text(f, z_mag, kFreqHz, kLossRatio);
}

double nearest_rref(double z_mag) {
  return tb::bench::nearest_of(z_mag, kRrefSet);
}

// ---------------------------------------------------------------------------------------
// One reading on a simulated card

int g_readings = 0;  // readings taken (each with its channel-match step)

Outcome read_part(const tb::dsp::CardFaults& card, std::uint64_t noise_seed,
                  const tb::dsp::Netlist& part, double rref, const Options& opt) {
  ++g_readings;
  return tb::bench::read_against_truth(part, tb::StreamSpec{}.sample_rate_hz, [&] {
    tb::SimulatedBenchConfig cfg;
    cfg.card = card;
    cfg.jig.layout = tb::dsp::Layout::part_low;
    cfg.jig.rref_ohm = rref;
    cfg.part = part;
    cfg.noise_seed = noise_seed;
    tb::SimulatedCard sim(cfg);

    tb::MeasureRequest req;
    req.freq_hz = kFreqHz;
    req.duration_s = opt.tone_s;
    req.layout = tb::dsp::Layout::part_low;
    req.rref_ohm = rref;

    // Channel match: both inputs moved onto node A with the part left in place, then the
    // part connection restored (each reconnection moves the leads a little).
    if (opt.open_short) return tb::measure_on_bench(sim, cfg.jig, part, req, {});
    tb::dsp::JigSetup jig = cfg.jig;
    jig.inputs_on_node_a = true;
    sim.reconnect(jig, part);
    const auto match = tb::measure_channel_match(sim, req);
    jig.inputs_on_node_a = false;
    sim.reconnect(jig, part);
    return tb::measure_once(sim, req, match);
  });
}

struct Point {
  Family family;
  double z_mag;
  double rref;
  tb::dsp::Netlist netlist;
};

std::vector<Point> ladder(const Options& opt) {
  const std::vector<double> full = {1, 3, 10, 30, 100, 300, 1e3, 3e3, 10e3, 30e3, 100e3};
  const std::vector<double> quick = {1, 10, 1e3, 10e3, 100e3};
  std::vector<Point> pts;
  for (Family f : {Family::resistor, Family::capacitor, Family::inductor}) {
    for (double z : opt.quick ? quick : full) {
      pts.push_back({f, z, nearest_rref(z), tb::dsp::parse_part(part_text(f, z)).netlist});
    }
  }
  return pts;
}

std::uint64_t noise_seed_for(std::uint64_t card_seed) {
  return card_seed * 1000003 + 11;
}

// ---------------------------------------------------------------------------------------
// Tiers

struct Tier {
  const char* name;
  double lo, hi;              // |Z| range, ohm (inclusive)
  double mag_pct, theta_deg;  // targets
};
const Tier kTiers[] = {{"10 Ω – 10 kΩ", 10, 10e3, 0.1, 0.1}, {"1 Ω – 100 kΩ", 1, 100e3, 0.5, 0.5}};

struct Worst {
  double mag = 0, theta = 0;
  std::string mag_at, theta_at;
  int failures = 0;
};

std::string label(const Point& p) {
  return std::string(family_name(p.family)) + " " + si(p.z_mag) + " Ω";
}

// Worst absolute errors of the points inside the tier; outcomes[i] belongs to points[i].
Worst worst_in(const Tier& t, const std::vector<Point>& points,
               const std::vector<std::vector<Outcome>>& outcomes) {
  Worst w;
  for (std::size_t i = 0; i < points.size(); ++i) {
    if (points[i].z_mag < t.lo || points[i].z_mag > t.hi) continue;
    for (const auto& o : outcomes[i]) {
      if (!o.ok) {
        ++w.failures;
        continue;
      }
      if (std::abs(o.mag_err_pct) > w.mag) {
        w.mag = std::abs(o.mag_err_pct);
        w.mag_at = label(points[i]);
      }
      if (std::abs(o.theta_err_deg) > w.theta) {
        w.theta = std::abs(o.theta_err_deg);
        w.theta_at = label(points[i]);
      }
    }
  }
  return w;
}

void print_tiers(const std::vector<Point>& points,
                 const std::vector<std::vector<Outcome>>& outcomes) {
  std::printf("| tier | target | worst \\|Z\\| error | at | worst θ error | at | met |\n");
  std::printf("|---|---|---:|---|---:|---|---|\n");
  for (const auto& t : kTiers) {
    const Worst w = worst_in(t, points, outcomes);
    const bool met = w.failures == 0 && w.mag <= t.mag_pct && w.theta <= t.theta_deg;
    std::printf("| %s | ≤ %.1f %%, ≤ %.1f° | %.3g %% | %s | %.3g° | %s | %s%s |\n", t.name,
                t.mag_pct, t.theta_deg, w.mag, w.mag_at.c_str(), w.theta, w.theta_at.c_str(),
                met ? "yes" : "no",
                w.failures ? (" (" + std::to_string(w.failures) + " failed)").c_str() : "");
  }
}

// ---------------------------------------------------------------------------------------
// Section 1

void accuracy(const Options& opt) {
  const auto points = ladder(opt);
  const auto card1 = tb::dsp::draw_card_faults({.seed = 1});
  const auto t_start = std::chrono::steady_clock::now();

  std::printf("## Accuracy at %g Hz, part-low, channel match%s applied\n\n", kFreqHz,
              opt.open_short ? " and open/short" : "");
  std::printf(
      "Seed-1 card: input A %.1f kΩ ∥ %.0f pF, input B %.1f kΩ ∥ %.0f pF, leads %.1f mΩ per "
      "side (±%.0f mΩ per reconnection), crosstalk %.0f dB, %d-bit, output %.1f Ω.\n\n",
      card1.in_resistance_ohm[0] / 1e3, card1.in_capacitance_f[0] * 1e12,
      card1.in_resistance_ohm[1] / 1e3, card1.in_capacitance_f[1] * 1e12,
      card1.lead_resistance_ohm * 1e3, card1.lead_jitter_ohm * 1e3,
      20 * std::log10(card1.crosstalk), card1.bits, card1.out_resistance_ohm);

  // Seed 1 in detail.
  std::vector<std::vector<Outcome>> one(points.size());
  std::printf("### Card seed 1\n\n");
  std::printf(
      "| part | \\|Z\\| (Ω) | Rref (Ω) | \\|Z\\| error (%%) | U(\\|Z\\|) (%%) | θ error (°) | "
      "U(θ) (°) | error within U |\n");
  std::printf("|---|---:|---:|---:|---:|---:|---:|---|\n");
  for (std::size_t i = 0; i < points.size(); ++i) {
    const auto& p = points[i];
    const Outcome o = read_part(card1, noise_seed_for(1), p.netlist, p.rref, opt);
    one[i].push_back(o);
    if (!o.ok) {
      std::printf("| %s | %s | %s | failed: %s | | | | |\n", family_name(p.family),
                  si(p.z_mag).c_str(), si(p.rref).c_str(), o.failure.c_str());
    } else {
      std::printf("| %s | %s | %s | %+.4f | %.4f | %+.4f | %.4f | %s |\n", family_name(p.family),
                  si(p.z_mag).c_str(), si(p.rref).c_str(), o.mag_err_pct, o.u_mag_pct,
                  o.theta_err_deg, o.u_theta_deg, o.within_u() ? "yes" : "no");
    }
    std::fflush(stdout);
  }
  std::printf("\n");
  print_tiers(points, one);
  std::printf("\n");

  // Seeds 1..N: mean and worst of the absolute errors per part.
  std::vector<std::vector<Outcome>> many(points.size());
  for (int s = 1; s <= opt.seeds; ++s) {
    const auto card = tb::dsp::draw_card_faults({.seed = static_cast<std::uint64_t>(s)});
    for (std::size_t i = 0; i < points.size(); ++i) {
      if (s == 1) {
        many[i].push_back(one[i].front());  // the same card, noise and part as above
        continue;
      }
      many[i].push_back(read_part(card, noise_seed_for(static_cast<std::uint64_t>(s)),
                                  points[i].netlist, points[i].rref, opt));
    }
  }
  std::printf("### Card seeds 1..%d (mean and max of the absolute errors)\n\n", opt.seeds);
  std::printf(
      "| seed | input B | leads per side | crosstalk | bits |\n|---:|---|---:|---:|---:|\n");
  for (int s = 1; s <= opt.seeds; ++s) {
    const auto c = tb::dsp::draw_card_faults({.seed = static_cast<std::uint64_t>(s)});
    std::printf("| %d | %.1f kΩ ∥ %.0f pF | %.1f mΩ | %.0f dB | %d |\n", s,
                c.in_resistance_ohm[1] / 1e3, c.in_capacitance_f[1] * 1e12,
                c.lead_resistance_ohm * 1e3, 20 * std::log10(c.crosstalk), c.bits);
  }
  std::printf("\n");
  std::printf(
      "| part | \\|Z\\| (Ω) | Rref (Ω) | mean \\|Z\\| err (%%) | max \\|Z\\| err (%%) | mean "
      "U(\\|Z\\|) (%%) | mean θ err (°) | max θ err (°) | mean U(θ) (°) | within U |\n");
  std::printf("|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|\n");
  for (std::size_t i = 0; i < points.size(); ++i) {
    const auto& p = points[i];
    double sm = 0, mm = 0, su = 0, st = 0, mt = 0, sut = 0;
    int n = 0, inside = 0, failed = 0;
    for (const auto& o : many[i]) {
      if (!o.ok) {
        ++failed;
        continue;
      }
      ++n;
      sm += std::abs(o.mag_err_pct);
      mm = std::max(mm, std::abs(o.mag_err_pct));
      su += o.u_mag_pct;
      st += std::abs(o.theta_err_deg);
      mt = std::max(mt, std::abs(o.theta_err_deg));
      sut += o.u_theta_deg;
      inside += o.within_u() ? 1 : 0;
    }
    const double dn = std::max(n, 1);
    std::printf("| %s | %s | %s | %.4f | %.4f | %.4f | %.4f | %.4f | %.4f | %d/%d%s |\n",
                family_name(p.family), si(p.z_mag).c_str(), si(p.rref).c_str(), sm / dn, mm,
                su / dn, st / dn, mt, sut / dn, inside, n,
                failed ? (", " + std::to_string(failed) + " failed").c_str() : "");
  }
  std::printf("\n");
  print_tiers(points, many);
  std::printf("\n");

  // Which fault limits the ends: the seed-1 card with single faults switched off.
  // Only input B's load enters the ratio in part-low (input A sits on the driven node, which
  // it reads directly). Input B gets 1 Tohm instead of no element: node A keeps its load,
  // so the output coupling capacitor settles as fast as with the card as drawn.
  const auto unload = [](tb::dsp::CardFaults& c) {
    c.in_resistance_ohm[1] = 1e12;
    c.in_capacitance_f[1] = 0;
  };
  struct Variant {
    const char* name;
    std::function<void(tb::dsp::CardFaults&)> change;
  };
  const Variant variants[] = {
      {"seed-1 card as drawn", [](tb::dsp::CardFaults&) {}},
      {"input B not loading (1 TΩ, no Cin)", [&](tb::dsp::CardFaults& c) { unload(c); }},
      {"no lead resistance",
       [](tb::dsp::CardFaults& c) { c.lead_resistance_ohm = c.lead_jitter_ohm = 0; }},
      {"neither B loading nor leads",
       [&](tb::dsp::CardFaults& c) {
         unload(c);
         c.lead_resistance_ohm = c.lead_jitter_ohm = 0;
       }},
      {"neither, and no crosstalk",
       [&](tb::dsp::CardFaults& c) {
         unload(c);
         c.lead_resistance_ohm = c.lead_jitter_ohm = 0;
         c.crosstalk = 0;
       }},
      {"ideal card", [](tb::dsp::CardFaults& c) { c = tb::dsp::ideal_card(); }},
  };
  std::printf("### Which fault limits the ends (seed-1 card, single faults switched off)\n\n");
  std::printf(
      "| card | 10 Ω–10 kΩ worst \\|Z\\| / θ | 1 Ω–100 kΩ worst \\|Z\\| / θ | 1 Ω part "
      "\\|Z\\| / θ (worst family) | 100 kΩ part \\|Z\\| / θ (worst family) |\n");
  std::printf("|---|---|---|---|---|\n");
  std::string notes;
  for (const auto& v : variants) {
    auto card = card1;
    v.change(card);
    const bool as_drawn = &v == &variants[0];
    std::vector<std::vector<Outcome>> out(points.size());
    for (std::size_t i = 0; i < points.size(); ++i) {
      out[i].push_back(
          as_drawn ? one[i].front()
                   : read_part(card, noise_seed_for(1), points[i].netlist, points[i].rref, opt));
    }
    std::string cells;
    char buf[96];
    for (const auto& t : kTiers) {
      const Worst w = worst_in(t, points, out);
      std::snprintf(buf, sizeof buf, " %.3g %% / %.3g°%s |", w.mag, w.theta,
                    w.failures ? " (failures)" : "");
      cells += buf;
      for (std::size_t i = 0; i < points.size(); ++i)
        if (!out[i].front().ok && &t == &kTiers[1])
          notes += std::string("- ") + v.name + ", " + label(points[i]) + ": failed, " +
                   out[i].front().failure + "\n";
    }
    for (double end : {1.0, 100e3}) {
      const Tier only{"", end, end, 0, 0};
      const Worst w = worst_in(only, points, out);
      std::snprintf(buf, sizeof buf, " %.3g %% / %.3g° |", w.mag, w.theta);
      cells += buf;
    }
    std::printf("| %s |%s\n", v.name, cells.c_str());
    std::fflush(stdout);
  }
  if (!notes.empty()) std::printf("\n%s", notes.c_str());
  const double wall =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - t_start).count();
  std::printf(
      "\n(accuracy section: %d readings, each with its channel-match step, in %.0f s wall: "
      "%.2f s per reading)\n\n",
      g_readings, wall, wall / std::max(g_readings, 1));
}

// ---------------------------------------------------------------------------------------
// Section 2

double cpu_seconds() {
  timespec ts{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

volatile double g_sink = 0;

struct Speed {
  double wall_x = 0, cpu_x = 0;
};

Speed render_speed(double fs, const Options& opt) {
  tb::SimulatedBenchConfig cfg;
  cfg.card = tb::dsp::draw_card_faults({.seed = 1});
  cfg.jig.rref_ohm = 100;
  cfg.part = tb::dsp::parse_part("cap 1u esr 0.1").netlist;
  tb::SimulatedCard sim(cfg);
  const tb::StreamSpec spec{.sample_rate_hz = fs, .period_frames = 256};
  if (fs != 48000) {
    // The bench is built at 48 kHz; starting a stream at another rate rebuilds it there.
    sim.start(spec, [](std::span<const float>, std::span<const float>, std::span<float>) {
      return true;
    });
    sim.stop();
  }
  std::vector<float> out(spec.period_frames), a(spec.period_frames), b(spec.period_frames);
  const auto periods = static_cast<std::size_t>(
      std::ceil(opt.render_s * fs / static_cast<double>(spec.period_frames)));
  const double audio_s = static_cast<double>(periods * spec.period_frames) / fs;
  const double dphi = 2 * std::numbers::pi * kFreqHz / fs;
  std::uint64_t n = 0;
  Speed best;
  for (int run = 0; run < opt.render_runs; ++run) {
    double sum = 0;
    const double c0 = cpu_seconds();
    const auto w0 = std::chrono::steady_clock::now();
    for (std::size_t p = 0; p < periods; ++p) {
      for (auto& x : out)
        x = static_cast<float>(0.5 * std::sin(dphi * static_cast<double>(n++)));
      sim.render(out, a, b);
      sum += a[0] + b[spec.period_frames - 1];
    }
    const double cpu = cpu_seconds() - c0;
    const double wall =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - w0).count();
    g_sink = g_sink + sum;
    best.wall_x = std::max(best.wall_x, audio_s / wall);
    best.cpu_x = std::max(best.cpu_x, audio_s / cpu);
  }
  return best;
}

void speed(const Options& opt) {
  std::printf("## Simulated bench speed (SimulatedCard::render, cap 1 µF on Rref 100 Ω)\n\n");
  std::printf("| fs (kHz) | x real time (wall) | x real time (CPU) | µs per frame (CPU) |\n");
  std::printf("|---:|---:|---:|---:|\n");
  for (double fs : {48000.0, 96000.0}) {
    const Speed s = render_speed(fs, opt);
    std::printf("| %g | %.1f | %.1f | %.2f |\n", fs / 1e3, s.wall_x, s.cpu_x, 1e6 / (s.cpu_x * fs));
    std::fflush(stdout);
  }
  std::printf("\n(%g s of audio per run, best of %d runs)\n\n", opt.render_s, opt.render_runs);
}

}  // namespace

int main(int argc, char** argv) {
  Options opt;
  int seeds = 0;
  for (int i = 1; i < argc; ++i) {
    if (std::strcmp(argv[i], "--quick") == 0) {
      opt.quick = true;
      opt.seeds = 2;
      opt.tone_s = 0.2;
      opt.render_s = 0.25;
      opt.render_runs = 1;
    } else if (std::strcmp(argv[i], "--open-short") == 0) {
      opt.open_short = true;
    } else if (std::strcmp(argv[i], "--seeds") == 0 && i + 1 < argc) {
      seeds = std::max(1, std::atoi(argv[++i]));
    } else {
      std::printf("usage: tonebridge-sim-bench [--quick] [--seeds N] [--open-short]\n");
      return 0;
    }
  }
  if (seeds > 0) opt.seeds = seeds;
  std::printf("# tonebridge-sim-bench%s\n\nmachine: %u hardware threads, CPU %s\n\n",
              opt.quick ? " --quick (smoke run, rough figures)" : "",
              std::thread::hardware_concurrency(), tb::bench::cpu_model().c_str());
  speed(opt);
  accuracy(opt);
  return 0;
}
