#include "server/event_bus.hpp"

#include <catch2/catch.hpp>

#include "server/error.hpp"

namespace tb {

TEST_CASE("events reach every stream in order as Server-Sent Events", "[event_bus]") {
  EventBus bus(4);
  auto a = bus.subscribe(), b = bus.subscribe();
  bus.publish("reading", {{"z_mag_ohm", 4.7}});
  bus.publish("state", {{"state", "idle"}});
  std::string m;
  REQUIRE(a->next(m, 100));
  CHECK(m == "id: 1\nevent: reading\ndata: {\"z_mag_ohm\":4.7}\n\n");
  REQUIRE(a->next(m, 100));
  CHECK(m.find("event: state\n") != std::string::npos);
  CHECK_FALSE(a->next(m, 10));
  REQUIRE(b->next(m, 100));
  CHECK(m.find("id: 1\n") == 0);
  CHECK(bus.published() == 2);
}

TEST_CASE("a stream that falls behind is dropped without holding back the others", "[event_bus]") {
  EventBus bus(4);
  auto slow = bus.subscribe(), fast = bus.subscribe();
  std::string m;
  for (std::size_t i = 0; i < EventBus::kBacklog + 10; ++i) {
    bus.publish("sweep.point", {{"index", i}});
    REQUIRE(fast->next(m, 100));
  }
  CHECK_FALSE(fast->closed());
  // The slow one gets what it had queued, then ends.
  int drained = 0;
  while (slow->next(m, 10))
    ++drained;
  CHECK(drained == static_cast<int>(EventBus::kBacklog));
  CHECK(slow->closed());
}

TEST_CASE("the number of streams is limited and freed by unsubscribing", "[event_bus]") {
  EventBus bus(2);
  auto a = bus.subscribe();
  auto b = bus.subscribe();
  try {
    bus.subscribe();
    FAIL("a third stream was allowed");
  } catch (const Error& e) {
    CHECK(e.id() == "events.too_many_clients");
  }
  bus.unsubscribe(a);
  CHECK(bus.clients() == 1);
  CHECK_NOTHROW(bus.subscribe());
  bus.close_all();
  std::string m;
  CHECK_FALSE(b->next(m, 10));
  CHECK(b->closed());
}

}  // namespace tb
