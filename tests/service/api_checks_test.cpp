// Part checks and fits through the service on the simulated bench: tolerance and loss
// verdicts on saved readings, matching and pair sorting, two sweeps compared, a driver's
// fit and its Vas by added mass.
#include <catch2/catch.hpp>

#include <cmath>
#include <numbers>

#include "tests/support/service_process.hpp"

using tb::test::ServiceProcess;

namespace {

void put_part(const ServiceProcess& svc, const std::string& part) {
  const auto r = svc.request("PUT", "/api/v1/bench/part", nlohmann::json{{"part", part}}.dump());
  INFO(r.body);
  REQUIRE(r.status == 202);
}

std::int64_t reading(const ServiceProcess& svc, nlohmann::json body = nlohmann::json::object()) {
  body["wait"] = true;
  const auto r = svc.post("/api/v1/readings", body);
  INFO(r.body);
  REQUIRE(r.status == 201);
  return r.json().at("id").get<std::int64_t>();
}

std::int64_t sweep(const ServiceProcess& svc, double lo, double hi, int per_decade) {
  const auto r = svc.post("/api/v1/sweeps", {{"start_hz", lo},
                                             {"stop_hz", hi},
                                             {"points_per_decade", per_decade},
                                             {"duration_s", 0.2},
                                             {"wait", true}});
  INFO(r.body);
  REQUIRE(r.status == 201);
  return r.json().at("id").get<std::int64_t>();
}

nlohmann::json check(const ServiceProcess& svc, const std::string& what, const nlohmann::json& body,
                     int status = 200) {
  const auto r = svc.post("/api/v1/checks/" + what, body);
  INFO(r.body);
  REQUIRE(r.status == status);
  return r.json();
}

// The corrections a real technician takes first (docs/calibration.md); the simulated bench
// makes the connections itself.
void calibrate(const ServiceProcess& svc) {
  for (const char* kind : {"channel_match", "open", "short"}) {
    const auto r = svc.post("/api/v1/calibrations", {{"kind", kind}, {"wait", true}});
    INFO(r.body);
    REQUIRE(r.status == 201);
  }
}

}  // namespace

TEST_CASE("tolerance verdicts on a saved reading, and clear refusals", "[service]") {
  ServiceProcess svc({"--duration-s", "0.3"});
  put_part(svc, "cap 4.7u esr 0.1");
  const auto id = reading(svc);
  CHECK(check(svc, "tolerance", {{"reading_id", id}, {"marking", "475K"}}).at("outcome") == "pass");
  const auto low = check(svc, "tolerance", {{"reading_id", id}, {"marking", "3u3 J"}});
  CHECK(low.at("outcome") == "fail");
  CHECK(low.at("text").get<std::string>().find("fail") != std::string::npos);
  CHECK(check(svc, "tolerance", {{"reading_id", id}, {"marking", "4m7 K"}, {"kind", "L"}}, 400)
            .at("error")
            .at("id") == "check.kind_mismatch");
  CHECK(
      check(svc, "tolerance", {{"reading_id", id}, {"marking", "4u7"}}, 400).at("error").at("id") ==
      "check.no_tolerance");
  const auto bad = check(svc, "tolerance", {{"reading_id", id}, {"marking", "4x7 J"}}, 400);
  CHECK(bad.at("error").at("id").get<std::string>().rfind("marking.", 0) == 0);
  CHECK(check(svc, "tolerance", {{"reading_id", 999}, {"marking", "475K"}}, 404)
            .at("error")
            .at("id") == "reading.not_found");
  // A 1 kHz reading cannot be judged for an electrolytic's loss.
  CHECK(
      check(svc, "loss", {{"reading_id", id}, {"rated_voltage_v", 25}}, 400).at("error").at("id") ==
      "check.wrong_frequency");
  // Filed under a part: its marking is used and the verdict joins the part's history.
  const auto job = svc.post("/api/v1/jobs", {{"make", "Larkspur test set"}}).json().at("id");
  const auto part = svc.post("/api/v1/jobs/" + std::to_string(job.get<int>()) + "/parts",
                             {{"designator", "C7"}, {"marking", "475K 63V"}})
                        .json()
                        .at("id")
                        .get<std::int64_t>();
  const auto filed = reading(svc, {{"part_id", part}, {"role", "replacement"}});
  const auto kept = check(svc, "tolerance", {{"reading_id", filed}});
  CHECK(kept.at("outcome") == "pass");
  CHECK(kept.at("role") == "replacement");
  const auto history = svc.get("/api/v1/parts/" + std::to_string(part) + "/verdicts").json();
  INFO(history.dump());
  REQUIRE(history.at("verdicts").size() == 1);
  CHECK(history["verdicts"][0].at("outcome") == "pass");
  const auto decoded = svc.post("/api/v1/markings/decode", {{"text", "104K"}, {"kind", "C"}});
  REQUIRE(decoded.status == 200);
  // IEC 60062: 104 = 10 x 10^4 pF = 100 nF, K = ±10 %.
  CHECK(decoded.json().at("nominal").get<double>() == Approx(100e-9));
  CHECK(decoded.json().at("tolerance_minus_pct").get<double>() == Approx(10));
}

TEST_CASE("an electrolytic's loss is judged at 120 Hz against its voltage's limit", "[service]") {
  ServiceProcess svc({"--rref-ohm", "10", "--duration-s", "0.5"});
  // D = w C ESR at 120 Hz: 1000 uF with 0.1 ohm -> 0.075; with 0.4 ohm -> 0.30. The usual
  // limit for 10 V parts is 0.19 (common datasheet practice, references.md).
  put_part(svc, "cap 1000u esr 0.1");
  const auto good = reading(svc, {{"freq_hz", 120}});
  put_part(svc, "cap 1000u esr 0.4");
  const auto dry = reading(svc, {{"freq_hz", 120}});
  const auto ok = check(svc, "loss", {{"reading_id", good}, {"marking", "1000µF 10V"}});
  CHECK(ok.at("outcome") == "pass");
  CHECK(ok.at("limit").at("tan_delta_max").get<double>() == Approx(0.19));
  CHECK(check(svc, "loss", {{"reading_id", dry}, {"marking", "1000µF 10V"}}).at("outcome") ==
        "fail");
  CHECK(check(svc, "loss", {{"reading_id", dry}}, 400).at("error").at("id") ==
        "request.missing_field");
}

TEST_CASE("matching drops the terms two readings share", "[service]") {
  ServiceProcess svc({"--duration-s", "0.3"});
  put_part(svc, "cap 4.7u esr 0.1");
  const auto a = reading(svc);
  const auto b = reading(svc);
  put_part(svc, "cap 4.8u esr 0.1");
  const auto c = reading(svc);
  const auto d = reading(svc);
  const auto same = check(svc, "match", {{"reading_ids", {a, b}}, {"max_spread_pct", 0.2}});
  CHECK(same.at("outcome") == "pass");
  // The reading's own U holds the 0.1 % Rref tolerance; the spread's U must not.
  CHECK(same.at("spread").at("expanded_pct").get<double>() < 0.05);
  const auto apart = check(svc, "match", {{"reading_ids", {a, c}}, {"max_spread_pct", 0.5}});
  CHECK(apart.at("outcome") == "fail");
  CHECK(apart.at("spread").at("spread_pct").get<double>() ==
        Approx(100 * 0.1 / 4.75).epsilon(0.05));
  const auto bag = check(svc, "pairs", {{"reading_ids", {a, c, b, d}}});
  REQUIRE(bag.at("pairs").size() == 2);
  for (const auto& p : bag.at("pairs")) {
    const auto ids = p.at("reading_ids");
    const bool first_pair = (ids[0] == a && ids[1] == b) || (ids[0] == b && ids[1] == a);
    const bool second_pair = (ids[0] == c && ids[1] == d) || (ids[0] == d && ids[1] == c);
    CHECK((first_pair || second_pair));
  }
  CHECK(check(svc, "match", {{"reading_ids", {a}}}, 400).at("error").at("id") == "check.too_few");
}

TEST_CASE("a driver's sweep is fitted, compared and gives Vas by added mass", "[service]") {
  ServiceProcess svc({"--rref-ohm", "10"});
  calibrate(svc);
  // The worked example of references.md (Thiele 1961 / Small 1972): Re 6 ohm, fs 70.7 Hz,
  // Qms 4.27, Qes 0.34.
  put_part(svc, "driver re 6 le 0.5m fs 70.7 qms 4.27 qes 0.34");
  const auto free_air = sweep(svc, 25, 400, 8);
  const auto fit = svc.get("/api/v1/sweeps/" + std::to_string(free_air) + "/fit?family=driver");
  INFO(fit.body);
  REQUIRE(fit.status == 200);
  const auto ts = fit.json().at("driver").at("from_fit");
  CHECK(ts.at("fs_hz").get<double>() == Approx(70.7).epsilon(0.01));
  CHECK(ts.at("qms").get<double>() == Approx(4.27).epsilon(0.03));
  CHECK(ts.at("qes").get<double>() == Approx(0.34).epsilon(0.03));
  CHECK(ts.at("re_ohm").get<double>() == Approx(6).epsilon(0.01));
  CHECK(ts.at("mounting") == "free air");
  CHECK(fit.json().at("curve").at("freq_hz").size() == 200);

  // The same driver again: the curves agree; the added-mass driver (fs 60 Hz) does not.
  const auto again = sweep(svc, 25, 400, 8);
  CHECK(check(svc, "curves", {{"sweep_ids", {free_air, again}}})
            .at("largest_mag_diff_pct")
            .get<double>() < 1.0);
  put_part(svc, "driver re 6 le 0.5m fs 60 qms 5.03 qes 0.40");
  const auto loaded = sweep(svc, 25, 400, 8);
  CHECK(check(svc, "curves", {{"sweep_ids", {free_air, loaded}}}).at("agree_everywhere") == false);

  const auto vas =
      svc.post("/api/v1/sweeps/" + std::to_string(free_air) + "/vas", {{"method", "added_mass"},
                                                                       {"second_sweep_id", loaded},
                                                                       {"added_mass_g", 20},
                                                                       {"sd_cm2", 220}});
  INFO(vas.body);
  REQUIRE(vas.status == 200);
  // Added-mass method (references.md): Mms = M / ((fs/f')^2 - 1), Cms = 1/((2 pi fs)^2 Mms),
  // Vas = rho c^2 Sd^2 Cms, air at 20 C (from memory: 1.204 kg/m^3, 343.2 m/s).
  const double mms = 0.020 / (std::pow(70.7 / 60, 2) - 1);
  const double cms = 1 / (std::pow(2 * std::numbers::pi * 70.7, 2) * mms);
  const double vas_l = 1.204 * 343.2 * 343.2 * 0.022 * 0.022 * cms * 1000;
  CHECK(vas.json().at("vas_litres").get<double>() == Approx(vas_l).epsilon(0.05));
  const auto bad = svc.get("/api/v1/sweeps/" + std::to_string(free_air) + "/fit?family=tweeter");
  CHECK(bad.status == 400);

  // A coil swept past the calibration grid (it stops at 0.4 fs, 19.2 kHz): the points above it
  // lack the channel match and stay out of the fit, which still finds L, R and the winding C.
  put_part(svc, "coil 2.2m r 0.6 cp 2n");
  const auto coil = sweep(svc, 1000, 20000, 5);
  const auto cf = svc.get("/api/v1/sweeps/" + std::to_string(coil) + "/fit").json();
  INFO(cf.dump());
  CHECK(cf.at("family") == "inductor");
  CHECK(cf.at("points_uncorrected").get<int>() >= 1);
  double l = 0;
  for (const auto& p : cf.at("params"))
    if (p.at("name") == "L") l = p.at("value").get<double>();
  CHECK(l == Approx(2.2e-3).epsilon(0.005));
}
