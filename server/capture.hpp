// Playing an excitation through a device while recording both inputs. The device's
// callback only copies: the excitation from a buffer prepared before the stream starts,
// the captured frames into a lock-free ring (sample_ring.hpp). The caller's thread drains
// the ring, watches for cancellation and for a device that stops.
#pragma once

#include <atomic>
#include <span>
#include <vector>

#include "server/audio_device.hpp"

namespace tb {

struct Capture {
  double sample_rate_hz = 0;
  std::vector<double> a, b;  ///< node A, node B, full-scale units
};

/// Plays `excitation` (full-scale units, one channel) and records until it has played and
/// `tail_frames` more have been captured. Blocks. A capture during which the device counted
/// an xrun (AudioDevice::xruns) is taken again once. Nothing partial is returned; throws
/// tb::Error
///   device.lost     the device stopped before the capture was complete;
///   capture.overrun the ring overflowed (this thread fell behind the device);
///   capture.xrun    the device reported an xrun in the capture and again in its retake;
///   task.cancelled  `*cancel` became true (checked every few milliseconds).
Capture play_and_capture(AudioDevice& device, const StreamSpec& spec,
                         std::span<const double> excitation, std::size_t tail_frames,
                         const std::atomic<bool>* cancel = nullptr);

}  // namespace tb
