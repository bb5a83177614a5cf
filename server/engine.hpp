// The measurement engine: one thread owns the audio device; everything else asks it
// through a queue. Tasks (engine_tasks.hpp) run one at a time in the order queued; each
// can be cancelled, queued or running. Results and state changes go out through sinks
// (engine_sink.hpp); status() and latest_reading() are snapshots any thread may read.
//
// A sweep is saved point by point as it is measured (through the store sink). A sweep
// that ends early keeps its points and says why: cancelled (a client), failed (the
// device or the store), interrupted (the service stopped).
//
// A task that loses the device (device.lost) leaves the engine in device_lost; the next
// task opens the device again from the settings before it runs, so the service outlives
// an unplugged card.
#pragma once

#include <atomic>
#include <condition_variable>
#include <cstdint>
#include <deque>
#include <map>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <thread>
#include <utility>
#include <vector>

#include "server/audio_device.hpp"
#include "server/engine_sink.hpp"
#include "server/engine_tasks.hpp"
#include "server/error_report.hpp"
#include "server/live_settings.hpp"
#include "server/store.hpp"

namespace tb {

class SimulatedCard;

enum class EngineState { idle, reading, watching, sweeping, calibrating, device_lost, stopping };
/// "idle", "reading", "watching", "sweeping", "calibrating", "device-lost", "stopping".
std::string state_name(EngineState s);

struct TaskInfo {
  std::int64_t id = 0;
  std::string kind;
  std::string status = "queued";  ///< queued, running, done, failed, cancelled
  nlohmann::json request;
  nlohmann::json result;  ///< reading id, sweep id, calibration id ...
  nlohmann::json error;   ///< {"id","message","hint"} when failed
  std::string queued_at, started_at, ended_at;
  int done = 0, total = 0;  ///< progress in steps (points, readings)
  /// What the technician must do before the running task goes on (swap the inputs, ...);
  /// empty when it waits for no one. POST /api/v1/tasks/{id}/continue confirms.
  std::string prompt;
};
nlohmann::json to_json(const TaskInfo& t);

struct EngineStatus {
  EngineState state = EngineState::idle;
  std::optional<TaskInfo> task;  ///< the running task
  int queued = 0;
  std::string device;
  std::string bench_part;  ///< simulated bench: the part on the jig
  nlohmann::json last_error;
};
nlohmann::json to_json(const EngineStatus& s);

class Engine {
 public:
  static constexpr int kMaxQueued = 16;

  /// `device` is owned by the engine's thread from here on. `store` answers calibration
  /// lookups (may be null: no corrections). Sinks must outlive the engine.
  Engine(std::unique_ptr<AudioDevice> device, LiveSettings& settings, const Store* store,
         std::vector<EngineSink*> sinks);
  ~Engine();  ///< calls shutdown()
  Engine(const Engine&) = delete;
  Engine& operator=(const Engine&) = delete;

  /// Validates against the present settings (engine_tasks.hpp validate) and queues.
  /// Throws tb::Error request.* for a bad request, engine.queue_full when kMaxQueued
  /// tasks wait, engine.stopping after shutdown began.
  TaskInfo submit(TaskRequest request);
  /// Cancels a queued or running task; false if it is unknown or already ended.
  bool cancel(std::int64_t task_id);
  /// Confirms that the running task's prompt was done; false if that task waits for
  /// no one.
  bool resume(std::int64_t task_id);
  /// Cancels the running task if it is of this kind ("watch", "sweep"); returns its id.
  std::optional<std::int64_t> cancel_kind(const std::string& kind);

  std::optional<TaskInfo> task(std::int64_t id) const;
  std::vector<TaskInfo> tasks() const;  ///< queued, running and the last 50 ended
  EngineStatus status() const;
  std::shared_ptr<const nlohmann::json> latest_reading() const;
  /// Blocks until the task has ended or `timeout_s` passed; returns its info then.
  std::optional<TaskInfo> wait(std::int64_t id, double timeout_s) const;

  /// Cancels everything; a sweep in flight ends as "interrupted" with its points saved.
  /// Joins the engine thread. Idempotent.
  void shutdown();

 private:
  struct Queued {
    TaskInfo info;
    TaskRequest request;
  };
  void run();
  void execute(Queued& q);
  void set_state(EngineState s);
  void publish(EngineEvent& e);
  void update_task(const TaskInfo& info);
  std::string device_id() const;
  /// After a task ended with device.lost: opens the device the settings name again (a
  /// card plugged back in, a JACK client restarted). Throws device.lost if it is still gone.
  void reopen_device(const Settings& s);
  /// Publishes `prompt` with the task and blocks until resume(), cancellation
  /// (task.cancelled) or `timeout_s` (task.no_answer).
  void await_user(TaskInfo& info, const std::string& prompt, double timeout_s = 600);

  // Task bodies (engine_runs.cpp).
  /// `info`: the task, for prompts (swap-and-average); null inside a watch.
  nlohmann::json run_reading(const ReadingTask& t, const Settings& s, const char* origin,
                             std::int64_t task_id, TaskInfo* info = nullptr);
  nlohmann::json run_watch(const WatchTask& t, const Settings& s, TaskInfo& info);
  nlohmann::json run_sweep(const SweepTask& t, const Settings& s, TaskInfo& info);
  nlohmann::json run_multisine_sweep(const SweepTask& t, const Settings& s, TaskInfo& info);
  /// The end of a sweep that stopped on `e`: "cancelled"/"interrupted"/"failed" and its error.
  std::pair<std::string, nlohmann::json> sweep_stop(const ErrorInfo& e);
  /// Publishes sweep.begin for `points` planned points (the store sink gives it an id) and
  /// puts the sweep's id in the task's result; returns the id.
  std::int64_t begin_sweep(const SweepTask& t, TaskInfo& info, int points);
  /// Publishes sweep.end; throws task.cancelled for a cancelled or interrupted sweep and the
  /// sweep's error for a failed one.
  void end_sweep(std::int64_t sweep_id, const std::string& status, const nlohmann::json& error,
                 int points_saved);
  nlohmann::json run_calibration(const CalibrationTask& t, const Settings& s, TaskInfo& info);
  nlohmann::json run_bench_part(const BenchPartTask& t);
  nlohmann::json run_tone(const ToneTask& t, const Settings& s, TaskInfo& info);
  void rewire_bench(const Settings& s, bool inputs_swapped = false);
  /// Makes a swap-and-average reading's connection: the simulated bench rewires itself
  /// (after a prompt, with sim_prompts), a real jig waits for the technician.
  void connect_inputs(const Settings& s, TaskInfo* info, bool swapped);

  std::unique_ptr<AudioDevice> device_;
  SimulatedCard* bench_ = nullptr;  // the device, when it is the simulated bench
  std::string bench_part_;
  LiveSettings& settings_;
  const Store* store_;
  std::vector<EngineSink*> sinks_;

  mutable std::mutex m_;
  mutable std::condition_variable cv_;
  std::deque<Queued> queue_;
  std::map<std::int64_t, TaskInfo> tasks_;
  std::int64_t next_id_ = 1;
  EngineStatus status_;
  std::shared_ptr<const nlohmann::json> latest_;
  std::atomic<bool> cancel_current_{false};
  std::int64_t current_id_ = 0;
  bool awaiting_ = false, resumed_ = false;  // a prompt is out / it was confirmed
  bool stopping_ = false;
  bool shutdown_done_ = false;
  bool device_lost_ = false;  // engine thread only: the last task lost the device
  std::thread thread_;
};

}  // namespace tb
