// Results leave the measurement engine through sinks: the store, the live event stream,
// a log. The engine does not know who listens. Sinks are called in the order they were
// given, on the engine's thread; the store's sink comes first and writes the ids it
// assigns into the event ("id" of a reading, "sweep_id" of a sweep), so later sinks and
// the engine itself see them.
//
// Event types and their data:
//   state        {"state":..,"task":{..}|null,"queued":n,"device":..}
//   task         {"id":..,"kind":..,"status":"queued|running|done|failed|cancelled",..}
//   reading      the reading (reading_json.hpp) plus "origin" and "task_id"
//   sweep.begin  {"task_id":..,"params":{..},"points_planned":n}        -> "sweep_id"
//   sweep.point  {"sweep_id":..,"index":i,"freq_hz":..,"reading":{..}}
//   sweep.end    {"sweep_id":..,"status":"complete|cancelled|interrupted|failed",
//                 "error":{..}|null,"points_saved":n}
//   calibration  {"kind":..,"device":..,"sample_rate_hz":..,"layout":..,"rref_ohm":..,
//                 "points":[..]}                                          -> "id"
//   bench.part   {"part":"cap 6.8u esr 0.05"}
#pragma once

#include <string>

#include <nlohmann/json.hpp>

namespace tb {

struct EngineEvent {
  std::string type;
  nlohmann::json data;
};

class EngineSink {
 public:
  virtual ~EngineSink() = default;
  /// May throw tb::Error (a store that cannot write): the engine ends the task with it.
  virtual void deliver(EngineEvent& event) = 0;
};

}  // namespace tb
