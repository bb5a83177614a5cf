// The engine with a device that goes away: a sweep keeps the points it saved and says
// why it ended, the engine reports the lost device, and it measures again when the device
// returns. Also the queue's own rules: cancelling, limits, shutdown.
#include "server/engine.hpp"

#include <catch2/catch.hpp>

#include <atomic>

#include "dsp/part_spec.hpp"
#include "server/error.hpp"
#include "server/simulated_card.hpp"
#include "server/store_sink.hpp"
#include "tests/support/service_process.hpp"
#include "tests/support/signals.hpp"

namespace tb {

namespace {

// The simulated bench behind a plug that can be pulled: after `starts_left` stream starts
// the device stops delivering (as a USB card pulled out mid-capture) until plugged back.
class PluggableDevice final : public AudioDevice {
 public:
  explicit PluggableDevice(SimulatedBenchConfig c) : inner_(std::move(c)) {}
  DeviceInfo info() const override { return inner_.info(); }
  void start(const StreamSpec& spec, DuplexCallback cb) override {
    if (starts_left_-- <= 0) pulled_ = true;
    if (pulled_) throw Error("device.lost", "the test pulled the device", "plug it back");
    inner_.start(spec, std::move(cb));
  }
  void stop() override { inner_.stop(); }
  bool running() const override { return !pulled_ && inner_.running(); }

  std::atomic<int> starts_left_{1 << 30};
  std::atomic<bool> pulled_{false};

 private:
  SimulatedCard inner_;
};

class Recorder final : public EngineSink {
 public:
  void deliver(EngineEvent& e) override {
    std::lock_guard lock(m_);
    types_.push_back(e.type);
  }
  int count(const std::string& type) const {
    std::lock_guard lock(m_);
    return static_cast<int>(std::count(types_.begin(), types_.end(), type));
  }

 private:
  mutable std::mutex m_;
  std::vector<std::string> types_;
};

Settings fast_settings() {
  Settings s;
  s.set("duration_s", "0.1");
  s.set("sim_real_time", "false");
  s.set("sim_part", "res 100");
  s.set("rref_ohm", "100");
  return s;
}

SimulatedBenchConfig bench_for(const Settings& s) {
  SimulatedBenchConfig c;
  c.card = dsp::ideal_card();
  c.part = dsp::parse_part(s.text("sim_part")).netlist;
  c.jig.rref_ohm = s.number("rref_ohm");
  return c;
}

}  // namespace

TEST_CASE("a device lost mid-sweep leaves a failed sweep with its saved points", "[engine]") {
  const Settings s = fast_settings();
  LiveSettings live(s);
  Store store(test::make_temp_dir("engine") + "/t.db");
  StoreSink store_sink(store);
  Recorder rec;
  auto device = std::make_unique<PluggableDevice>(bench_for(s));
  auto* plug = device.get();
  // Each point listens (one start) and then plays its tone (another): 2 points and a half.
  plug->starts_left_ = 5;
  Engine engine(std::move(device), live, &store, {&store_sink, &rec});
  SweepTask sweep;
  sweep.start_hz = 100;
  sweep.stop_hz = 1000;
  sweep.points_per_decade = 5;
  const auto queued = engine.submit(sweep);
  const auto done = engine.wait(queued.id, 60);
  REQUIRE(done);
  CHECK(done->status == "failed");
  CHECK(done->error.at("id") == "device.lost");
  const auto id = done->result.at("sweep_id").get<std::int64_t>();
  const auto saved = store.sweep(id);
  REQUIRE(saved);
  CHECK(saved->status == SweepStatus::failed);
  CHECK(saved->points_saved == 2);
  CHECK(saved->points_planned == 6);
  CHECK(saved->end.at("id") == "device.lost");
  // The state follows the task's end (the task's outcome is recorded first).
  CHECK(test::eventually([&] { return engine.status().state == EngineState::device_lost; }, 10));

  // Plugged back: the next reading works and the engine is idle again.
  plug->pulled_ = false;
  plug->starts_left_ = 1 << 30;
  const auto reading = engine.wait(engine.submit(ReadingTask{}).id, 60);
  REQUIRE(reading);
  CHECK(reading->status == "done");
  CHECK(test::eventually([&] { return engine.status().state == EngineState::idle; }, 10));
  CHECK(rec.count("sweep.point") == 2);
  CHECK(rec.count("sweep.end") == 1);
  CHECK(rec.count("reading") == 1);
}

TEST_CASE("queued tasks can be cancelled and the queue has a limit", "[engine]") {
  const Settings s = fast_settings();
  LiveSettings live(s);
  Recorder rec;
  Engine engine(std::make_unique<PluggableDevice>(bench_for(s)), live, nullptr, {&rec});
  // Continuous readings hold the engine until cancelled, so the queue behind them fills.
  const auto first = engine.submit(WatchTask{ReadingTask{}, 1.0});
  REQUIRE(test::eventually([&] { return engine.status().task.has_value(); }, 10));
  std::vector<TaskInfo> waiting;
  for (int i = 0; i < Engine::kMaxQueued; ++i)
    waiting.push_back(engine.submit(ReadingTask{}));
  REQUIRE_THROWS_AS(engine.submit(ReadingTask{}), Error);
  try {
    engine.submit(ReadingTask{});
  } catch (const Error& e) {
    CHECK(e.id() == "engine.queue_full");
  }
  CHECK(engine.cancel(waiting.back().id));
  CHECK(engine.task(waiting.back().id)->status == "cancelled");
  CHECK_FALSE(engine.cancel(999));
  engine.cancel(first.id);
  engine.shutdown();
  // Shutdown ends the rest: nothing is left queued or running.
  for (const auto& t : engine.tasks())
    CHECK_FALSE(t.ended_at.empty());
  CHECK_THROWS_AS(engine.submit(ReadingTask{}), Error);
}

TEST_CASE("requests outside the limits are refused before they are queued", "[engine]") {
  const Settings s = fast_settings();
  LiveSettings live(s);
  Engine engine(std::make_unique<PluggableDevice>(bench_for(s)), live, nullptr, {});
  ReadingTask high;
  high.freq_hz = 30000;  // above 0.45 * 48 kHz
  CHECK_THROWS_AS(engine.submit(high), Error);
  ReadingTask loud;
  loud.level_fs = 0.8;  // above the default cap of 0.5
  try {
    engine.submit(loud);
    FAIL("a level above the cap was queued");
  } catch (const Error& e) {
    CHECK(e.id() == "request.level_above_cap");
  }
  SweepTask many;
  many.start_hz = 10;
  many.stop_hz = 20000;
  many.points_per_decade = 100;  // 3.3 decades: 332 points, allowed
  CHECK(many.points() == 332);
  CHECK(many.frequencies().front() == Approx(10));
  CHECK(many.frequencies().back() == Approx(20000));
  CHECK(engine.tasks().empty());
}

}  // namespace tb
