// `tonebridge sweep` against a running service: the CSV and JSON it writes, the progress
// line, and clear errors for a bad request and a missing service.
#include <catch2/catch.hpp>

#include <cmath>
#include <sstream>

#include "tests/support/run_command.hpp"
#include "tests/support/service_process.hpp"
#include "tests/support/signals.hpp"

using tb::test::ServiceProcess;

namespace {

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> out;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);)
    if (!line.empty()) out.push_back(line);
  return out;
}

}  // namespace

TEST_CASE("tonebridge sweep writes the saved sweep as CSV with a progress line", "[service]") {
  ServiceProcess svc;
  const std::string url = "http://127.0.0.1:" + std::to_string(svc.port());
  const auto dir = tb::test::make_temp_dir("tb-cli-sweep");
  const std::string csv = dir + "/sweep.csv";
  const auto run = tb::test::run_cli({"sweep", "--service", url, "--start", "200", "--stop", "2k",
                                      "--per-decade", "3", "--duration", "0.2", "--label",
                                      "L3 left", "--output", csv});
  INFO(run.out << run.err);
  REQUIRE(run.exit_code == 0);
  CHECK(run.err.find("4/4 points (100 %)") != std::string::npos);
  CHECK(run.err.find("complete: 4 of 4 points saved") != std::string::npos);
  const auto rows = lines_of(tb::test::read_text_file(csv));
  REQUIRE(rows.size() == 6);  // a comment line, the header, four points
  CHECK(rows[1].rfind("index,freq_hz,", 0) == 0);
  // 200 Hz to 2 kHz at 3 per decade: 200, 430.9, 928.3, 2000 Hz (log spaced).
  const double f1 = std::stod(rows[3].substr(rows[3].find(',') + 1));
  CHECK(f1 == Approx(200 * std::pow(10.0, 1.0 / 3)).epsilon(0.01));

  const auto sweeps = svc.get("/api/v1/sweeps").json().at("sweeps");
  REQUIRE(sweeps.size() == 1);
  CHECK(sweeps[0].at("label") == "L3 left");

  const auto json_run =
      tb::test::run_cli({"sweep", "--service", url, "--start", "1k", "--stop", "2k", "--per-decade",
                         "3", "--duration", "0.2", "--format", "json", "--quiet"});
  INFO(json_run.err);
  REQUIRE(json_run.exit_code == 0);
  const auto j = nlohmann::json::parse(json_run.out);
  CHECK(j.at("status") == "complete");
  CHECK(j.at("columns").at("freq_hz").size() == 2);
  CHECK(json_run.err.find("points (") == std::string::npos);  // --quiet: no progress line
}

TEST_CASE("tonebridge sweep refuses a bad request before measuring", "[service]") {
  ServiceProcess svc;
  const std::string url = "http://127.0.0.1:" + std::to_string(svc.port());
  const auto bad_method = tb::test::run_cli({"sweep", "--service", url, "--method", "chirp"});
  CHECK(bad_method.exit_code == 2);
  CHECK(bad_method.err.find("stepped or multisine") != std::string::npos);
  const auto reversed = tb::test::run_cli({"sweep", "--service", url, "--start", "-5"});
  CHECK(reversed.exit_code == 2);
  CHECK(reversed.err.find("--start must be above 0") != std::string::npos);
  const auto too_high = tb::test::run_cli({"sweep", "--service", url, "--stop", "90k"});
  INFO(too_high.err);
  CHECK(too_high.exit_code == 1);  // the service refuses it: above 0.45 of 48 kHz
  CHECK(svc.get("/api/v1/sweeps").json().at("sweeps").empty());
  const auto nobody = tb::test::run_cli({"sweep", "--service", "http://127.0.0.1:9"});
  CHECK(nobody.exit_code == 1);
  CHECK(nobody.err.find("service.unreachable") != std::string::npos);
}

TEST_CASE("a stepped sweep adds points around a driver's resonance", "[service]") {
  ServiceProcess svc({"--rref-ohm", "10"});
  // The worked example of references.md (Thiele 1961 / Small 1972): fs 70.7 Hz, Qms 4.27.
  REQUIRE(svc.request("PUT", "/api/v1/bench/part",
                      R"({"part": "driver re 6 le 0.5m fs 70.7 qms 4.27 qes 0.34"})")
              .status == 202);
  const auto r = svc.post("/api/v1/sweeps", {{"start_hz", 20},
                                             {"stop_hz", 500},
                                             {"points_per_decade", 5},
                                             {"duration_s", 0.2},
                                             {"wait", true}});
  INFO(r.body);
  REQUIRE(r.status == 201);
  const auto sweep = r.json();
  const int planned = 9;  // 20 Hz to 500 Hz at 5 per decade: ceil(1.398 * 5) + 1
  CHECK(sweep.at("points_planned").get<int>() > planned);
  CHECK(sweep.at("points_saved") == sweep.at("points_planned"));
  const auto cols =
      svc.get("/api/v1/sweeps/" + std::to_string(sweep.at("id").get<int>())).json().at("columns");
  bool added_near_fs = false;
  double previous = 0;
  for (std::size_t i = 0; i < cols.at("freq_hz").size(); ++i) {
    const double f = cols["freq_hz"][i].get<double>();
    CHECK(f > previous);  // columns come in frequency order, added points included
    previous = f;
    if (cols["index"][i].get<int>() >= planned && f > 55 && f < 90) added_near_fs = true;
  }
  CHECK(added_near_fs);
  const auto full =
      svc.get("/api/v1/sweeps/" + std::to_string(sweep.at("id").get<int>()) + "/export").json();
  for (const auto& p : full.at("points")) {
    const double settle = p.at("reading").at("settle_s").get<double>();
    CHECK(settle >= 0.1);
    CHECK(settle <= 2.0);
  }
}
