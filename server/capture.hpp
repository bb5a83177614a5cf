// Playing an excitation through a device while recording both inputs: the device's
// callback only copies samples (no allocation, no locks); the caller's thread waits.
#pragma once

#include <span>
#include <vector>

#include "server/audio_device.hpp"

namespace tb {

struct Capture {
  double sample_rate_hz = 0;
  std::vector<double> a, b;  ///< node A, node B, full-scale units
};

/// Plays `excitation` (full-scale units, one channel) and records until it has played and
/// `tail_frames` more have been captured. Blocks. Throws tb::Error device.lost when the
/// device stops before the capture is complete (nothing partial is returned).
Capture play_and_capture(AudioDevice& device, const StreamSpec& spec,
                         std::span<const double> excitation, std::size_t tail_frames);

}  // namespace tb
