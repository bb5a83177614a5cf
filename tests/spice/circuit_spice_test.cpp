// Outside reference for the circuit model (dsp/circuit.hpp): ngspice 39 solves the same
// netlists, in AC and in the time domain, and our solver must agree with it.
#include "dsp/circuit.hpp"
#include "tests/support/spice.hpp"

#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>
#include <stdexcept>
#include <string>
#include <vector>

using namespace tb::dsp;
using tb::test::spice_value;
using cplx = std::complex<double>;

namespace {

constexpr double kPi = std::numbers::pi;

Element res(std::string name, std::string p, std::string n, double ohm) {
  return {ElementKind::resistor, std::move(name), std::move(p), std::move(n), ohm};
}
Element cap(std::string name, std::string p, std::string n, double farad) {
  return {ElementKind::capacitor, std::move(name), std::move(p), std::move(n), farad};
}
Element ind(std::string name, std::string p, std::string n, double henry) {
  return {ElementKind::inductor, std::move(name), std::move(p), std::move(n), henry};
}
Element src(std::string name, std::string p, std::string n) {
  return {ElementKind::voltage_source, std::move(name), std::move(p), std::move(n), 0.0};
}

// The same netlist as ngspice element lines; source k gets the text source_specs[k] after
// its nodes (an AC magnitude and phase, or a PWL waveform). Element names already start
// with SPICE's type letter.
std::string to_spice(const Netlist& net, const std::vector<std::string>& source_specs) {
  static const char kLetter[] = {'R', 'L', 'C', 'V'};
  std::string text;
  std::size_t source = 0;
  for (const Element& e : net.elements) {
    const char letter = kLetter[static_cast<int>(e.kind)];
    if (e.name.empty() || e.name[0] != letter) {
      throw std::invalid_argument("test netlist: " + e.name + " should start with " + letter);
    }
    text += e.name + " " + e.node_p + " " + e.node_n + " ";
    text +=
        e.kind == ElementKind::voltage_source ? source_specs.at(source++) : spice_value(e.value);
    text += "\n";
  }
  return text;
}

// Both card inputs, 47 kohm || 100 pF, on the jig's nodes a and b.
void add_card_inputs(Netlist& net) {
  for (const char* node : {"a", "b"}) {
    net.elements.push_back(res(std::string("Rin") + node, node, "0", 47e3));
    net.elements.push_back(cap(std::string("Cin") + node, node, "0", 100e-12));
  }
}

struct Case {
  std::string name;
  Netlist net;
};

// The jig (card output 47 ohm into node a; Rref and the part in either layout) with parts
// a technician measures.
std::vector<Case> jig_cases() {
  Case cap_low{"part low: 4.7 uF, 0.05 ohm ESR, 20 nH ESL, Rref 100 ohm",
               {{src("Vout", "s", "0"), res("Rout", "s", "a", 47.0), res("Rref", "a", "b", 100.0),
                 res("Resr", "b", "m1", 0.05), ind("Lesl", "m1", "m2", 20e-9),
                 cap("Cpart", "m2", "0", 4.7e-6)}}};
  Case coil_high{"part high: 100 mH, 20 ohm winding, 1 nF self-capacitance, Rref 1 kohm",
                 {{src("Vout", "s", "0"), res("Rout", "s", "a", 47.0), res("Rw", "a", "m", 20.0),
                   ind("Lcoil", "m", "b", 100e-3), cap("Cself", "a", "b", 1e-9),
                   res("Rref", "b", "0", 1000.0)}}};
  // Electrical model of a driver: Re + Le, then the motional impedance as Res || Ces || Les
  // (resonance near 1 / (2 pi sqrt(20 mH * 400 uF)) = 56 Hz).
  Case speaker{
      "part low: loudspeaker Re 6.2 ohm, Le 0.5 mH, Res 40 ohm, Ces 400 uF, Les 20 mH",
      {{src("Vout", "s", "0"), res("Rout", "s", "a", 47.0), res("Rref", "a", "b", 10.0),
        res("Re", "b", "m1", 6.2), ind("Le", "m1", "m2", 0.5e-3), res("Res", "m2", "0", 40.0),
        cap("Ces", "m2", "0", 400e-6), ind("Les", "m2", "0", 20e-3)}}};
  for (Case* c : {&cap_low, &coil_high, &speaker})
    add_card_inputs(c->net);
  return {cap_low, coil_high, speaker};
}

// All nodes but ground, by name, in our numbering.
std::vector<std::string> node_names(const Circuit& circuit) {
  std::vector<std::string> names;
  for (std::size_t n = 1; n < circuit.node_count(); ++n)
    names.push_back(circuit.node_name(n));
  return names;
}

// ngspice source following the samples, linear in between: exactly what our stepper feeds
// the circuit (a SIN source would differ by the interpolation itself, 5 % of the amplitude
// at 5 kHz).
std::string pwl(const std::vector<double>& samples, double fs) {
  std::string text = "PWL(";
  for (std::size_t n = 0; n < samples.size(); ++n) {
    text += (n % 4 == 0 ? "\n+ " : " ") + spice_value(static_cast<double>(n) / fs) + " " +
            spice_value(samples[n]);
  }
  return text + ")";
}

// A sine source from t = 0: amplitude sin(2 pi f t).
struct Sine {
  double amplitude, freq_hz;
  double at(double t) const { return amplitude * std::sin(2 * kPi * freq_hz * t); }
};

enum class Drive {
  // ngspice gets a PWL source through the samples; we call step() (linear interpolation):
  // the same excitation on both sides.
  sampled,
  // ngspice gets SIN sources; we call step_oversampled() with the sine at every internal
  // step: a band-limited excitation, different only by our linear interpolation over
  // 1/(64 fs).
  exact_sine,
};

// Our stepper (oversample 64) against ngspice's transient (maximum step 1/(64 fs)) for the
// netlist driven by the given sines, one per voltage source; returns the largest difference
// over all nodes and samples.
double transient_difference(const Netlist& net, const std::vector<Sine>& sines, double fs,
                            std::size_t count, Drive drive) {
  constexpr int kOversample = 64;
  const Circuit circuit(net);
  REQUIRE(circuit.source_count() == sines.size());
  std::vector<std::string> specs;
  for (const Sine& sine : sines) {
    if (drive == Drive::sampled) {
      std::vector<double> samples(count + 1);
      for (std::size_t n = 0; n <= count; ++n)
        samples[n] = sine.at(static_cast<double>(n) / fs);
      specs.push_back(pwl(samples, fs));
    } else {
      specs.push_back("SIN(0 " + spice_value(sine.amplitude) + " " + spice_value(sine.freq_hz) +
                      ")");
    }
  }
  const auto names = node_names(circuit);
  const auto spice = tb::test::spice_transient(to_spice(net, specs), names, fs,
                                               static_cast<double>(count) / fs, kOversample);
  REQUIRE(spice.v.size() == names.size());

  TransientSolver sim(circuit, fs, kOversample);
  const std::size_t ns = sines.size();
  std::vector<double> values(ns), fine(kOversample * ns);
  double worst = 0;
  for (std::size_t n = 0; n < count; ++n) {
    if (n > 0) {
      if (drive == Drive::sampled) {
        for (std::size_t k = 0; k < ns; ++k)
          values[k] = sines[k].at(static_cast<double>(n) / fs);
        sim.step(values);
      } else {
        for (std::size_t j = 1; j <= kOversample; ++j) {
          const double t = (static_cast<double>(n - 1) + static_cast<double>(j) / kOversample) / fs;
          for (std::size_t k = 0; k < ns; ++k)
            fine[(j - 1) * ns + k] = sines[k].at(t);
        }
        sim.step_oversampled(fine);
      }
    }
    for (std::size_t node = 1; node < circuit.node_count(); ++node)
      worst = std::max(worst, std::abs(sim.voltage(node) - spice.v[node - 1].at(n)));
  }
  return worst;
}

// The transient check: a 1 kHz and a 5 kHz sine of 0.5 V from t = 0, 20 ms at 48 kHz,
// into jig case `which`; the worst difference must stay within 1e-4 of the amplitude.
void check_transient(std::size_t which, Drive drive) {
  REQUIRE(tb::test::ngspice_available());
  const Case c = jig_cases().at(which);
  const double fs = 48000.0, amp = 0.5;
  for (double f : {1000.0, 5000.0}) {
    const double worst = transient_difference(c.net, {{amp, f}}, fs, 960, drive) / amp;
    INFO(c.name << ", " << f << " Hz: worst difference " << worst << " of the amplitude");
    // Source: ngspice 39 (independent circuit simulator)
    CHECK(worst <= 1e-4);
  }
}

}  // namespace

TEST_CASE("circuit AC node voltages agree with ngspice on jig circuits", "[spice][circuit]") {
  REQUIRE(tb::test::ngspice_available());
  const std::vector<double> freqs = {20.0, 56.0, 100.0, 1000.0, 5000.0, 15000.0, 20000.0};
  const cplx vout = std::polar(0.5, 0.3);
  const std::string vout_spec =
      "dc 0 ac " + spice_value(std::abs(vout)) + " " + spice_value(std::arg(vout) * 180 / kPi);
  for (const Case& c : jig_cases()) {
    INFO(c.name);
    const Circuit circuit(c.net);
    const auto names = node_names(circuit);
    const auto points = tb::test::spice_ac(to_spice(c.net, {vout_spec}), names, freqs);
    REQUIRE(points.size() == freqs.size());
    double worst = 0;
    for (std::size_t i = 0; i < freqs.size(); ++i) {
      const auto v = circuit.solve_ac(freqs[i], {vout});
      for (std::size_t node = 1; node < circuit.node_count(); ++node) {
        INFO(freqs[i] << " Hz, node " << names[node - 1] << ": ours " << v[node] << ", ngspice "
                      << points[i].v[node - 1]);
        const double err =
            std::abs(v[node] - points[i].v[node - 1]) / std::abs(points[i].v[node - 1]);
        worst = std::max(worst, err);
        // Source: ngspice 39 (independent circuit simulator)
        CHECK(err < 1e-6);
      }
    }
    UNSCOPED_INFO(c.name << ": worst relative AC difference " << worst);
  }
}

TEST_CASE("circuit AC with two sources agrees with ngspice, sources in netlist order",
          "[spice][circuit]") {
  REQUIRE(tb::test::ngspice_available());
  // The capacitor jig with 50 Hz hum coupled into node b through 2 pF.
  Netlist net = jig_cases().front().net;
  net.elements.push_back(src("Vhum", "h", "0"));
  net.elements.push_back(cap("Chum", "h", "b", 2e-12));
  const Circuit circuit(net);
  const cplx vout = 1.0, vhum = std::polar(30.0, 40.0 * kPi / 180);
  const auto names = node_names(circuit);
  const auto points =
      tb::test::spice_ac(to_spice(net, {"dc 0 ac 1 0", "dc 0 ac 30 40"}), names, {50.0, 20000.0});
  for (std::size_t i = 0; i < points.size(); ++i) {
    const auto v = circuit.solve_ac(points[i].freq_hz, {vout, vhum});
    for (std::size_t node = 1; node < circuit.node_count(); ++node) {
      INFO(points[i].freq_hz << " Hz, node " << names[node - 1]);
      // Source: ngspice 39 (independent circuit simulator)
      CHECK(std::abs(v[node] - points[i].v[node - 1]) < 1e-6 * std::abs(points[i].v[node - 1]));
    }
  }
}

// Observed worst differences over all nodes and samples, relative to the amplitude:
//
//                     sampled (PWL / step)     exact sine (SIN / step_oversampled)
//                     1 kHz      5 kHz         1 kHz      5 kHz
//   capacitor jig     1.2e-6     5.4e-6        1.2e-6     7.8e-6
//   coil jig          6.8e-8     3.3e-7        6.4e-7     1.3e-5
//   loudspeaker jig   1.9e-7     8.9e-7        3.7e-7     1.3e-5
//
// The exact-sine column carries our linear interpolation over 1/(64 fs), up to
// (w dt)^2 / 8 = 1.3e-5 at 5 kHz; in the capacitor jig the stiff card inputs (100 pF behind
// 47 ohm, tau = 4.7 ns against dt = 325 ns) dominate.

TEST_CASE("circuit transient agrees with ngspice, sampled drive: capacitor jig",
          "[spice][circuit]") {
  check_transient(0, Drive::sampled);
}

TEST_CASE("circuit transient agrees with ngspice, sine drive: capacitor jig", "[spice][circuit]") {
  check_transient(0, Drive::exact_sine);
}

TEST_CASE("circuit transient agrees with ngspice, sampled drive: coil jig", "[spice][circuit]") {
  check_transient(1, Drive::sampled);
}

TEST_CASE("circuit transient agrees with ngspice, sine drive: coil jig", "[spice][circuit]") {
  check_transient(1, Drive::exact_sine);
}

TEST_CASE("circuit transient agrees with ngspice, sampled drive: loudspeaker jig",
          "[spice][circuit]") {
  check_transient(2, Drive::sampled);
}

TEST_CASE("circuit transient agrees with ngspice, sine drive: loudspeaker jig",
          "[spice][circuit]") {
  check_transient(2, Drive::exact_sine);
}

TEST_CASE("circuit transient with two sources agrees with ngspice", "[spice][circuit]") {
  REQUIRE(tb::test::ngspice_available());
  // The capacitor jig at 1 kHz with 50 Hz hum coupled into node b, sources in netlist order.
  Netlist net = jig_cases().front().net;
  net.elements.push_back(src("Vhum", "h", "0"));
  net.elements.push_back(cap("Chum", "h", "b", 2e-12));
  const double worst =
      transient_difference(net, {{0.5, 1000.0}, {30.0, 50.0}}, 48000.0, 960, Drive::sampled);
  INFO("worst difference " << worst / 0.5 << " of the signal amplitude");
  // Source: ngspice 39 (independent circuit simulator)
  CHECK(worst <= 1e-4 * 0.5);
}
