// A service that is killed or stopped in the middle of a sweep keeps every point it saved,
// and the sweep says it was interrupted.
#include <catch2/catch.hpp>

#include "tests/support/service_process.hpp"
#include "tests/support/signals.hpp"

using tb::test::eventually;
using tb::test::ServiceProcess;

namespace {

// Starts a slow sweep (real-time simulated card) and waits until `points` are saved.
int start_sweep_and_wait(const ServiceProcess& svc, int points) {
  const auto r = svc.post(
      "/api/v1/sweeps",
      {{"start_hz", 100}, {"stop_hz", 10000}, {"points_per_decade", 20}, {"duration_s", 0.1}});
  INFO(r.body);
  REQUIRE(r.status == 202);
  int sweep_id = 0;
  REQUIRE(eventually(
      [&] {
        const auto list = svc.get("/api/v1/sweeps").json().at("sweeps");
        if (list.empty()) return false;
        sweep_id = list.at(0).at("id").get<int>();
        return list.at(0).at("points_saved").get<int>() >= points;
      },
      60));
  return sweep_id;
}

}  // namespace

TEST_CASE("kill -9 in the middle of a sweep loses no saved point", "[service]") {
  const std::string dir = tb::test::make_temp_dir("kill");
  int sweep_id = 0, saved_before = 0;
  {
    ServiceProcess svc({"--sim-real-time=true", "--sim-part", "cap 2.2u"}, dir);
    sweep_id = start_sweep_and_wait(svc, 3);
    saved_before = svc.get("/api/v1/sweeps/" + std::to_string(sweep_id)).json().at("points_saved");
    svc.kill9();
  }
  ServiceProcess again({}, dir);
  CHECK(again.output().find("cut off") != std::string::npos);
  const auto s = again.get("/api/v1/sweeps/" + std::to_string(sweep_id)).json();
  CHECK(s.at("status") == "interrupted");
  CHECK(s.at("partial") == true);
  CHECK(s.at("points_saved").get<int>() >= saved_before);
  CHECK(s.at("points_planned") == 41);
  const auto& cols = s.at("columns");
  REQUIRE(cols.at("z_mag_ohm").size() == s.at("points_saved").get<std::size_t>());
  for (const auto& z : cols.at("z_mag_ohm"))
    CHECK(z.is_number());
  CHECK(again.get("/api/v1/status").json().at("store").at("sweeps_interrupted_at_start") == 1);
}

TEST_CASE("SIGTERM ends the sweep in flight as interrupted and closes the store cleanly",
          "[service]") {
  const std::string dir = tb::test::make_temp_dir("term");
  int sweep_id = 0;
  {
    ServiceProcess svc({"--sim-real-time=true", "--sim-part", "coil 1m r 0.5"}, dir);
    sweep_id = start_sweep_and_wait(svc, 2);
    CHECK(svc.stop() == 0);
    CHECK(svc.output().find("stopped") != std::string::npos);
  }
  ServiceProcess again({}, dir);
  const auto s = again.get("/api/v1/sweeps/" + std::to_string(sweep_id)).json();
  CHECK(s.at("status") == "interrupted");
  CHECK(s.at("end").at("id") == "sweep.interrupted");
  CHECK(s.at("points_saved").get<int>() >= 2);
  // Stopped cleanly: nothing was left running for the next start to mark.
  CHECK(again.get("/api/v1/status").json().at("store").at("sweeps_interrupted_at_start") == 0);
}

TEST_CASE("a running sweep is cancelled through the API and kept as partial", "[service]") {
  ServiceProcess svc({"--sim-real-time=true"});
  const int id = start_sweep_and_wait(svc, 1);
  const auto path = "/api/v1/sweeps/" + std::to_string(id);
  CHECK(svc.request("DELETE", path).status == 409);  // running: cancel it first
  CHECK(svc.post(path + "/cancel", nlohmann::json::object()).status == 202);
  REQUIRE(eventually([&] { return svc.get(path).json().at("status") == "cancelled"; }, 20));
  const auto s = svc.get(path).json();
  CHECK(s.at("partial") == true);
  CHECK(s.at("points_saved").get<int>() >= 1);
  CHECK(svc.post(path + "/cancel", nlohmann::json::object()).status == 409);
}
