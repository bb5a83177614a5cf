// Makes the recordings in fixtures/ and their expected values. Not run by the tests:
// run it by hand after changing a scenario (`build/tests/tb_make_fixtures fixtures`).
//
// Each recording is an ngspice 39 transient of the jig and an invented part (maximum
// step 1/(64 fs)), with silence before and after the tone, seeded white noise and a
// little mains hum added, then quantised to the WAV's integer format like a card would.
// The expected impedance of each tone is ngspice's AC analysis of the part alone.
#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <nlohmann/json.hpp>
#include <numbers>
#include <random>
#include <sstream>

#include "server/wav_file.hpp"
#include "tests/support/spice.hpp"

using namespace tb::test;

namespace {

struct Scenario {
  std::string path;   ///< under fixtures/, without extension
  std::string story;  ///< the invented job it belongs to
  std::string part;   ///< element lines between "p" (hot) and "m" (cold)
  std::vector<double> freqs_hz;
  double rref_ohm;
  double fs;
  tb::SampleEncoding encoding;
  double lead_s, tone_s, tail_s;
  double noise_rms;               ///< full-scale units, each channel
  double hum_hz;                  ///< mains frequency of the hum added to node B
  std::vector<std::string> args;  ///< analyze options besides the file
  double tolerance_rel;  ///< allowed vector error, from the noise level (checked generously)
};

std::string jig(const Scenario& s, double amplitude) {
  std::ostringstream net;
  std::string node = "a";
  for (std::size_t k = 0; k < s.freqs_hz.size(); ++k) {
    const std::string next = k + 1 == s.freqs_hz.size() ? "0" : "s" + std::to_string(k);
    net << "V" << k << " " << node << " " << next << " SIN(0 " << spice_value(amplitude) << " "
        << spice_value(s.freqs_hz[k]) << " " << spice_value(s.lead_s) << ")\n";
    node = next;
  }
  net << "Rref a b " << spice_value(s.rref_ohm) << "\nVm m 0 DC 0\n";
  std::string part = s.part;
  for (std::size_t pos; (pos = part.find(" p ")) != std::string::npos;)
    part.replace(pos, 3, " b ");
  net << part;
  return net.str();
}

void make(const Scenario& s, const std::filesystem::path& root) {
  const double amplitude = 0.45 / std::sqrt(static_cast<double>(s.freqs_hz.size()));
  auto tran = spice_transient(jig(s, amplitude), {"a", "b"}, s.fs, s.lead_s + s.tone_s + s.tail_s);
  auto& a = tran.v[0];
  auto& b = tran.v[1];
  // The tone stops abruptly after lead + tone seconds: the generator is switched off.
  const auto stop = static_cast<std::size_t>(std::lround((s.lead_s + s.tone_s) * s.fs));
  for (std::size_t n = stop; n < a.size(); ++n)
    a[n] = b[n] = 0;
  std::mt19937_64 rng(20261202);
  std::normal_distribution<double> noise(0.0, s.noise_rms);
  for (std::size_t n = 0; n < a.size(); ++n) {
    const double t = static_cast<double>(n) / s.fs;
    const double hum = 3 * s.noise_rms * std::sin(2 * std::numbers::pi * s.hum_hz * t + 0.4);
    a[n] += noise(rng);
    b[n] += noise(rng) + hum;
  }
  const auto wav = root / (s.path + ".wav");
  std::filesystem::create_directories(wav.parent_path());
  tb::write_wav(wav.string(), s.fs, tran.v, s.encoding);

  nlohmann::json expected;
  expected["story"] = s.story;
  expected["source"] =
      "ngspice 39 AC analysis of the part netlist (driven by a 1 A source); recording made by "
      "tests/tools/make_fixtures.cpp from an ngspice transient";
  expected["part_netlist"] = s.part;
  expected["args"] = s.args;
  nlohmann::json readings = nlohmann::json::array();
  for (double f : s.freqs_hz) {
    const auto z = spice_ac("I1 0 p AC 1\nVm m 0 DC 0\n" + s.part, {"p"}, {f}).at(0).v.at(0);
    readings.push_back({{"freq_hz", f},
                        {"z_real_ohm", z.real()},
                        {"z_imag_ohm", z.imag()},
                        {"tolerance_rel", s.tolerance_rel}});
  }
  expected["readings"] = readings;
  std::ofstream(root / (s.path + ".json")) << expected.dump(2) << "\n";
  std::cout << "wrote " << wav.string() << "\n";
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 2) {
    std::cerr << "usage: tb_make_fixtures FIXTURES_DIR\n";
    return 2;
  }
  const std::filesystem::path root = argv[1];
  const std::vector<Scenario> scenarios{
      {"demo/crossover_cap_48k_1kHz",
       "Larkspur Lane Audio, job 26-114: three-way cabinet, tweeter high-pass capacitor C3 "
       "marked 6.8 uF J, checked before re-use",
       "C1 p x 6.8u\nR1 x y 0.025\nL1 y m 12n\n",
       {1000},
       10,
       48000,
       tb::SampleEncoding::pcm24,
       0.4,
       1.5,
       0.3,
       3e-5,
       50,
       {"--rref", "10", "--rref-tol", "0.1", "--full-scale-vrms", "1.2"},
       2e-3},
      {"rc_series/filter_electrolytic_44k1_120Hz",
       "Larkspur Lane Audio, job 26-117: integrated amplifier, supply filter C41 marked 470 uF "
       "35 V, suspected dried out",
       "C1 p x 470u\nR1 x m 0.18\n",
       {120},
       1,
       44100,
       tb::SampleEncoding::pcm16,
       0.25,
       1.2,
       0.25,
       6e-5,
       60,
       {"--rref", "1", "--rref-tol", "1"},
       5e-3},
      {"multisine/crossover_coil_96k_4tones",
       "Larkspur Lane Audio, job 26-121: two-way bookshelf pair, woofer low-pass coil L1 of the "
       "left cabinet, 1.5 mH air core",
       "L1 p x 1.5m\nR1 x m 0.42\nC1 p m 80p\n",
       {200, 1000, 4000, 16000},
       10,
       96000,
       tb::SampleEncoding::pcm24,
       0.2,
       0.8,
       0.1,
       3e-5,
       50,
       {"--rref", "10"},
       2e-3},
  };
  for (const auto& s : scenarios)
    make(s, root);
  return 0;
}
