#include "server/capture.hpp"

#include <atomic>
#include <chrono>
#include <thread>

#include "server/error.hpp"

namespace tb {

Capture play_and_capture(AudioDevice& device, const StreamSpec& spec,
                         std::span<const double> excitation, std::size_t tail_frames) {
  const std::size_t total = excitation.size() + tail_frames;
  Capture cap;
  cap.sample_rate_hz = spec.sample_rate_hz;
  cap.a.assign(total, 0.0);
  cap.b.assign(total, 0.0);
  // The first callback sees a period captured before anything was played: skip it, so
  // capture index 0 is the period in which excitation sample 0 was handed to the device.
  std::size_t played = 0, captured = 0;
  bool first = true;
  std::atomic<bool> done{false};
  device.start(
      spec, [&](std::span<const float> in_a, std::span<const float> in_b, std::span<float> out) {
        if (!first) {
          for (std::size_t i = 0; i < in_a.size() && captured < total; ++i, ++captured) {
            cap.a[captured] = in_a[i];
            cap.b[captured] = in_b[i];
          }
          if (captured == total) done.store(true);
        }
        first = false;
        for (std::size_t i = 0; i < out.size(); ++i, ++played) {
          out[i] = played < excitation.size() ? static_cast<float>(excitation[played]) : 0.0f;
        }
      });
  while (!done.load() && device.running())
    std::this_thread::sleep_for(std::chrono::milliseconds(2));
  const bool complete = done.load();
  device.stop();
  if (!complete) {
    throw Error("device.lost", "the audio device stopped during the measurement",
                "check the connection to the sound card and measure again");
  }
  return cap;
}

}  // namespace tb
