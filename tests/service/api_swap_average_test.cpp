// Swap-and-average readings through the service: the simulated bench swaps its own inputs,
// or, with sim_prompts, asks for the swap as a real jig does and waits for "continue".
#include <catch2/catch.hpp>

#include <cmath>

#include "dsp/jig_model.hpp"
#include "dsp/part_spec.hpp"
#include "tests/support/service_process.hpp"

using tb::test::ServiceProcess;

namespace {

double truth_mag(const char* part, double f) {
  return std::abs(tb::dsp::part_impedance(tb::dsp::parse_part(part).netlist, f));
}

}  // namespace

TEST_CASE("a swap-averaged reading needs no channel match", "[service]") {
  ServiceProcess svc(
      {"--sim-part", "res 150", "--rref-ohm", "100", "--sim-seed", "4", "--duration-s", "0.3"});
  for (const char* kind : {"channel_match", "open", "short"}) {
    REQUIRE(svc.post("/api/v1/calibrations", {{"kind", kind}, {"freqs_hz", {1000}}, {"wait", true}})
                .status == 201);
  }
  // The channel match is deleted again: the swap must do without it.
  const auto list = svc.get("/api/v1/calibrations").json().at("calibrations");
  for (const auto& c : list)
    if (c.at("kind") == "channel_match")
      REQUIRE(svc.request("DELETE", "/api/v1/calibrations/" + std::to_string(c.at("id").get<int>()))
                  .status == 204);
  const auto res = svc.post("/api/v1/readings", {{"swap_average", true}, {"wait", true}});
  INFO(res.body);
  REQUIRE(res.status == 201);
  const auto r = res.json();
  CHECK(r.at("swap_averaged") == true);
  CHECK(r.at("channel_match") == false);
  CHECK(r.at("open_short") == true);
  CHECK(r.at("warnings").empty());
  CHECK(std::abs(r.at("z_mag_ohm").get<double>() - truth_mag("res 150", 1000)) <=
        r.at("uncertainty").at("z_mag_ohm").get<double>());
  // Continuous readings cannot stop for a swap.
  const auto watch = svc.post("/api/v1/watch", {{"swap_average", true}});
  CHECK(watch.status == 400);
}

TEST_CASE("a swap-averaged reading asks for the swap and waits for continue", "[service]") {
  ServiceProcess svc(
      {"--sim-part", "res 220", "--rref-ohm", "100", "--sim-prompts", "--duration-s", "0.2"});
  const auto queued = svc.post("/api/v1/readings", {{"swap_average", true}});
  REQUIRE(queued.status == 202);
  const auto id = queued.json().at("task").at("id").get<int>();
  const std::string task = "/api/v1/tasks/" + std::to_string(id);
  auto prompt = [&] { return svc.get(task).json().at("prompt"); };
  // Before any prompt, continue is refused.
  REQUIRE(tb::test::eventually([&] { return !prompt().is_null(); }, 20));
  CHECK(prompt().get<std::string>().find("swap the two input leads") != std::string::npos);
  CHECK(svc.get(task).json().at("status") == "running");
  REQUIRE(svc.post(task + "/continue", nlohmann::json::object()).status == 202);
  // Then it asks to put them back.
  REQUIRE(tb::test::eventually(
      [&] {
        const auto p = prompt();
        return p.is_string() &&
               p.get<std::string>().find("put the input leads back") != std::string::npos;
      },
      20));
  REQUIRE(svc.post(task + "/continue", nlohmann::json::object()).status == 202);
  REQUIRE(tb::test::eventually([&] { return svc.get(task).json().at("status") == "done"; }, 20));
  const auto r = svc.get("/api/v1/readings/latest").json();
  CHECK(r.at("swap_averaged") == true);
  CHECK(r.at("z_mag_ohm").get<double>() == Approx(220).epsilon(0.05));
  // The task waits for no one now.
  const auto late = svc.post(task + "/continue", nlohmann::json::object());
  CHECK(late.status == 409);
  CHECK(late.json().at("error").at("id") == "task.not_waiting");
}

TEST_CASE("a prompt can be answered by cancelling the task", "[service]") {
  ServiceProcess svc(
      {"--sim-part", "res 220", "--rref-ohm", "100", "--sim-prompts", "--duration-s", "0.2"});
  const auto id =
      svc.post("/api/v1/readings", {{"swap_average", true}}).json().at("task").at("id").get<int>();
  const std::string task = "/api/v1/tasks/" + std::to_string(id);
  REQUIRE(tb::test::eventually([&] { return !svc.get(task).json().at("prompt").is_null(); }, 20));
  CHECK(svc.request("DELETE", task).status == 202);
  REQUIRE(
      tb::test::eventually([&] { return svc.get(task).json().at("status") == "cancelled"; }, 20));
  // The bench is wired as before: a plain reading works.
  CHECK(svc.post("/api/v1/readings", {{"wait", true}}).status == 201);
}
