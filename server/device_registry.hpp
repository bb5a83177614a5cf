// The one list of audio devices the service can open. To add a device, implement
// AudioDevice (audio_device.hpp; copy simulated_card.hpp/.cpp) and add it here.
#pragma once

#include <memory>
#include <vector>

#include "server/audio_device.hpp"
#include "server/settings.hpp"

namespace tb {

/// Every device that could be opened now.
std::vector<DeviceInfo> list_devices(const Settings& s);

/// Opens the device the settings name ("device"), configured from the settings (the
/// simulated bench: sim_seed, sim_part, sim_real_time, layout, rref_ohm, the tolerance).
/// Throws tb::Error device.unknown naming the device and the ones that exist.
std::unique_ptr<AudioDevice> open_device(const Settings& s);

}  // namespace tb
