#include "server/capture.hpp"

#include <algorithm>
#include <chrono>
#include <thread>

#include "server/error.hpp"
#include "server/sample_ring.hpp"

namespace tb {

namespace {

Capture capture_once(AudioDevice& device, const StreamSpec& spec,
                     std::span<const double> excitation, std::size_t tail_frames,
                     const std::atomic<bool>* cancel) {
  const std::size_t total = excitation.size() + tail_frames;
  Capture cap;
  cap.sample_rate_hz = spec.sample_rate_hz;
  cap.a.assign(total, 0.0);
  cap.b.assign(total, 0.0);
  std::vector<float> out_samples(excitation.begin(), excitation.end());
  // Half a second of both channels, or 16 periods if that is more: the engine thread
  // drains every 2 ms, so only a stall of that length overflows it.
  SampleRing ring(2 * std::max<std::size_t>(static_cast<std::size_t>(spec.sample_rate_hz / 2),
                                            16 * spec.period_frames));
  // The first callback sees a period captured before anything was played: skip it, so
  // capture index 0 is the period in which excitation sample 0 was handed to the device.
  std::size_t played = 0, pushed = 0;
  bool first = true;
  device.start(spec,
               [&ring, &out_samples, &played, &pushed, &first, total](
                   std::span<const float> in_a, std::span<const float> in_b, std::span<float> out) {
                 if (!first && pushed < total) {
                   float frame[2];
                   for (std::size_t i = 0; i < in_a.size(); ++i) {
                     frame[0] = in_a[i];
                     frame[1] = in_b[i];
                     ring.push(frame);
                   }
                   pushed += in_a.size();
                 }
                 first = false;
                 for (std::size_t i = 0; i < out.size(); ++i, ++played)
                   out[i] = played < out_samples.size() ? out_samples[played] : 0.0f;
                 return pushed < total;
               });

  std::vector<float> chunk(4096);
  std::size_t captured = 0;
  bool cancelled = false, stopped = false;
  while (captured < total && ring.dropped() == 0) {
    const std::size_t n = ring.pop(chunk) / 2;
    for (std::size_t i = 0; i < n && captured < total; ++i, ++captured) {
      cap.a[captured] = chunk[2 * i];
      cap.b[captured] = chunk[2 * i + 1];
    }
    if (n > 0) continue;
    if (cancel && cancel->load()) {
      cancelled = true;
      break;
    }
    if (stopped) break;
    if (!device.running()) {
      stopped = true;  // one more pass: frames may have come between the pop and the stop
      continue;
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(2));
  }
  device.stop();
  if (cancelled) throw Error("task.cancelled", "the measurement was cancelled", "");
  if (ring.dropped() > 0) {
    throw Error("capture.overrun",
                "the service fell behind the sound card and lost samples of this capture",
                "measure again; if it repeats, close other busy programs or raise period_frames");
  }
  if (captured < total) {
    throw Error("device.lost", "the audio device stopped during the measurement",
                "check the connection to the sound card and measure again");
  }
  return cap;
}

}  // namespace

Capture play_and_capture(AudioDevice& device, const StreamSpec& spec,
                         std::span<const double> excitation, std::size_t tail_frames,
                         const std::atomic<bool>* cancel) {
  // A damaged period (xrun) inside the capture is a gap or a repeat the analysis cannot see:
  // the whole capture is taken again once, then refused. Counted from start to stop, so a
  // gap anywhere in the window counts.
  for (int attempt = 0;; ++attempt) {
    const std::uint64_t before = device.xruns();
    Capture cap = capture_once(device, spec, excitation, tail_frames, cancel);
    const std::uint64_t xruns = device.xruns() - before;
    if (xruns == 0) return cap;
    if (attempt == 1) {
      throw Error("capture.xrun",
                  "the sound card dropped or repeated samples (" + std::to_string(xruns) +
                      " xrun(s)) during the capture, twice in a row",
                  "close other programs using the card or the CPU, raise period_frames, and "
                  "measure again");
    }
  }
}

}  // namespace tb
