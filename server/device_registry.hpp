// The one list of audio devices the service can open. To add a device, implement
// AudioDevice (audio_device.hpp; copy simulated_card.hpp/.cpp) and add it here.
#pragma once

#include <memory>
#include <vector>

#include "server/audio_device.hpp"
#include "server/settings.hpp"

namespace tb {

/// Every device that could be opened now: the simulated bench, then PortAudio's (as of its
/// last scan; see portaudio_device.hpp).
std::vector<DeviceInfo> list_devices(const Settings& s);

/// Opens the device the settings name ("device"), configured from the settings (the
/// simulated bench: sim_seed, sim_part, sim_real_time, layout, rref_ohm, the tolerance).
/// A "pa:..." id opens that PortAudio device with the channel map input_node_a,
/// input_node_b, output_channel. Throws tb::Error device.unknown naming the device and the
/// ones that exist, device.bad_channel for a map the device cannot take.
std::unique_ptr<AudioDevice> open_device(const Settings& s);

}  // namespace tb
