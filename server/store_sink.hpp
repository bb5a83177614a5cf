// The engine's results into the store (engine_sink.hpp): readings, sweeps point by point,
// calibrations. Runs first among the sinks and writes the ids it assigns into the event.
#pragma once

#include "server/engine_sink.hpp"
#include "server/store.hpp"

namespace tb {

class StoreSink final : public EngineSink {
 public:
  explicit StoreSink(Store& store) : store_(store) {}
  void deliver(EngineEvent& event) override;

 private:
  Store& store_;
};

}  // namespace tb
