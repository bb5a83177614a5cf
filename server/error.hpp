// The error every boundary (CLI, later HTTP) turns into one clear message: a stable id
// (listed in docs/errors.md), what happened, and what to do about it.
#pragma once

#include <stdexcept>
#include <string>

namespace tb {

class Error : public std::runtime_error {
 public:
  Error(std::string id, const std::string& message, std::string hint)
      : std::runtime_error(message), id_(std::move(id)), hint_(std::move(hint)) {}
  const std::string& id() const { return id_; }
  const std::string& hint() const { return hint_; }

 private:
  std::string id_, hint_;
};

}  // namespace tb
