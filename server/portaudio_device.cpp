#include "server/portaudio_device.hpp"

#include <portaudio.h>

#include <algorithm>
#include <cstdlib>
#include <mutex>
#include <optional>

#include "server/error.hpp"

#if __has_include(<pa_jack.h>)
#include <pa_jack.h>
#define TB_HAVE_PA_JACK 1
#endif
#ifdef TB_HAVE_ALSA
#include <alsa/asoundlib.h>
#endif

namespace tb {

namespace {

// PortAudio is one library-wide state that is not thread-safe: every call outside the
// real-time callback holds this lock. The list is PortAudio's as of its last start, since
// PortAudio enumerates devices only then.
struct Library {
  std::mutex m;
  bool up = false;
  bool stale = false;  // a stream was lost: enumerate again before the next open
  int open_streams = 0;
  std::vector<DeviceInfo> devices;
};

Library& library() {
  static Library lib;
  return lib;
}

#ifdef TB_HAVE_ALSA
// Without a card ALSA prints dozens of lines while PortAudio probes it; they say nothing a
// technician can use (the device list does).
void alsa_quiet(const char*, int, const char*, int, const char*, ...) {}
#endif

std::vector<DeviceInfo> scan() {
  std::vector<DeviceInfo> out;
  const int n = Pa_GetDeviceCount();
  for (int i = 0; i < n; ++i) {
    const PaDeviceInfo* d = Pa_GetDeviceInfo(i);
    if (!d || d->maxInputChannels < 1 || d->maxOutputChannels < 1) continue;
    const PaHostApiInfo* h = Pa_GetHostApiInfo(d->hostApi);
    DeviceInfo info;
    info.host_api = h ? h->name : "unknown";
    info.name = d->name;
    info.id = "pa:" + info.host_api + ":" + info.name;
    info.inputs = d->maxInputChannels;
    info.outputs = d->maxOutputChannels;
    info.index = i;
    for (double rate : {44100.0, 48000.0, 96000.0, 192000.0}) {
      const PaStreamParameters in{i, std::min(2, d->maxInputChannels), paFloat32 | paNonInterleaved,
                                  d->defaultLowInputLatency, nullptr};
      const PaStreamParameters outp{i, 1, paFloat32 | paNonInterleaved, d->defaultLowOutputLatency,
                                    nullptr};
      if (Pa_IsFormatSupported(&in, &outp, rate) == paFormatIsSupported)
        info.sample_rates_hz.push_back(rate);
    }
    out.push_back(std::move(info));
  }
  return out;
}

void shut_down_library() {
  Library& lib = library();
  std::lock_guard lock(lib.m);
  if (!lib.up || lib.open_streams > 0) return;
  Pa_Terminate();
  lib.up = false;
#ifdef TB_HAVE_ALSA
  snd_config_update_free_global();  // ALSA's cached configuration, so leak checks stay quiet
#endif
}

// Starts PortAudio once; with `rescan` (or a lost stream) and no stream open, restarts it
// so that its device list is new. Caller holds the lock.
void ensure_up(Library& lib, bool rescan) {
  if (lib.up && !((rescan || lib.stale) && lib.open_streams == 0)) return;
  if (lib.up) {
    Pa_Terminate();
    lib.up = false;
  } else {
#ifdef TB_HAVE_ALSA
    snd_lib_error_set_handler(&alsa_quiet);
#endif
#ifdef TB_HAVE_PA_JACK
    PaJack_SetClientName("tonebridged");  // kept as a pointer by PortAudio: a literal
#endif
    static const bool registered = [] { return std::atexit(shut_down_library) == 0; }();
    (void)registered;
  }
  lib.devices.clear();
  lib.stale = false;
  if (Pa_Initialize() != paNoError) return;
  lib.up = true;
  lib.devices = scan();
}

std::optional<DeviceInfo> match(const std::vector<DeviceInfo>& list, const std::string& id) {
  for (const auto& d : list)
    if (d.id == id) return d;
  if (id.rfind("pa:", 0) != 0) return std::nullopt;
  const std::string rest = id.substr(3);
  if (!rest.empty() &&
      std::all_of(rest.begin(), rest.end(), [](char c) { return c >= '0' && c <= '9'; })) {
    const int index = std::atoi(rest.c_str());
    for (const auto& d : list)
      if (d.index == index) return d;
  }
  for (const auto& d : list)
    if (d.name == rest) return d;
  return std::nullopt;
}

std::string known_ids(const std::vector<DeviceInfo>& list) {
  std::string s;
  for (const auto& d : list)
    s += (s.empty() ? "" : ", ") + d.id;
  return s.empty() ? "none" : s;
}

int pa_callback(const void* input, void* output, unsigned long frames,
                const PaStreamCallbackTimeInfo*, PaStreamCallbackFlags flags, void* user) {
  auto* st = static_cast<PortAudioDevice::CallbackState*>(user);
  if (flags & (paInputOverflow | paOutputUnderflow))
    st->xruns.fetch_add(1, std::memory_order_relaxed);
  auto* const* out = static_cast<float* const*>(output);
  for (int c = 0; c < st->map.output; ++c)
    std::fill(out[c], out[c] + frames, 0.0f);
  if (!input) {  // no input this period: a gap, not a signal
    st->xruns.fetch_add(1, std::memory_order_relaxed);
    return paContinue;
  }
  const auto* const* in = static_cast<const float* const*>(input);
  // The callback's "enough" is not passed on: a real card keeps playing silence until
  // stop(), which the capture calls as soon as it has drained the ring.
  (void)st->callback(std::span<const float>(in[st->map.node_a - 1], frames),
                     std::span<const float>(in[st->map.node_b - 1], frames),
                     std::span<float>(out[st->map.output - 1], frames));
  return paContinue;
}

void pa_finished(void* user) {
  static_cast<PortAudioDevice::CallbackState*>(user)->finished.store(true);
}

}  // namespace

std::vector<DeviceInfo> list_portaudio_devices(bool rescan) {
  Library& lib = library();
  std::lock_guard lock(lib.m);
  ensure_up(lib, rescan);
  return lib.devices;
}

DeviceInfo find_portaudio_device(const std::string& id) {
  Library& lib = library();
  std::lock_guard lock(lib.m);
  ensure_up(lib, false);
  if (auto d = match(lib.devices, id)) return *d;
  ensure_up(lib, true);
  if (auto d = match(lib.devices, id)) return *d;
  throw Error("device.unknown", "no audio device '" + id + "'",
              "use one of: simulated, " + known_ids(lib.devices) +
                  " (GET /api/v1/devices lists them; a JACK device shows only while JACK runs)");
}

PortAudioDevice::PortAudioDevice(DeviceInfo info, ChannelMap map)
    : info_(std::move(info)), map_(map), state_(std::make_unique<CallbackState>()) {
  const auto in_range = [](int c, int n) { return c >= 1 && c <= n; };
  if (!in_range(map_.node_a, info_.inputs) || !in_range(map_.node_b, info_.inputs) ||
      !in_range(map_.output, info_.outputs) || map_.node_a == map_.node_b) {
    throw Error("device.bad_channel",
                "'" + info_.id + "' has " + std::to_string(info_.inputs) + " inputs and " +
                    std::to_string(info_.outputs) + " outputs; the settings ask for node A on " +
                    std::to_string(map_.node_a) + ", node B on " + std::to_string(map_.node_b) +
                    " and the output on " + std::to_string(map_.output),
                "set input_node_a and input_node_b to two different inputs and output_channel "
                "to an output the device has (1-based)");
  }
}

PortAudioDevice::~PortAudioDevice() {
  stop();
}

void PortAudioDevice::start(const StreamSpec& spec, DuplexCallback callback) {
  Library& lib = library();
  std::lock_guard lock(lib.m);
  if (stream_) throw Error("device.busy", "the audio device is already streaming", "stop it first");
  ensure_up(lib, false);
  auto found = match(lib.devices, info_.id);
  if (!found) {
    ensure_up(lib, true);
    found = match(lib.devices, info_.id);
  }
  if (!found) {
    throw Error("device.lost", "the audio device '" + info_.id + "' is not there any more",
                "plug the sound card back in (or start the JACK client again) and retry");
  }
  state_->callback = std::move(callback);
  state_->map = map_;
  state_->finished = false;
  const PaDeviceInfo* d = Pa_GetDeviceInfo(found->index);
  const PaStreamParameters in{found->index, std::max(map_.node_a, map_.node_b),
                              paFloat32 | paNonInterleaved, d ? d->defaultLowInputLatency : 0.01,
                              nullptr};
  const PaStreamParameters out{found->index, map_.output, paFloat32 | paNonInterleaved,
                               d ? d->defaultLowOutputLatency : 0.01, nullptr};
  PaStream* s = nullptr;
  PaError err = Pa_OpenStream(&s, &in, &out, spec.sample_rate_hz, spec.period_frames, paClipOff,
                              &pa_callback, state_.get());
  if (err == paNoError) {
    Pa_SetStreamFinishedCallback(s, &pa_finished);
    err = Pa_StartStream(s);
    if (err != paNoError) Pa_CloseStream(s);
  }
  if (err == paInvalidSampleRate) {
    throw Error("device.bad_rate",
                "'" + info_.id + "' cannot stream at " +
                    std::to_string(static_cast<int>(spec.sample_rate_hz)) + " Hz",
                "set sample_rate_hz to a rate GET /api/v1/devices lists for it (a JACK device "
                "runs at the JACK server's rate)");
  }
  if (err != paNoError) {
    lib.stale = true;
    throw Error("device.lost",
                "PortAudio could not open '" + info_.id + "': " + Pa_GetErrorText(err),
                "check that the sound card is connected and no other program holds it, then "
                "measure again");
  }
  stream_ = s;
  ++lib.open_streams;
}

void PortAudioDevice::stop() {
  Library& lib = library();
  std::lock_guard lock(lib.m);
  if (!stream_) return;
  auto* s = static_cast<PaStream*>(stream_);
  // Ended by itself before this stop (aborting sets `finished` too): look again next time.
  const bool lost = state_->finished.load() || Pa_IsStreamActive(s) != 1;
  Pa_AbortStream(s);
  Pa_CloseStream(s);
  stream_ = nullptr;
  --lib.open_streams;
  if (lost) lib.stale = true;
}

bool PortAudioDevice::running() const {
  Library& lib = library();
  std::lock_guard lock(lib.m);
  if (!stream_ || state_->finished.load()) return false;
  return Pa_IsStreamActive(static_cast<PaStream*>(stream_)) == 1;
}

}  // namespace tb
