// `tonebridge measure` on the simulated bench, as a user runs it.
#include <catch2/catch.hpp>
#include <cmath>
#include <nlohmann/json.hpp>
#include <numbers>

#include "tests/support/run_command.hpp"

using namespace tb::test;

namespace {

nlohmann::json measure_json(std::vector<std::string> args) {
  args.insert(args.begin(), "measure");
  args.push_back("--json");
  const auto res = run_cli(args);
  INFO(res.err);
  REQUIRE(res.exit_code == 0);
  return nlohmann::json::parse(res.out);
}

}  // namespace

TEST_CASE("measure reads a resistor on a hidden card", "[measure]") {
  const auto j =
      measure_json({"--part", "res 330", "--rref", "330", "--seed", "4", "--duration", "0.5"});
  CHECK(j.at("kind") == "R");
  CHECK(j.at("freq_hz").get<double>() == Approx(1000));
  // Loading by the card input (>= 10 kohm) and the leads leave up to ~3 % before the
  // input-impedance calibration; the channel match is applied.
  CHECK(j.at("z_mag_ohm").get<double>() == Approx(330).epsilon(0.035));
  CHECK(j.at("channel_match") == true);
}

TEST_CASE("measure picks 120 Hz for an electrolytic where mains is 50 Hz, 100 Hz where 60 Hz",
          "[measure]") {
  // IEC 60384-4: electrolytics at 100 or 120 Hz; the one that is not a mains harmonic.
  const auto at50 =
      measure_json({"--part", "cap 470u esr 0.15", "--rref", "1", "--duration", "0.5"});
  CHECK(at50.at("freq_hz").get<double>() == Approx(120));
  CHECK(at50.at("kind") == "C");
  CHECK(at50.at("cs_f").get<double>() == Approx(470e-6).epsilon(0.05));
  const auto at60 = measure_json(
      {"--part", "cap 470u esr 0.15", "--rref", "1", "--mains", "60", "--duration", "0.5"});
  CHECK(at60.at("freq_hz").get<double>() == Approx(100));
  const auto film =
      measure_json({"--part", "cap 1u esr 0.01", "--rref", "100", "--duration", "0.5"});
  CHECK(film.at("freq_hz").get<double>() == Approx(1000));
}

TEST_CASE("measure shows the truth only when asked, and advises a better reference", "[measure]") {
  const auto plain =
      measure_json({"--part", "coil 1.5m r 0.42", "--rref", "10k", "--duration", "0.5"});
  CHECK_FALSE(plain.contains("truth"));
  CHECK(plain.at("kind") == "L");
  CHECK(plain.at("advice").at("change") == true);
  CHECK(plain.at("advice").at("rref_ohm").get<double>() == Approx(10));
  const auto taught = measure_json(
      {"--part", "coil 1.5m r 0.42", "--rref", "10", "--show-truth", "--duration", "0.5"});
  const double x_true = 2 * std::numbers::pi * 1000 * 1.5e-3;  // wL (textbook)
  // The truth is taken at the measured frequency, a few 1e-8 from 1 kHz.
  CHECK(taught.at("truth").at("z_imag_ohm").get<double>() == Approx(x_true).epsilon(1e-6));
  CHECK(taught.at("ls_h").get<double>() == Approx(1.5e-3).epsilon(0.02));
}

TEST_CASE("measure stops on a charged capacitor with a warning", "[measure][safety]") {
  const auto res = run_cli({"measure", "--part", "cap 1000u esr 0.05 charged 25", "--rref", "1"});
  CHECK(res.exit_code == 1);
  CHECK(res.err.find("error [part.charged]") != std::string::npos);
  CHECK(res.err.find("discharge") != std::string::npos);
  CHECK(res.out.empty());
}

TEST_CASE("measure refuses bad input with one clear line", "[measure]") {
  struct Bad {
    std::vector<std::string> args;
    int exit_code;
    std::string id;
  };
  const std::vector<Bad> cases{
      {{"measure"}, 2, "cli.missing_option"},
      {{"measure", "--part", "cap -5u"}, 1, "part."},
      {{"measure", "--part", "cap 1u esx 3"}, 1, "part."},
      {{"measure", "--part", "res 100", "--device", "usb9"}, 1, "device.unknown"},
      {{"measure", "--part", "res 100", "--freq", "40k"}, 1, "measure.bad_frequency"},
      {{"measure", "--part", "res 100", "--level", "3"}, 2, "cli.out_of_range"},
      {{"measure", "--part", "res 100", "--rate", "1000"}, 2, "cli.out_of_range"},
      {{"measure", "--part", "res 100", "--mains", "55"}, 2, "cli.bad_value"},
      {{"measure", "--netlist", "/nonexistent/part.cir"}, 1, "file.unreadable"},
  };
  for (const auto& c : cases) {
    const auto res = run_cli(c.args);
    INFO(c.args.back() << ": exit " << res.exit_code << ", " << res.err);
    CHECK(res.exit_code == c.exit_code);
    CHECK(res.err.find("error [" + c.id) != std::string::npos);
    CHECK(std::count(res.err.begin(), res.err.end(), '\n') == 1);
  }
}
