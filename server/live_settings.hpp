// The settings of a running service: read by anyone as a copy, changed through the API
// (live keys only, all-or-nothing). The engine takes a copy when a task starts, so a
// change never lands halfway through a reading or a sweep.
#pragma once

#include <mutex>

#include "server/settings.hpp"

namespace tb {

class LiveSettings {
 public:
  explicit LiveSettings(Settings initial) : s_(std::move(initial)) {}
  Settings get() const {
    std::lock_guard lock(m_);
    return s_;
  }
  /// Throws config.* (settings.hpp) and changes nothing on error; returns the new values.
  Settings apply(const nlohmann::json& changes) {
    std::lock_guard lock(m_);
    s_.apply_json(changes, true);
    return s_;
  }

 private:
  mutable std::mutex m_;
  Settings s_;
};

}  // namespace tb
