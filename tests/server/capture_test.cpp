// play_and_capture with a device that reports xruns: a capture holding one is taken again
// once, and refused (capture.xrun) when the retake has one too.
#include "server/capture.hpp"

#include <catch2/catch.hpp>

#include <atomic>
#include <thread>
#include <vector>

#include "server/error.hpp"

namespace tb {

namespace {

// Loops the output back to both inputs, period by period on its own thread, and reports an
// xrun during each of the first `xrun_starts` streams.
class XrunDevice final : public AudioDevice {
 public:
  explicit XrunDevice(int xrun_starts) : xrun_starts_(xrun_starts) {}
  ~XrunDevice() override { stop(); }
  DeviceInfo info() const override { return {}; }
  void start(const StreamSpec& spec, DuplexCallback cb) override {
    ++starts;
    const bool xrun = starts <= xrun_starts_;
    running_ = true;
    thread_ = std::thread([this, spec, cb = std::move(cb), xrun] {
      std::vector<float> out(spec.period_frames), in(spec.period_frames);
      for (int period = 0; running_; ++period) {
        cb(in, in, out);
        in = out;
        if (xrun && period == 3) ++xruns_;
        std::this_thread::sleep_for(std::chrono::microseconds(100));
      }
    });
  }
  void stop() override {
    running_ = false;
    if (thread_.joinable()) thread_.join();
  }
  bool running() const override { return running_; }
  std::uint64_t xruns() const override { return xruns_; }

  int starts = 0;

 private:
  int xrun_starts_;
  std::atomic<bool> running_{false};
  std::atomic<std::uint64_t> xruns_{0};
  std::thread thread_;
};

}  // namespace

TEST_CASE("a capture with an xrun is taken again and the retake is returned", "[capture]") {
  XrunDevice dev(1);
  const std::vector<double> x(4096, 0.25);
  const auto cap = play_and_capture(dev, {48000, 256}, x, 1024);
  CHECK(dev.starts == 2);
  REQUIRE(cap.a.size() == 4096 + 1024);
  CHECK(cap.a[100] == Approx(0.25));  // the loopback delivered the played samples
}

TEST_CASE("a capture with an xrun in its retake too is refused as capture.xrun", "[capture]") {
  XrunDevice dev(2);
  const std::vector<double> x(4096, 0.25);
  try {
    (void)play_and_capture(dev, {48000, 256}, x, 1024);
    FAIL("no error");
  } catch (const Error& e) {
    CHECK(e.id() == "capture.xrun");
  }
  CHECK(dev.starts == 2);
}

TEST_CASE("a capture without xruns is taken once", "[capture]") {
  XrunDevice dev(0);
  const std::vector<double> x(2048, 0.1);
  (void)play_and_capture(dev, {48000, 256}, x, 512);
  CHECK(dev.starts == 1);
}

}  // namespace tb
