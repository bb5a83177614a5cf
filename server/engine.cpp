#include "server/engine.hpp"

#include <chrono>

#include "server/device_registry.hpp"
#include "server/error.hpp"
#include "server/error_report.hpp"
#include "server/simulated_card.hpp"

namespace tb {

std::string state_name(EngineState s) {
  static const char* names[] = {"idle",        "reading",     "watching", "sweeping",
                                "calibrating", "device-lost", "stopping"};
  return names[static_cast<int>(s)];
}

nlohmann::json to_json(const TaskInfo& t) {
  return {{"id", t.id},
          {"kind", t.kind},
          {"status", t.status},
          {"request", t.request},
          {"result", t.result},
          {"error", t.error},
          {"queued_at", t.queued_at},
          {"started_at", t.started_at},
          {"ended_at", t.ended_at},
          {"progress", {{"done", t.done}, {"total", t.total}}},
          {"prompt", t.prompt.empty() ? nlohmann::json() : nlohmann::json(t.prompt)}};
}

nlohmann::json to_json(const EngineStatus& s) {
  nlohmann::json j = {{"state", state_name(s.state)},
                      {"task", s.task ? to_json(*s.task) : nlohmann::json()},
                      {"queued", s.queued},
                      {"device", s.device},
                      {"last_error", s.last_error}};
  if (!s.bench_part.empty()) j["bench_part"] = s.bench_part;
  return j;
}

Engine::Engine(std::unique_ptr<AudioDevice> device, LiveSettings& settings, const Store* store,
               std::vector<EngineSink*> sinks)
    : device_(std::move(device)), settings_(settings), store_(store), sinks_(std::move(sinks)) {
  bench_ = dynamic_cast<SimulatedCard*>(device_.get());
  status_.device = device_->info().id;
  if (bench_) {
    bench_part_ = settings_.get().text("sim_part");
    status_.bench_part = bench_part_;
  }
  thread_ = std::thread([this] { run(); });
}

Engine::~Engine() {
  shutdown();
}

std::string Engine::device_id() const {
  return status_.device;
}

TaskInfo Engine::submit(TaskRequest request) {
  validate(request, settings_.get());
  std::lock_guard lock(m_);
  if (stopping_) {
    throw Error("engine.stopping", "the service is shutting down", "start it again");
  }
  if (static_cast<int>(queue_.size()) >= kMaxQueued) {
    throw Error("engine.queue_full", std::to_string(queue_.size()) + " tasks are already waiting",
                "wait for them to finish, or cancel some (DELETE /api/v1/tasks/ID)");
  }
  Queued q{{}, std::move(request)};
  q.info.id = next_id_++;
  q.info.kind = task_kind(q.request);
  q.info.request = to_json(q.request);
  q.info.queued_at = utc_now_iso();
  tasks_[q.info.id] = q.info;
  queue_.push_back(q);
  status_.queued = static_cast<int>(queue_.size());
  cv_.notify_all();
  return q.info;
}

bool Engine::cancel(std::int64_t task_id) {
  std::lock_guard lock(m_);
  for (auto it = queue_.begin(); it != queue_.end(); ++it) {
    if (it->info.id != task_id) continue;
    it->info.status = "cancelled";
    it->info.ended_at = utc_now_iso();
    tasks_[task_id] = it->info;
    queue_.erase(it);
    status_.queued = static_cast<int>(queue_.size());
    cv_.notify_all();
    return true;
  }
  if (current_id_ == task_id && current_id_ != 0) {
    cancel_current_ = true;
    return true;
  }
  return false;
}

bool Engine::resume(std::int64_t task_id) {
  std::lock_guard lock(m_);
  if (current_id_ != task_id || current_id_ == 0 || !awaiting_) return false;
  resumed_ = true;
  cv_.notify_all();
  return true;
}

void Engine::await_user(TaskInfo& info, const std::string& prompt, double timeout_s) {
  info.prompt = prompt;
  {
    std::lock_guard lock(m_);
    awaiting_ = true;
    resumed_ = false;
  }
  update_task(info);
  EngineEvent e{"task", to_json(info)};
  publish(e);
  const auto deadline = std::chrono::steady_clock::now() + std::chrono::duration<double>(timeout_s);
  bool resumed = false;
  {
    std::unique_lock lock(m_);
    // cancel() sets the flag without a notification: look at it every 100 ms.
    while (!resumed_ && !cancel_current_ && std::chrono::steady_clock::now() < deadline)
      cv_.wait_for(lock, std::chrono::milliseconds(100));
    resumed = resumed_;
    awaiting_ = resumed_ = false;
  }
  info.prompt.clear();
  update_task(info);
  if (resumed) return;
  if (cancel_current_) throw Error("task.cancelled", "the task was cancelled", "");
  throw Error("task.no_answer",
              "no one confirmed within " + std::to_string(static_cast<int>(timeout_s / 60)) +
                  " minutes: " + prompt,
              "do what it asks and start the task again");
}

std::optional<std::int64_t> Engine::cancel_kind(const std::string& kind) {
  std::lock_guard lock(m_);
  if (current_id_ == 0 || !status_.task || status_.task->kind != kind) return std::nullopt;
  cancel_current_ = true;
  return current_id_;
}

std::optional<TaskInfo> Engine::task(std::int64_t id) const {
  std::lock_guard lock(m_);
  const auto it = tasks_.find(id);
  if (it == tasks_.end()) return std::nullopt;
  return it->second;
}

std::vector<TaskInfo> Engine::tasks() const {
  std::lock_guard lock(m_);
  std::vector<TaskInfo> out;
  for (const auto& [id, t] : tasks_)
    out.push_back(t);
  return out;
}

EngineStatus Engine::status() const {
  std::lock_guard lock(m_);
  return status_;
}

std::shared_ptr<const nlohmann::json> Engine::latest_reading() const {
  std::lock_guard lock(m_);
  return latest_;
}

std::optional<TaskInfo> Engine::wait(std::int64_t id, double timeout_s) const {
  std::unique_lock lock(m_);
  cv_.wait_for(lock, std::chrono::duration<double>(timeout_s), [&] {
    const auto it = tasks_.find(id);
    return it == tasks_.end() || !it->second.ended_at.empty();
  });
  const auto it = tasks_.find(id);
  if (it == tasks_.end()) return std::nullopt;
  return it->second;
}

void Engine::shutdown() {
  {
    std::lock_guard lock(m_);
    if (shutdown_done_) return;
    shutdown_done_ = true;
    stopping_ = true;
    for (auto& q : queue_) {
      q.info.status = "cancelled";
      q.info.ended_at = utc_now_iso();
      q.info.error = {{"id", "engine.stopping"},
                      {"message", "the service stopped before this task started"},
                      {"hint", "queue it again after the restart"}};
      tasks_[q.info.id] = q.info;
    }
    queue_.clear();
    cancel_current_ = true;
    cv_.notify_all();
  }
  if (thread_.joinable()) thread_.join();
}

void Engine::publish(EngineEvent& e) {
  for (auto* s : sinks_)
    s->deliver(e);
}

void Engine::set_state(EngineState s) {
  EngineEvent e{"state", {}};
  {
    std::lock_guard lock(m_);
    status_.state = s;
    e.data = to_json(status_);
  }
  try {
    publish(e);
  } catch (...) {
    // A state change that no sink could record is still the engine's state.
  }
}

void Engine::update_task(const TaskInfo& info) {
  std::lock_guard lock(m_);
  tasks_[info.id] = info;
  if (status_.task && status_.task->id == info.id) status_.task = info;
  cv_.notify_all();
}

void Engine::run() {
  for (;;) {
    Queued q;
    {
      std::unique_lock lock(m_);
      cv_.wait(lock, [&] { return stopping_ || !queue_.empty(); });
      if (stopping_) break;
      q = std::move(queue_.front());
      queue_.pop_front();
      status_.queued = static_cast<int>(queue_.size());
      current_id_ = q.info.id;
      cancel_current_ = false;
    }
    execute(q);
    std::lock_guard lock(m_);
    current_id_ = 0;
    // Keep the last 50 ended tasks: enough for any client to pick up its result.
    while (tasks_.size() > 50 + queue_.size()) {
      const auto it = tasks_.begin();
      if (it->second.ended_at.empty()) break;
      tasks_.erase(it);
    }
  }
  set_state(EngineState::stopping);
}

void Engine::reopen_device(const Settings& s) {
  // The old device object may hold a dead stream or a stale device list: make a new one
  // from the settings, and keep the old one if the device is still not there.
  std::unique_ptr<AudioDevice> fresh;
  try {
    fresh = open_device(s);
  } catch (const Error& e) {
    if (e.id() != "device.unknown") throw;
    throw Error("device.lost", "the audio device '" + s.text("device") + "' is still not there",
                "reconnect the sound card (or start its JACK client again) and retry");
  }
  device_ = std::move(fresh);
  bench_ = dynamic_cast<SimulatedCard*>(device_.get());
  device_lost_ = false;
}

void Engine::execute(Queued& q) {
  const Settings s = settings_.get();
  TaskInfo& info = q.info;
  info.status = "running";
  info.started_at = utc_now_iso();
  {
    std::lock_guard lock(m_);
    status_.task = info;
  }
  update_task(info);
  static const EngineState states[] = {EngineState::reading,  EngineState::watching,
                                       EngineState::sweeping, EngineState::calibrating,
                                       EngineState::reading,  EngineState::calibrating};
  set_state(states[q.request.index()]);
  bool lost = false;
  try {
    // The simulated bench cannot be lost; a wrapped device (tests) is kept as it is.
    if (device_lost_ && !device_->info().simulated) reopen_device(s);
    if (const auto* r = std::get_if<ReadingTask>(&q.request)) {
      info.total = 1;
      info.result = run_reading(*r, s, "single", info.id, &info);
      info.done = 1;
    } else if (const auto* w = std::get_if<WatchTask>(&q.request)) {
      info.result = run_watch(*w, s, info);
    } else if (const auto* sw = std::get_if<SweepTask>(&q.request)) {
      info.result = run_sweep(*sw, s, info);
    } else if (const auto* c = std::get_if<CalibrationTask>(&q.request)) {
      info.result = run_calibration(*c, s, info);
    } else if (const auto* b = std::get_if<BenchPartTask>(&q.request)) {
      info.result = run_bench_part(*b);
    } else if (const auto* tone = std::get_if<ToneTask>(&q.request)) {
      info.result = run_tone(*tone, s, info);
    }
    info.status = "done";
  } catch (...) {
    const ErrorInfo e = describe_current_error();
    info.status = e.id == "task.cancelled" ? "cancelled" : "failed";
    if (e.id != "task.cancelled")
      info.error = {{"id", e.id}, {"message", e.message}, {"hint", e.hint}};
    lost = e.id == "device.lost";
    device_lost_ = lost;
    std::lock_guard lock(m_);
    if (!info.error.is_null()) status_.last_error = info.error;
  }
  info.ended_at = utc_now_iso();
  {
    std::lock_guard lock(m_);
    status_.task.reset();
    status_.bench_part = bench_part_;
  }
  update_task(info);
  EngineEvent done{"task", to_json(info)};
  try {
    publish(done);
  } catch (...) {
    // The task's own outcome is already recorded; a sink that fails here loses only news.
  }
  set_state(lost ? EngineState::device_lost : EngineState::idle);
}

}  // namespace tb
