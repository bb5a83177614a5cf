// Replays every recording in fixtures/ through `tonebridge analyze` and compares each
// tone with the expected values stored beside it. The expected values are ngspice AC
// analyses of the part (see each .json's "source"); the recordings carry noise, hum,
// silence and integer quantisation, so the tolerance is a noise-limited vector error.
#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>

#include "tests/support/run_command.hpp"
#include "tests/support/signals.hpp"

using namespace tb::test;

TEST_CASE("every fixture recording analyses to its expected impedance", "[fixtures]") {
  namespace fs = std::filesystem;
  std::size_t checked = 0;
  for (const auto& entry : fs::recursive_directory_iterator(TB_FIXTURES_DIR)) {
    if (entry.path().extension() != ".json") continue;
    const auto wav = fs::path(entry.path()).replace_extension(".wav");
    if (!fs::exists(wav)) continue;
    const auto expected = nlohmann::json::parse(std::ifstream(entry.path()));
    std::vector<std::string> args{"analyze", wav.string(), "--json"};
    for (const auto& a : expected.at("args"))
      args.push_back(a.get<std::string>());
    const auto res = run_cli(args);
    INFO(wav.string() << "\n" << res.err);
    REQUIRE(res.exit_code == 0);
    const auto got = nlohmann::json::parse(res.out).at("readings");
    const auto& want = expected.at("readings");
    REQUIRE(got.size() == want.size());
    for (std::size_t k = 0; k < want.size(); ++k) {
      const std::complex<double> z(got[k].at("z_real_ohm").get<double>(),
                                   got[k].at("z_imag_ohm").get<double>());
      const std::complex<double> truth(want[k].at("z_real_ohm").get<double>(),
                                       want[k].at("z_imag_ohm").get<double>());
      INFO("tone " << want[k].at("freq_hz").get<double>() << " Hz: " << z << " vs " << truth);
      CHECK(got[k].at("freq_hz").get<double>() ==
            Approx(want[k].at("freq_hz").get<double>()).epsilon(1e-6));
      CHECK(vector_error(z, truth) <= want[k].at("tolerance_rel").get<double>());
      // The stated uncertainty must cover the truth on these well-behaved recordings.
      const double u_mag = got[k].at("uncertainty").at("z_mag_ohm").get<double>();
      CHECK(std::abs(std::abs(z) - std::abs(truth)) <= u_mag);
      ++checked;
    }
  }
  CHECK(checked >= 6);
}
