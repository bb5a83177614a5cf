// The simulated bench: a sound card with hidden faults (card_faults.hpp), the jig and a
// part, solved in the time domain (circuit.hpp), behind the same AudioDevice interface as
// a real card. The measuring code sees only the samples it returns.
//
// Per audio sample: the DAC sample (played `latency_frames` late, distorted, scaled to
// volts, on its own clock when a clock offset is drawn), band-limited by the DAC's
// reconstruction filter (a real DAC removes its images; without it the images near fs - f
// would drive the part and alias back onto f), drives the jig netlist, stepped 32 times
// per sample (trapezoidal), each step with its own band-limited source value. Each input
// reads its node 8 times per sample and decimates through an anti-alias filter (the same
// 80 dB low-pass) at its own sampling instant (the timing offset is in its taps), picks up
// crosstalk from the other, then AC coupling (first-order high-pass), gain error and drift,
// distortion, mains hum and noise, clipping at full scale and quantisation.
//
// Reconnecting the part (reconnect()) rebuilds the circuit with the lead resistance moved
// by a random amount within the card's jitter, as a real clip lead would.
#pragma once

#include <atomic>
#include <cstdint>
#include <map>
#include <memory>
#include <random>
#include <thread>
#include <vector>

#include "dsp/card_faults.hpp"
#include "dsp/circuit.hpp"
#include "dsp/jig_model.hpp"
#include "server/audio_device.hpp"

namespace tb {

struct SimulatedBenchConfig {
  dsp::CardFaults card = dsp::draw_card_faults({});
  dsp::JigSetup jig;  ///< lead resistances are filled in from the card's faults
  dsp::Netlist part;  ///< terminals "p" and "n" (see part_spec.hpp)
  std::uint64_t noise_seed = 1;
  /// Each reference resistor's true value lies within this tolerance of its nominal value
  /// (drawn once per nominal value, uniformly), as a real resistor's does. Hidden.
  double rref_tolerance_rel = 0;
  bool real_time = false;  ///< pace periods to the wall clock (the service) or run free (tests)
};

class SimulatedCard final : public AudioDevice {
 public:
  /// Throws dsp::CircuitError / std::invalid_argument for a part the model cannot solve.
  explicit SimulatedCard(SimulatedBenchConfig config);
  ~SimulatedCard() override;

  DeviceInfo info() const override { return describe(); }
  static DeviceInfo describe();
  void start(const StreamSpec& spec, DuplexCallback callback) override;
  void stop() override;
  bool running() const override { return running_.load(); }

  /// Processes one period synchronously (no thread): plays `out`, fills both inputs.
  /// For tests and offline use; not while the stream is running.
  void render(std::span<const float> out, std::span<float> in_a, std::span<float> in_b);

  /// Takes the part off the jig and puts it (or another part, or another jig setup) back:
  /// new lead resistances, circuit state from its initial conditions. Not while running.
  void reconnect(const dsp::JigSetup& jig, const dsp::Netlist& part);

  /// Changes input `input`'s (0 = A, 1 = B) linear gain, as a touched gain knob would;
  /// gain > 0. Throws std::invalid_argument for a bad input or gain, tb::Error device.busy
  /// while running. The measuring code is not told.
  void set_input_gain(int input, double gain);

  const dsp::CardFaults& card() const { return config_.card; }
  /// True value of the reference resistor with this nominal value (teaching output only).
  double true_rref_ohm(double nominal_ohm);
  /// The frequency at which the bench's circuit answers a tone of freq_hz played at
  /// sample_rate_hz (both > 0, freq_hz < sample_rate_hz / 2): its trapezoidal steps are the
  /// bilinear map, so in steady state every element sees tan(pi f dt) / (pi dt), dt the
  /// internal step, a little above f ((2 pi f dt)^2 / 12 relative: 1.4e-4 at 10 kHz and
  /// 48 kHz). The part on the bench is exactly part_impedance(part, this frequency): the
  /// truth to compare a reading with (teaching and test output only).
  static double circuit_frequency_hz(double freq_hz, double sample_rate_hz);
  /// Lead resistances of the present connection (for teaching output only).
  double lead_hot_ohm() const { return config_.jig.lead_hot_ohm; }

 private:
  void build(double sample_rate_hz);
  double adc(int channel, double volts, double other_volts, double t_s);

  SimulatedBenchConfig config_;
  double lead_base_hot_ = 0, lead_base_cold_ = 0;
  std::map<double, double> rref_true_;  // nominal -> true value of each reference resistor
  std::mt19937_64 rng_;
  std::normal_distribution<double> gauss_{0.0, 1.0};

  double fs_ = 0;
  std::unique_ptr<dsp::Circuit> circuit_;
  std::unique_ptr<dsp::TransientSolver> solver_;
  std::size_t node_a_ = 0, node_b_ = 0;
  std::vector<float> dac_delay_;  // latency line
  std::size_t dac_pos_ = 0;
  std::vector<double> dac_taps_;      // reconstruction filter, polyphase by sub-step
  std::vector<double> dac_hist_;      // recent DAC samples, newest first
  double out_phase_ = 0;              // output clock position in its own samples
  std::vector<double> fine_;          // source values for the circuit's steps in one sample
  std::vector<double> adc_taps_[2];   // each input's anti-alias filter, timing offset included
  std::vector<double> node_hist_[2];  // node voltages on the fine grid (ring)
  std::size_t hist_pos_ = 0;
  double hp_state_[2] = {0, 0}, hp_prev_in_[2] = {0, 0};
  std::uint64_t frame_ = 0;

  std::atomic<bool> running_{false};
  std::atomic<bool> stop_requested_{false};
  std::thread thread_;
};

}  // namespace tb
