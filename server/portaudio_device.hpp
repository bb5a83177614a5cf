// A real sound card through PortAudio: one duplex float32 stream, so the output and both
// inputs run on one clock. Any host API PortAudio has (ALSA, JACK, ...) works; JACK is how
// the tests reach it without a card (tests/tools/jack_jig_emulator.cpp).
//
// Device ids are "pa:<host api>:<device name>", e.g. "pa:ALSA:USB Audio: - (hw:1,0)"; the
// "device" setting may also say "pa:<index>" or "pa:<device name>" (the first device of that
// name). A device is looked up by name each time a stream starts, so a card that was
// unplugged and plugged back in (or a JACK client that restarted) is found again.
//
// The callback copies the mapped channels into the DuplexCallback and returns; xruns are
// counted from PortAudio's status flags (input overflow, output underflow).
//
// Example:
//   PortAudioDevice card(find_portaudio_device("pa:1"), {.node_a = 1, .node_b = 2});
//   card.start({48000, 256}, callback);  // ... card.stop();
#pragma once

#include <atomic>
#include <memory>
#include <string>
#include <vector>

#include "server/audio_device.hpp"

namespace tb {

/// Which channels (1-based) read node A and node B and which drives the jig.
struct ChannelMap {
  int node_a = 1, node_b = 2, output = 1;
};

/// Every PortAudio device with at least one input and one output, from the last scan.
/// `rescan`: drop PortAudio's list and enumerate again (only when no stream is open; PortAudio
/// lists devices when it starts). Never throws: no PortAudio devices gives an empty list.
std::vector<DeviceInfo> list_portaudio_devices(bool rescan = false);

/// The device the setting names ("pa:<host api>:<name>", "pa:<index>" or "pa:<name>"),
/// rescanning once when it is not in the present list. Throws tb::Error device.unknown
/// naming the devices that exist.
DeviceInfo find_portaudio_device(const std::string& id);

class PortAudioDevice final : public AudioDevice {
 public:
  /// Throws tb::Error device.bad_channel when the map needs channels the device lacks or
  /// reads both nodes from one input.
  PortAudioDevice(DeviceInfo info, ChannelMap map);
  ~PortAudioDevice() override;

  DeviceInfo info() const override { return info_; }
  /// Throws tb::Error device.bad_rate (the device refuses the rate), device.busy (already
  /// running), device.lost (the device is gone or PortAudio cannot open it).
  void start(const StreamSpec& spec, DuplexCallback callback) override;
  void stop() override;
  /// False once stopped, or when the stream stopped by itself (the card was unplugged, the
  /// JACK server went away).
  bool running() const override;
  std::uint64_t xruns() const override { return state_->xruns.load(); }

  /// Shared with the real-time callback; public only so that the callback can see it.
  struct CallbackState {
    DuplexCallback callback;
    ChannelMap map;
    std::atomic<std::uint64_t> xruns{0};
    std::atomic<bool> finished{false};
  };

 private:
  DeviceInfo info_;
  ChannelMap map_;
  std::unique_ptr<CallbackState> state_;
  void* stream_ = nullptr;  // PaStream*
};

}  // namespace tb
