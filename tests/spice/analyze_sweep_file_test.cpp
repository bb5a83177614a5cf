// `tonebridge analyze` on sweep files made outside the project: ngspice's AC analysis of a
// crossover coil, written as a CSV of frequency, |Z| and phase as another tool would write
// it, must give the netlist's values back through the CLI.
#include <catch2/catch.hpp>

#include <cmath>
#include <complex>
#include <fstream>
#include <numbers>
#include <vector>

#include <nlohmann/json.hpp>

#include "tests/support/run_command.hpp"
#include "tests/support/signals.hpp"
#include "tests/support/spice.hpp"

namespace {

double param(const nlohmann::json& fit, const std::string& name) {
  for (const auto& p : fit.at("params"))
    if (p.at("name") == name) return p.at("value").get<double>();
  FAIL("no parameter " << name);
  return 0;
}

}  // namespace

TEST_CASE("analyze fits a coil's sweep from an ngspice CSV with magnitude and phase",
          "[spice][analyze]") {
  // Reference: ngspice AC analysis, 1 A into 1.5 mH + 0.42 ohm winding resistance.
  std::vector<double> f;
  for (int i = 0; i < 40; ++i)
    f.push_back(20 * std::pow(1000.0, i / 39.0));
  const auto pts = tb::test::spice_ac("Idrive 0 p AC 1\nR1 p x 0.42\nL1 x 0 1.5m\n", {"p"}, f);
  const auto dir = tb::test::make_temp_dir("tb-analyze-sweep");
  const std::string path = dir + "/coil.csv";
  {
    std::ofstream out(path);
    out << "# from ngspice, written as a spreadsheet would\nFrequency;Magnitude;Phase\n";
    for (const auto& p : pts) {
      out << tb::test::spice_value(p.freq_hz) << ";" << tb::test::spice_value(std::abs(p.v[0]))
          << ";" << tb::test::spice_value(std::arg(p.v[0]) * 180 / std::numbers::pi) << "\n";
    }
    out << "bad;row;here\n";
  }
  const auto run = tb::test::run_cli({"analyze", path, "--family", "inductor", "--json"});
  INFO(run.out << run.err);
  REQUIRE(run.exit_code == 0);
  const auto fit = nlohmann::json::parse(run.out);
  CHECK(fit.at("model").get<std::string>().rfind("l_r", 0) == 0);
  CHECK(param(fit, "L") == Approx(1.5e-3).epsilon(0.001));
  CHECK(param(fit, "R") == Approx(0.42).epsilon(0.005));
  CHECK(fit.at("points_used") == 40);
  CHECK(fit.at("points_skipped") == 1);
  CHECK(fit.at("uncertainties_given") == false);

  const auto text = tb::test::run_cli({"analyze", path, "--family", "inductor"});
  CHECK(text.exit_code == 0);
  CHECK(text.out.find("no uncertainty columns") != std::string::npos);
}

TEST_CASE("analyze refuses a sweep file it cannot read, saying what to fix", "[analyze]") {
  const auto dir = tb::test::make_temp_dir("tb-analyze-sweep-bad");
  const std::string path = dir + "/notes.csv";
  std::ofstream(path) << "when,what\n2026-12-01,replaced C41\n";
  const auto run = tb::test::run_cli({"analyze", path});
  CHECK(run.exit_code == 1);
  CHECK(run.err.find("file.bad_sweep") != std::string::npos);
  CHECK(run.err.find("freq_hz") != std::string::npos);
  const auto json_path = dir + "/other.json";
  std::ofstream(json_path) << R"({"readings": []})";
  const auto j = tb::test::run_cli({"analyze", json_path});
  CHECK(j.exit_code == 1);
  CHECK(j.err.find("not a sweep export") != std::string::npos);
}
