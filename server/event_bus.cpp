#include "server/event_bus.hpp"

#include <algorithm>
#include <chrono>

#include "server/error.hpp"

namespace tb {

bool EventStream::next(std::string& message, int timeout_ms) {
  std::unique_lock lock(m_);
  cv_.wait_for(lock, std::chrono::milliseconds(timeout_ms),
               [&] { return closed_ || !queue_.empty(); });
  if (queue_.empty()) return false;
  message = std::move(queue_.front());
  queue_.pop_front();
  return true;
}

bool EventStream::closed() const {
  std::lock_guard lock(m_);
  return closed_ && queue_.empty();
}

void EventBus::publish(const std::string& type, const nlohmann::json& data) {
  std::lock_guard lock(m_);
  const std::string message =
      "id: " + std::to_string(next_id_++) + "\nevent: " + type +
      "\ndata: " + data.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace) + "\n\n";
  for (const auto& s : streams_) {
    std::lock_guard slock(s->m_);
    if (s->closed_) continue;
    if (s->queue_.size() >= kBacklog) {
      s->closed_ = true;  // too slow: let it reconnect rather than hold the others back
    } else {
      s->queue_.push_back(message);
    }
    s->cv_.notify_all();
  }
}

std::shared_ptr<EventStream> EventBus::subscribe() {
  std::lock_guard lock(m_);
  std::erase_if(streams_, [](const auto& s) { return s->closed(); });
  if (closed_) {
    throw Error("engine.stopping", "the service is shutting down",
                "connect again after it restarts");
  }
  if (static_cast<int>(streams_.size()) >= max_clients_) {
    throw Error("events.too_many_clients",
                std::to_string(streams_.size()) + " live event streams are open already",
                "close a page or tablet that is not in use, or raise max_event_clients");
  }
  streams_.push_back(std::make_shared<EventStream>());
  return streams_.back();
}

void EventBus::unsubscribe(const std::shared_ptr<EventStream>& s) {
  {
    std::lock_guard slock(s->m_);
    s->closed_ = true;
    s->queue_.clear();
  }
  std::lock_guard lock(m_);
  std::erase(streams_, s);
}

void EventBus::close_all() {
  std::lock_guard lock(m_);
  closed_ = true;
  for (const auto& s : streams_) {
    std::lock_guard slock(s->m_);
    s->closed_ = true;
    s->cv_.notify_all();
  }
}

int EventBus::clients() const {
  std::lock_guard lock(m_);
  return static_cast<int>(streams_.size());
}

std::uint64_t EventBus::published() const {
  std::lock_guard lock(m_);
  return next_id_ - 1;
}

}  // namespace tb
