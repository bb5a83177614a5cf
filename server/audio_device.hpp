// The one narrow interface every sound card sits behind: the simulated bench now, the
// PortAudio device later. One duplex stream, so output and both inputs share a clock.
//
// The device calls the callback once per period from its own thread with the two input
// channels it just captured (node A, node B) and the output buffer to fill (the signal
// driving node A). The callback must not allocate, lock, log or block: it copies.
//
// To add a device: copy simulated_card.hpp/.cpp, implement these four members, and list
// it in device_registry.cpp.
#pragma once

#include <cstddef>
#include <cstdint>
#include <functional>
#include <span>
#include <string>
#include <vector>

namespace tb {

struct DeviceInfo {
  std::string id;    ///< stable id used in configuration, e.g. "simulated"
  std::string name;  ///< human name
  int inputs = 2, outputs = 1;
  std::vector<double> sample_rates_hz;
  bool simulated = false;
  int index = -1;        ///< PortAudio device index at the last scan; -1 for the simulated bench
  std::string host_api;  ///< PortAudio host API ("ALSA", "JACK Audio Connection Kit"); empty
};

struct StreamSpec {
  double sample_rate_hz = 48000;
  std::size_t period_frames = 256;
};

/// in_a, in_b: the period just captured (full-scale units); out: to be filled for playback.
/// Returns false once it holds every frame it needs: the device may then stop calling it and
/// idle until stop(). The simulated bench does, so a free-running bench renders exactly the
/// frames a capture asked for and a test repeats to the sample; a real card keeps running.
using DuplexCallback = std::function<bool(std::span<const float> in_a, std::span<const float> in_b,
                                          std::span<float> out)>;

class AudioDevice {
 public:
  virtual ~AudioDevice() = default;
  virtual DeviceInfo info() const = 0;
  /// Starts the stream; throws tb::Error device.* (unsupported rate, busy, gone).
  virtual void start(const StreamSpec& spec, DuplexCallback callback) = 0;
  /// Stops and joins the device thread; the callback is not called after this returns.
  virtual void stop() = 0;
  /// False once stopped, or when the device stopped by itself (device lost).
  virtual bool running() const = 0;
  /// Periods the device reported as damaged since it was made (input overflow, output
  /// underflow). Read it before and after a capture: a change means the capture holds a gap.
  virtual std::uint64_t xruns() const { return 0; }
};

}  // namespace tb
