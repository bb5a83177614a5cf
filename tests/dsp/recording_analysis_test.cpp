#include "dsp/recording_analysis.hpp"

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>

#include "tests/support/signals.hpp"

using namespace tb::dsp;
using tb::test::JigSignalSpec;
using tb::test::make_jig_signal;
using tb::test::vector_error;
using cplx = std::complex<double>;

namespace {

// A film capacitor with ESR and ESL: Z = R + j(wL - 1/(wC)).
auto cap(double c, double esr, double esl = 0) {
  return [=](double f) {
    const double w = 2 * std::numbers::pi * f;
    return cplx{esr, w * esl - 1 / (w * c)};
  };
}

AnalysisConfig config_for(const JigSignalSpec& s) {
  AnalysisConfig c;
  c.sample_rate_hz = s.sample_rate_hz;
  c.bridge.layout = s.layout;
  c.bridge.rref_ohm = s.rref_ohm;
  return c;
}

}  // namespace

TEST_CASE("a single coherent tone between silences is found and measured exactly", "[analysis]") {
  JigSignalSpec s;
  s.z_of_f = cap(2.2e-6, 0.05);
  s.rref_ohm = 100;
  s.lead_silence_s = 0.3;
  s.tail_silence_s = 0.2;
  s.fade_s = 0.02;
  const auto sig = make_jig_signal(s);
  const auto res = analyze_recording(sig.a, sig.b, config_for(s));
  REQUIRE(res.readings.size() == 1);
  const auto& r = res.readings[0];
  CHECK(r.freq_hz == Approx(1000).margin(1e-6));
  CHECK(r.coherent);
  CHECK(r.window == Window::rectangular);
  // The fade-out inside the last blocks leaks a few 1e-7 (below the settling floor).
  CHECK(vector_error(r.z.value, s.z_of_f(1000)) < 1e-6);
  CHECK(r.kind == PartKind::capacitor);
  CHECK(r.values.cs_f == Approx(2.2e-6).epsilon(1e-7));
  CHECK(static_cast<double>(res.active_begin) / s.sample_rate_hz == Approx(0.3).margin(0.03));
}

TEST_CASE("noise gives a Type A uncertainty that covers the truth", "[analysis]") {
  JigSignalSpec s;
  s.z_of_f = [](double) { return cplx{470, 0}; };
  s.rref_ohm = 1000;
  s.noise_rms = 1e-4;
  s.duration_s = 2;
  s.freqs_hz = {120};
  s.seed = 77;
  auto c = config_for(s);
  c.rref_tolerance_rel = 0;  // the truth here is relative to the nominal Rref
  const auto sig = make_jig_signal(s);
  const auto r = analyze_recording(sig.a, sig.b, c).readings.at(0);
  CHECK(r.kind == PartKind::resistor);
  CHECK(r.u_mag.u_a > 0);
  CHECK(r.u_mag.nu_eff == Approx(static_cast<double>(r.blocks_used - 1)).epsilon(1e-6));
  CHECK(r.u_mag.k > 2.0);  // few blocks: Student t, not the normal k = 2
  CHECK(std::abs(r.values.mag_ohm - 470) < r.u_mag.expanded * 1.5);
  CHECK(r.x_below_resolution);
  CHECK(r.snr_a_db > 60);
}

TEST_CASE("a multisine's tones are each measured", "[analysis]") {
  JigSignalSpec s;
  s.z_of_f = cap(1e-6, 0.2, 20e-9);
  s.rref_ohm = 220;
  s.freqs_hz = {100, 300, 1000, 3000, 9000};
  s.amplitudes = std::vector<double>(5, 0.15);
  s.phases_rad = {0, 1, 2, 3, 4};
  s.duration_s = 1;
  const auto sig = make_jig_signal(s);
  const auto res = analyze_recording(sig.a, sig.b, config_for(s));
  REQUIRE(res.readings.size() == 5);
  for (std::size_t k = 0; k < 5; ++k) {
    CHECK(res.readings[k].freq_hz == Approx(s.freqs_hz[k]).epsilon(1e-7));
    CHECK(vector_error(res.readings[k].z.value, s.z_of_f(s.freqs_hz[k])) < 1e-6);
  }
}

TEST_CASE("a recorder clock 300 ppm off is tracked", "[analysis]") {
  // The tone is 1 kHz but the recording calls it 1000.3 Hz (the recorder's clock is
  // slow), so no block holds whole periods and the frequency must be found.
  JigSignalSpec s;
  s.z_of_f = cap(4.7e-6, 0.1);
  s.rref_ohm = 47;
  s.clock_ppm = -300;
  s.noise_rms = 1e-5;
  s.freqs_hz = {1000, 2500};
  s.amplitudes = {0.3, 0.2};
  const auto sig = make_jig_signal(s);
  const auto res = analyze_recording(sig.a, sig.b, config_for(s));
  REQUIRE(res.readings.size() == 2);
  CHECK(res.readings[0].freq_hz == Approx(1000 * (1 + 300e-6)).epsilon(1e-7));
  CHECK(vector_error(res.readings[0].z.value, s.z_of_f(1000)) < 1e-3);
  CHECK(vector_error(res.readings[1].z.value, s.z_of_f(2500)) < 1e-3);
}

TEST_CASE("part-high layout and forced kind", "[analysis]") {
  JigSignalSpec s;
  s.z_of_f = [](double f) { return cplx{3.0, 2 * std::numbers::pi * f * 1e-3}; };
  s.layout = Layout::part_high;
  s.rref_ohm = 10;
  const auto sig = make_jig_signal(s);
  auto c = config_for(s);
  c.force_kind = PartKind::resistor;
  const auto r = analyze_recording(sig.a, sig.b, c).readings.at(0);
  CHECK(vector_error(r.z.value, s.z_of_f(1000)) < 1e-8);
  CHECK(r.kind == PartKind::resistor);
  CHECK(r.kind_forced);
  CHECK(r.values.ls_h == Approx(1e-3).epsilon(1e-7));
}

TEST_CASE("bad recordings get named errors", "[analysis]") {
  JigSignalSpec s;
  s.z_of_f = [](double) { return cplx{100, 0}; };
  s.amplitudes = {1.3};
  auto sig = make_jig_signal(s);
  for (auto* ch : {&sig.a, &sig.b})
    for (auto& v : *ch)
      v = std::clamp(v, -1.0, 1.0);
  auto id_of = [](auto&& fn) {
    try {
      fn();
    } catch (const AnalysisError& e) {
      return e.id();
    }
    return std::string("none");
  };
  CHECK(id_of([&] { analyze_recording(sig.a, sig.b, config_for(s)); }) == "recording.clipped");
  const std::vector<double> silent(48000, 0.0);
  CHECK(id_of([&] { analyze_recording(silent, silent, config_for(s)); }) == "recording.silent");
  s.amplitudes = {0.5};
  sig = make_jig_signal(s);
  CHECK(id_of([&] { analyze_recording(silent, sig.a, config_for(s)); }) == "recording.silent");
  auto c = config_for(s);
  c.tones_hz = {3000};
  CHECK(id_of([&] { analyze_recording(sig.a, sig.b, c); }) == "recording.no_tone");
  std::vector<double> too_short(sig.a.begin(), sig.a.begin() + 200);
  CHECK(id_of([&] { analyze_recording(too_short, too_short, config_for(s)); }) ==
        "recording.too_short");
  CHECK_THROWS_AS(analyze_recording(sig.a, std::span(sig.b).first(10), config_for(s)),
                  std::invalid_argument);
}

TEST_CASE("a tone whose frequency wanders is refused with a reason", "[analysis]") {
  // A generator sweeping 3 % across the recording is not a measuring tone.
  const double fs = 48000;
  std::vector<double> a(96000), b(96000);
  double phase = 0;
  for (std::size_t i = 0; i < a.size(); ++i) {
    const double f = 1000 * (1 + 0.03 * static_cast<double>(i) / static_cast<double>(a.size()));
    a[i] = 0.4 * std::cos(phase);
    b[i] = 0.2 * std::cos(phase - 0.5);
    phase += 2 * std::numbers::pi * f / fs;
  }
  AnalysisConfig c;
  c.tones_hz = {1015};
  try {
    analyze_recording(a, b, c);
    FAIL("a wandering tone was accepted");
  } catch (const AnalysisError& e) {
    CHECK((e.id() == "recording.clock_wander" || e.id() == "recording.no_tone"));
    CHECK_FALSE(e.hint().empty());
  }
}

TEST_CASE("the reference's tempco and inductance enter the Type B budget", "[analysis]") {
  // 50 ohm resistor against 100 ohm, part-low, 10 kHz. Z = Rref r / (1 - r) is linear in
  // Rref (bridge.hpp, divider formula), so dZ/d(Rref, relative) = Z and, for a series
  // reactance j w L added to Rref, dZ/dL = j w Z / Rref [calc, derived here].
  JigSignalSpec s;
  s.freqs_hz = {10000};
  s.z_of_f = [](double) { return cplx{50, 0}; };
  s.rref_ohm = 100;
  s.duration_s = 0.5;
  const auto sig = make_jig_signal(s);
  auto c = config_for(s);
  const auto plain = analyze_recording(sig.a, sig.b, c).readings.at(0);
  const auto has = [](const ToneReading& r, const std::string& name) {
    return std::any_of(r.z.type_b.begin(), r.z.type_b.end(),
                       [&](const TypeBTerm& t) { return t.name == name; });
  };
  // Off by default: an offline recording of an unknown jig.
  CHECK_FALSE(has(plain, "rref_tempco"));
  CHECK_FALSE(has(plain, "rref_reactance"));

  c.rref_tempco_ppm_per_k = 50;
  c.rref_temp_span_k = 5;
  c.rref_inductance_h = 20e-9;
  const auto r = analyze_recording(sig.a, sig.b, c).readings.at(0);
  const TypeBTerm* tempco = nullptr;
  const TypeBTerm* reactance = nullptr;
  for (const auto& t : r.z.type_b) {
    if (t.name == "rref_tempco") tempco = &t;
    if (t.name == "rref_reactance") reactance = &t;
  }
  REQUIRE(tempco != nullptr);
  REQUIRE(reactance != nullptr);
  // Rectangular half-width a: u = a / sqrt 3 (JCGM 100 4.3.7); a = 50 ppm/K x 5 K.
  CHECK(tempco->u == Approx(50e-6 * 5 / std::sqrt(3.0)).epsilon(1e-12));
  CHECK(std::abs(tempco->sensitivity - cplx{50, 0}) < 1e-3);
  const double w = 2 * std::numbers::pi * 10000;
  CHECK(reactance->u == Approx(20e-9 / std::sqrt(3.0)).epsilon(1e-12));
  CHECK(reactance->sensitivity.imag() == Approx(w * 50 / 100).epsilon(1e-4));
  CHECK(std::abs(reactance->sensitivity.real()) < 1e-4 * w);
  // The reactance moves X, not R: the uncertainty of Xs grows, that of Rs hardly.
  CHECK(r.u_x.u_c > plain.u_x.u_c);
  // Negative values are a bad configuration.
  c.rref_inductance_h = -1e-9;
  CHECK_THROWS_AS(analyze_recording(sig.a, sig.b, c), std::invalid_argument);
}
