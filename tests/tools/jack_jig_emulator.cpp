// A test-only JACK client that stands in for a sound card wired to the jig with a known
// part on it, so the PortAudio path can be tested end to end without hardware. It
// registers playback_1/2 (what the service plays) and capture_1/2 (what it records), so
// PortAudio lists it as a 2-in/2-out device named after the client.
//
//   capture_1 (node A) = playback_1 + noise
//   capture_2 (node B) = H * playback_1 + noise,  H = Z / (Z + Rref)  (part-low layout)
//
// The part is a capacitor C with series resistance ESR, so
//   H(s) = (1 + s C ESR) / (1 + s C (ESR + Rref)),
// a first-order section, made discrete by the bilinear transform prewarped to --match-hz:
// exact there (the test reads at that frequency), close elsewhere.
//
// Usage: tb_jack_jig_emulator [--name tb_jig] [--c 4.7e-6] [--esr 0.1] [--rref 100]
//                             [--match-hz 1000] [--noise 1e-5]
// Prints "ready" once active; runs until SIGTERM or SIGINT. SIGUSR1 silences node A from
// then on (a generator lead coming off), for the lost-signal test.
#include <jack/jack.h>

#include <atomic>
#include <cmath>
#include <csignal>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <numbers>
#include <string>
#include <thread>

namespace {

std::atomic<bool> g_stop{false};
std::atomic<bool> g_mute_a{false};

struct Emulator {
  jack_port_t* play[2] = {nullptr, nullptr};
  jack_port_t* cap[2] = {nullptr, nullptr};
  double b0 = 1, b1 = 0, a1 = 0;  // y[n] = b0 x[n] + b1 x[n-1] - a1 y[n-1]
  double x1 = 0, y1 = 0;
  double noise_rms = 1e-5;
  std::uint64_t rng = 0x9e3779b97f4a7c15ULL;

  // Uniform noise scaled to the requested rms (sqrt(3) turns the half-width into rms).
  double noise() {
    rng ^= rng << 13;
    rng ^= rng >> 7;
    rng ^= rng << 17;
    const double u = static_cast<double>(rng >> 11) / 9007199254740992.0;  // [0, 1)
    return (2 * u - 1) * std::sqrt(3.0) * noise_rms;
  }
};

int process(jack_nframes_t n, void* arg) {
  auto* e = static_cast<Emulator*>(arg);
  const auto* x = static_cast<const float*>(jack_port_get_buffer(e->play[0], n));
  auto* a = static_cast<float*>(jack_port_get_buffer(e->cap[0], n));
  auto* b = static_cast<float*>(jack_port_get_buffer(e->cap[1], n));
  for (jack_nframes_t i = 0; i < n; ++i) {
    const double xi = x[i];
    const double y = e->b0 * xi + e->b1 * e->x1 - e->a1 * e->y1;
    e->x1 = xi;
    e->y1 = y;
    a[i] = g_mute_a.load(std::memory_order_relaxed) ? 0.0f : static_cast<float>(xi + e->noise());
    b[i] = static_cast<float>(y + e->noise());
  }
  return 0;
}

void on_signal(int) {
  g_stop = true;
}

void on_mute(int) {
  g_mute_a = true;
}

}  // namespace

int main(int argc, char** argv) {
  std::string name = "tb_jig";
  double c = 4.7e-6, esr = 0.1, rref = 100, match_hz = 1000;
  Emulator e;
  for (int i = 1; i + 1 < argc; i += 2) {
    const std::string k = argv[i];
    const char* v = argv[i + 1];
    if (k == "--name")
      name = v;
    else if (k == "--c")
      c = std::atof(v);
    else if (k == "--esr")
      esr = std::atof(v);
    else if (k == "--rref")
      rref = std::atof(v);
    else if (k == "--match-hz")
      match_hz = std::atof(v);
    else if (k == "--noise")
      e.noise_rms = std::atof(v);
    else {
      std::fprintf(stderr, "unknown option %s\n", k.c_str());
      return 2;
    }
  }
  jack_status_t status{};
  jack_client_t* client = jack_client_open(
      name.c_str(), static_cast<jack_options_t>(JackNoStartServer | JackUseExactName), &status);
  if (!client) {
    std::fprintf(stderr, "cannot open JACK client '%s' (status 0x%x)\n", name.c_str(),
                 static_cast<unsigned>(status));
    return 1;
  }
  const double fs = jack_get_sample_rate(client);
  // Bilinear transform s = K (1 - 1/z) / (1 + 1/z), K prewarped so that match_hz maps
  // exactly: K = w0 / tan(w0 / (2 fs)).
  const double w0 = 2 * std::numbers::pi * match_hz;
  const double k = w0 / std::tan(w0 / (2 * fs));
  const double t1 = c * esr, t2 = c * (esr + rref);
  e.b0 = (1 + k * t1) / (1 + k * t2);
  e.b1 = (1 - k * t1) / (1 + k * t2);
  e.a1 = (1 - k * t2) / (1 + k * t2);

  const char* play_names[] = {"playback_1", "playback_2"};
  const char* cap_names[] = {"capture_1", "capture_2"};
  for (int i = 0; i < 2; ++i) {
    e.play[i] =
        jack_port_register(client, play_names[i], JACK_DEFAULT_AUDIO_TYPE, JackPortIsInput, 0);
    e.cap[i] = jack_port_register(client, cap_names[i], JACK_DEFAULT_AUDIO_TYPE,
                                  JackPortIsOutput | JackPortIsPhysical, 0);
    if (!e.play[i] || !e.cap[i]) {
      std::fprintf(stderr, "cannot register ports\n");
      jack_client_close(client);
      return 1;
    }
  }
  jack_set_process_callback(client, process, &e);
  std::signal(SIGTERM, on_signal);
  std::signal(SIGINT, on_signal);
  std::signal(SIGUSR1, on_mute);
  if (jack_activate(client) != 0) {
    std::fprintf(stderr, "cannot activate JACK client\n");
    jack_client_close(client);
    return 1;
  }
  std::printf("ready %s at %.0f Hz\n", name.c_str(), fs);
  std::fflush(stdout);
  while (!g_stop)
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  jack_deactivate(client);
  jack_client_close(client);
  return 0;
}
