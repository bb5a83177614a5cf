// The live event stream (Server-Sent Events) and continuous readings.
#include <catch2/catch.hpp>

#include <atomic>
#include <mutex>
#include <thread>

#include <httplib.h>

#include "tests/support/service_process.hpp"

using tb::test::eventually;
using tb::test::ServiceProcess;

namespace {

// Collects the raw event stream in a thread until told to stop.
class EventListener {
 public:
  explicit EventListener(int port) : client_("127.0.0.1", port) {
    client_.set_read_timeout(60, 0);
    thread_ = std::thread([this] {
      client_.Get("/api/v1/events", [this](const char* data, std::size_t len) {
        std::lock_guard lock(m_);
        text_.append(data, len);
        return !stop_.load();
      });
    });
  }
  ~EventListener() {
    stop_ = true;
    client_.stop();  // ends the read now instead of at the next event or ping
    thread_.join();
  }
  std::string text() const {
    std::lock_guard lock(m_);
    return text_;
  }
  int count(const std::string& type) const {
    const auto t = text();
    int n = 0;
    for (auto at = t.find("event: " + type + "\n"); at != std::string::npos;
         at = t.find("event: " + type + "\n", at + 1))
      ++n;
    return n;
  }

 private:
  httplib::Client client_;
  mutable std::mutex m_;
  std::string text_;
  std::atomic<bool> stop_{false};
  std::thread thread_;
};

}  // namespace

TEST_CASE("the event stream greets, then carries state changes, readings and sweep points",
          "[service]") {
  ServiceProcess svc({"--duration-s", "0.1", "--sim-part", "res 100", "--rref-ohm", "100"});
  EventListener events(svc.port());
  REQUIRE(eventually([&] { return events.count("hello") == 1; }, 10));
  REQUIRE(svc.post("/api/v1/readings", {{"wait", true}}).status == 201);
  REQUIRE(svc.post("/api/v1/sweeps",
                   {{"start_hz", 200}, {"stop_hz", 2000}, {"points_per_decade", 2}, {"wait", true}})
              .status == 201);
  // The engine reports idle after the sweep's last event: wait for both state changes.
  REQUIRE(
      eventually([&] { return events.count("sweep.end") == 1 && events.count("state") >= 4; }, 20));
  CHECK(events.count("reading") == 1);
  CHECK(events.count("sweep.begin") == 1);
  CHECK(events.count("sweep.point") == 3);
  CHECK(events.text().find("\"state\":\"sweeping\"") != std::string::npos);
  // Each event has an id line and one data line of JSON.
  CHECK(events.text().find("id: 1\nevent: ") != std::string::npos);
}

TEST_CASE("continuous readings run until they are stopped", "[service]") {
  ServiceProcess svc({"--duration-s", "0.1", "--sim-part", "res 100", "--rref-ohm", "100"});
  EventListener events(svc.port());
  const auto start = svc.post("/api/v1/watch", {{"per_s", 4}});
  INFO(start.body);
  REQUIRE(start.status == 202);
  REQUIRE(eventually([&] { return events.count("reading") >= 3; }, 30));
  CHECK(svc.get("/api/v1/status").json().at("engine").at("state") == "watching");
  CHECK(svc.request("DELETE", "/api/v1/watch").status == 202);
  const auto id = std::to_string(start.json().at("task").at("id").get<int>());
  REQUIRE(eventually(
      [&] { return svc.get("/api/v1/tasks/" + id).json().at("status") == "cancelled"; }, 20));
  const auto saved = svc.get("/api/v1/readings").json().at("readings");
  CHECK(saved.size() >= 3);
  CHECK(saved.at(0).at("origin") == "watch");
}

TEST_CASE("more event streams than allowed are refused with a clear error", "[service]") {
  ServiceProcess svc({"--max-event-clients", "2"});
  EventListener a(svc.port()), b(svc.port());
  REQUIRE(eventually([&] { return a.count("hello") == 1 && b.count("hello") == 1; }, 10));
  const auto third = svc.get("/api/v1/events");
  CHECK(third.status == 429);
  CHECK(third.json().at("error").at("id") == "events.too_many_clients");
}
