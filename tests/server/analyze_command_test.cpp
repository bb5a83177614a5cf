// `tonebridge analyze` as a user runs it: the real binary, real WAV files.
#include <catch2/catch.hpp>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <numbers>

#include "server/wav_file.hpp"
#include "tests/support/run_command.hpp"
#include "tests/support/signals.hpp"

using namespace tb::test;
using cplx = std::complex<double>;

namespace {

struct TempDir {
  std::string path = make_temp_dir("analyze");
  ~TempDir() { std::filesystem::remove_all(path); }
  std::string file(const std::string& name) const { return path + "/" + name; }
};

// A 3.3 uF capacitor with 0.04 ohm ESR.
cplx cap_z(double f) {
  return {0.04, -1 / (2 * std::numbers::pi * f * 3.3e-6)};
}

std::string write_signal(const TempDir& dir, const std::string& name, const Stereo& s,
                         tb::SampleEncoding enc = tb::SampleEncoding::pcm24, double fs = 48000) {
  const auto path = dir.file(name);
  tb::write_wav(path, fs, {s.a, s.b}, enc);
  return path;
}

Stereo cap_signal(double noise = 2e-5) {
  JigSignalSpec spec;
  spec.z_of_f = cap_z;
  spec.rref_ohm = 47;
  spec.lead_silence_s = 0.2;
  spec.tail_silence_s = 0.1;
  spec.noise_rms = noise;
  return make_jig_signal(spec);
}

cplx z_of(const nlohmann::json& reading) {
  return {reading.at("z_real_ohm").get<double>(), reading.at("z_imag_ohm").get<double>()};
}

}  // namespace

TEST_CASE("analyze reads 16, 24 and 32-bit integer and float WAV files", "[cli]") {
  TempDir dir;
  const auto sig = cap_signal();
  for (auto [enc, name, tol] : {std::tuple{tb::SampleEncoding::pcm16, "p16.wav", 2e-3},
                                {tb::SampleEncoding::pcm24, "p24.wav", 5e-4},
                                {tb::SampleEncoding::pcm32, "p32.wav", 5e-4},
                                {tb::SampleEncoding::float32, "f32.wav", 5e-4}}) {
    const auto res =
        run_cli({"analyze", write_signal(dir, name, sig, enc), "--rref", "47", "--json"});
    INFO(name << ": " << res.err);
    REQUIRE(res.exit_code == 0);
    const auto j = nlohmann::json::parse(res.out);
    REQUIRE(j.at("readings").size() == 1);
    const auto& r = j.at("readings")[0];
    CHECK(r.at("freq_hz").get<double>() == Approx(1000).epsilon(1e-7));
    CHECK(vector_error(z_of(r), cap_z(1000)) < tol);
    CHECK(r.at("kind") == "C");
    for (const char* key :
         {"cs_f", "cp_f", "esr_ohm", "d", "q", "z_mag_ohm", "theta_deg", "rp_ohm"}) {
      CHECK(r.contains(key));
    }
    CHECK(r.at("cs_f").get<double>() == Approx(3.3e-6).epsilon(tol));
  }
}

TEST_CASE("analyze text output shows values with their uncertainty", "[cli]") {
  TempDir dir;
  const auto res = run_cli({"analyze", write_signal(dir, "c.wav", cap_signal()), "--rref", "47",
                            "--full-scale-vrms", "1"});
  REQUIRE(res.exit_code == 0);
  CHECK(res.out.find("capacitor") != std::string::npos);
  CHECK(res.out.find("Cs   3.3") != std::string::npos);
  CHECK(res.out.find("±") != std::string::npos);
  CHECK(res.out.find("mVrms") != std::string::npos);
}

TEST_CASE("analyze handles swapped channels and the part-high layout", "[cli]") {
  TempDir dir;
  auto sig = cap_signal();
  std::swap(sig.a, sig.b);
  const auto swapped = write_signal(dir, "swapped.wav", sig);
  const auto without = run_cli({"analyze", swapped, "--rref", "47"});
  // Channel 1 then reads node B, which no passive part can make larger than node A.
  CHECK(without.exit_code == 1);
  CHECK(without.err.find("error [analysis.channels_swapped]") != std::string::npos);
  CHECK(without.err.find("--swap") != std::string::npos);
  const auto with = run_cli({"analyze", swapped, "--rref", "47", "--swap", "--json"});
  REQUIRE(with.exit_code == 0);
  CHECK(vector_error(z_of(nlohmann::json::parse(with.out).at("readings")[0]), cap_z(1000)) < 5e-4);

  JigSignalSpec spec;
  spec.z_of_f = [](double f) { return cplx{12, -1 / (2 * std::numbers::pi * f * 4.7e-9)}; };
  spec.layout = tb::dsp::Layout::part_high;
  spec.rref_ohm = 22000;
  const auto high = write_signal(dir, "high.wav", make_jig_signal(spec));
  const auto res = run_cli({"analyze", high, "--rref", "22k", "--layout", "part-high", "--json"});
  REQUIRE(res.exit_code == 0);
  CHECK(vector_error(z_of(nlohmann::json::parse(res.out).at("readings")[0]), spec.z_of_f(1000)) <
        5e-4);
}

TEST_CASE("analyze removes the card's input impedance when told it", "[cli]") {
  // Part-low: the input reading node B (47 kohm || 100 pF) sits across the part, so the
  // bridge sees Z || Zin. Derivation: parallel combination (shared references, divider).
  TempDir dir;
  auto zin = [](double f) { return 1.0 / cplx(1 / 47e3, 2 * std::numbers::pi * f * 100e-12); };
  auto part = [](double f) { return cplx{5, 2 * std::numbers::pi * f * 0.8}; };  // 0.8 H choke
  JigSignalSpec spec;
  spec.z_of_f = [&](double f) { return part(f) * zin(f) / (part(f) + zin(f)); };
  spec.rref_ohm = 4700;
  spec.freqs_hz = {200, 2000};
  spec.amplitudes = {0.3, 0.3};
  const auto path =
      write_signal(dir, "choke.wav", make_jig_signal(spec), tb::SampleEncoding::float32);
  const auto plain =
      nlohmann::json::parse(run_cli({"analyze", path, "--rref", "4.7k", "--json"}).out);
  const auto fixed = nlohmann::json::parse(run_cli({"analyze", path, "--rref", "4.7k", "--input-r",
                                                    "47k", "--input-c", "100p", "--json"})
                                               .out);
  for (std::size_t k = 0; k < 2; ++k) {
    const double f = spec.freqs_hz[k];
    CHECK(vector_error(z_of(plain.at("readings")[k]), part(f)) > 1e-2);
    CHECK(vector_error(z_of(fixed.at("readings")[k]), part(f)) < 1e-6);
  }
}

TEST_CASE("analyze refuses bad input with one clear line and a non-zero exit", "[cli]") {
  TempDir dir;
  const auto good = write_signal(dir, "good.wav", cap_signal());
  const auto mono = dir.file("mono.wav");
  tb::write_wav(mono, 48000, {cap_signal().a}, tb::SampleEncoding::pcm16);
  const auto corrupt = dir.file("corrupt.wav");
  std::ofstream(corrupt) << "RIFF this is not audio at all";
  Stereo noise = cap_signal();
  JigSignalSpec quiet;
  quiet.z_of_f = cap_z;
  quiet.amplitudes = {0.0};
  quiet.noise_rms = 1e-3;
  const auto noisy = write_signal(dir, "noise.wav", make_jig_signal(quiet));
  JigSignalSpec loud;
  loud.z_of_f = cap_z;
  loud.rref_ohm = 47;
  loud.amplitudes = {1.4};
  Stereo clip = make_jig_signal(loud);
  for (auto* ch : {&clip.a, &clip.b})
    for (auto& v : *ch)
      v = std::clamp(v, -1.0, 32767.0 / 32768);
  const auto clipped = write_signal(dir, "clipped.wav", clip, tb::SampleEncoding::pcm16);

  struct Bad {
    std::vector<std::string> args;
    int exit_code;
    std::string id;
  };
  const std::vector<Bad> cases{
      {{"analyze", good, "--rref", "47", "--bogus"}, 2, "cli.unknown_option"},
      {{"analyze", good, "--rref", "forty"}, 2, "cli.bad_number"},
      {{"analyze", good, "--rref", "-5"}, 2, "cli.out_of_range"},
      {{"analyze", good, "--rref", "1e300"}, 2, "cli.out_of_range"},
      {{"analyze", good}, 2, "cli.missing_option"},
      {{"analyze", good, "--rref"}, 2, "cli.missing_value"},
      {{"analyze", "--rref", "47"}, 2, "cli.usage"},
      {{"analyze", good, good, "--rref", "47"}, 2, "cli.usage"},
      {{"analyze", good, "--rref", "47", "--layout", "sideways"}, 2, "cli.bad_value"},
      {{"analyze", good, "--rref", "47", "--rref-tol", "80"}, 2, "cli.out_of_range"},
      {{"analyze", good, "--rref", "47", "--freq", "90000"}, 1, "analysis.bad_frequency"},
      {{"analyze", good, "--rref", "47", "--freq", "3000"}, 1, "recording.no_tone"},
      {{"analyze", good, "--rref", "47", "--input-c", "100p"}, 2, "cli.missing_option"},
      {{"analyze", dir.file("missing.wav"), "--rref", "47"}, 1, "file.unreadable"},
      {{"analyze", corrupt, "--rref", "47"}, 1, "file.unreadable"},
      {{"analyze", mono, "--rref", "47"}, 1, "file.mono"},
      {{"analyze", noisy, "--rref", "47"}, 1, "recording.no_tone"},
      {{"analyze", clipped, "--rref", "47"}, 1, "recording.clipped"},
      {{"nonsense"}, 2, "cli.unknown_command"},
  };
  for (const auto& c : cases) {
    const auto res = run_cli(c.args);
    INFO(c.args.back() << " -> exit " << res.exit_code << ", stderr: " << res.err);
    CHECK(res.exit_code == c.exit_code);
    CHECK(res.err.find("error [" + c.id + "]") != std::string::npos);
    CHECK(std::count(res.err.begin(), res.err.end(), '\n') == 1);
    CHECK(res.out.empty());
  }
}

TEST_CASE("analyze --help lists the options and exits 0", "[cli]") {
  const auto res = run_cli({"analyze", "--help"});
  CHECK(res.exit_code == 0);
  for (const char* opt : {"--rref", "--layout", "--swap", "--freq", "--json", "--full-scale-vrms"})
    CHECK(res.out.find(opt) != std::string::npos);
}
