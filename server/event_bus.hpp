// Live events for the page (Server-Sent Events): the engine's events (engine_sink.hpp)
// and the service's own ("settings", "job", ...), each formatted once and handed to every
// open stream. A client that falls more than kBacklog events behind is dropped (its
// browser reconnects and fetches what it missed); the engine never waits for a client.
//
// Wire format per event:  "id: 17\nevent: reading\ndata: {...}\n\n"
#pragma once

#include <condition_variable>
#include <cstdint>
#include <deque>
#include <memory>
#include <mutex>
#include <string>
#include <vector>

#include "server/engine_sink.hpp"

namespace tb {

class EventStream {
 public:
  /// Waits up to timeout_ms for the next event; false on timeout or when closed.
  bool next(std::string& message, int timeout_ms);
  bool closed() const;

 private:
  friend class EventBus;
  mutable std::mutex m_;
  std::condition_variable cv_;
  std::deque<std::string> queue_;
  bool closed_ = false;
};

class EventBus final : public EngineSink {
 public:
  static constexpr std::size_t kBacklog = 256;
  explicit EventBus(int max_clients) : max_clients_(max_clients) {}

  void deliver(EngineEvent& event) override { publish(event.type, event.data); }
  void publish(const std::string& type, const nlohmann::json& data);

  /// Throws tb::Error events.too_many_clients when max_clients streams are open.
  std::shared_ptr<EventStream> subscribe();
  void unsubscribe(const std::shared_ptr<EventStream>& s);
  /// Ends every stream (shutdown).
  void close_all();
  int clients() const;
  std::uint64_t published() const;

 private:
  mutable std::mutex m_;
  std::vector<std::shared_ptr<EventStream>> streams_;
  std::uint64_t next_id_ = 1;
  int max_clients_;
  bool closed_ = false;
};

}  // namespace tb
