#include "server/simulated_card.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <numbers>
#include <stdexcept>

#include "server/error.hpp"

namespace tb {

namespace {

constexpr std::size_t kOversample = 32;    // circuit steps per audio sample, each band-limited
constexpr std::size_t kReads = 8;          // node voltages read per sample (the ADC's fine grid)
constexpr std::size_t kTapsPerPhase = 24;  // reconstruction filter length / kOversample
constexpr std::size_t kDacRing = 8192;     // > max latency + clock drift margin
constexpr std::size_t kAdcTaps = kReads * 24;  // anti-alias filter on the fine grid

double bessel_i0(double x) {
  double sum = 1, term = 1;
  for (int k = 1; k < 40; ++k) {
    term *= (x / (2 * k)) * (x / (2 * k));
    sum += term;
  }
  return sum;
}

// Kaiser-windowed sinc (beta 8, about 80 dB stopband) sampled at t = offset + i / phases
// audio samples; used both for the DAC's reconstruction and for the inputs' timing offsets.
double windowed_sinc(double t, double half_span) {
  const double r = t / half_span;
  if (std::abs(r) >= 1) return 0;
  const double sinc = t == 0 ? 1.0 : std::sin(std::numbers::pi * t) / (std::numbers::pi * t);
  return sinc * bessel_i0(8.0 * std::sqrt(1 - r * r)) / bessel_i0(8.0);
}

// Interpolation filter of the DAC: cut-off at half the audio rate, kOversample phases of
// kTapsPerPhase taps, each phase normalised to unit DC gain.
std::vector<double> reconstruction_taps() {
  const std::size_t n = kOversample * kTapsPerPhase;
  const double centre = 0.5 * static_cast<double>(n - 1);
  std::vector<double> h(n);
  for (std::size_t i = 0; i < n; ++i) {
    h[i] =
        windowed_sinc((static_cast<double>(i) - centre) / kOversample, 0.5 * kTapsPerPhase + 0.5);
  }
  for (std::size_t p = 0; p < kOversample; ++p) {
    double sum = 0;
    for (std::size_t j = 0; j < kTapsPerPhase; ++j)
      sum += h[p + j * kOversample];
    for (std::size_t j = 0; j < kTapsPerPhase; ++j)
      h[p + j * kOversample] /= sum;
  }
  return h;
}

// The ADC's anti-alias (decimation) filter on the fine grid, cut-off at half the audio
// rate, with the input's timing offset built in: the taps sample the windowed sinc shifted
// by delay_samples. Unit DC gain; common group delay (kAdcTaps - 1) / (2 kReads) samples.
std::vector<double> adc_taps(double delay_samples) {
  std::vector<double> g(kAdcTaps);
  const double centre = 0.5 * static_cast<double>(kAdcTaps - 1);
  double sum = 0;
  for (std::size_t i = 0; i < kAdcTaps; ++i) {
    g[i] = windowed_sinc((static_cast<double>(i) - centre) / kReads - delay_samples,
                         0.5 * static_cast<double>(kAdcTaps) / kReads + 0.5);
    sum += g[i];
  }
  for (auto& v : g)
    v /= sum;
  return g;
}

}  // namespace

SimulatedCard::SimulatedCard(SimulatedBenchConfig config)
    : config_(std::move(config)), rng_(config_.noise_seed) {
  lead_base_hot_ = config_.card.lead_resistance_ohm;
  lead_base_cold_ = config_.card.lead_resistance_ohm;
  config_.jig.lead_hot_ohm = lead_base_hot_;
  config_.jig.lead_cold_ohm = lead_base_cold_;
  build(48000);
}

SimulatedCard::~SimulatedCard() {
  stop();
}

DeviceInfo SimulatedCard::describe() {
  DeviceInfo d;
  d.id = "simulated";
  d.name = "simulated bench (hidden card faults)";
  d.inputs = 2;
  d.outputs = 1;
  d.sample_rates_hz = {44100, 48000, 96000, 192000};
  d.simulated = true;
  return d;
}

void SimulatedCard::reconnect(const dsp::JigSetup& jig, const dsp::Netlist& part) {
  if (running())
    throw Error("device.busy", "the simulated bench is running",
                "stop the stream before reconnecting");
  config_.jig = jig;
  config_.part = part;
  const double j = config_.card.lead_jitter_ohm;
  std::uniform_real_distribution<double> jitter(-j, j);
  config_.jig.lead_hot_ohm = lead_base_hot_ + jitter(rng_);
  config_.jig.lead_cold_ohm = lead_base_cold_ + jitter(rng_);
  build(fs_);
}

void SimulatedCard::set_input_gain(int input, double gain) {
  if (input != 0 && input != 1) throw std::invalid_argument("input must be 0 (A) or 1 (B)");
  if (!(gain > 0) || !std::isfinite(gain)) throw std::invalid_argument("input gain must be > 0");
  if (running())
    throw Error("device.busy", "the simulated bench is running",
                "stop the stream before changing an input's gain");
  config_.card.in_gain[input] = gain;
}

double SimulatedCard::circuit_frequency_hz(double freq_hz, double sample_rate_hz) {
  const double dt = 1.0 / (sample_rate_hz * static_cast<double>(kOversample));
  return std::tan(std::numbers::pi * freq_hz * dt) / (std::numbers::pi * dt);
}

double SimulatedCard::true_rref_ohm(double nominal_ohm) {
  auto it = rref_true_.find(nominal_ohm);
  if (it == rref_true_.end()) {
    const double tol = config_.rref_tolerance_rel;
    std::uniform_real_distribution<double> within(-tol, tol);
    it = rref_true_.emplace(nominal_ohm, nominal_ohm * (1 + (tol > 0 ? within(rng_) : 0.0))).first;
  }
  return it->second;
}

void SimulatedCard::build(double sample_rate_hz) {
  fs_ = sample_rate_hz;
  auto setup = config_.jig;
  setup.rref_ohm = true_rref_ohm(config_.jig.rref_ohm);
  const auto jig = dsp::build_jig(setup, config_.part, config_.card);
  circuit_ = std::make_unique<dsp::Circuit>(jig.netlist);
  solver_ = std::make_unique<dsp::TransientSolver>(*circuit_, fs_ * kReads,
                                                   static_cast<int>(kOversample / kReads));
  node_a_ = solver_->node_index(jig.node_in_a);
  node_b_ = solver_->node_index(jig.node_in_b);
  dac_delay_.assign(kDacRing, 0.0f);
  dac_pos_ = 0;
  out_phase_ = -static_cast<double>(config_.card.latency_frames);
  if (dac_taps_.empty()) dac_taps_ = reconstruction_taps();
  dac_hist_.assign(kTapsPerPhase, 0.0);
  for (int ch = 0; ch < 2; ++ch) {
    adc_taps_[ch] = adc_taps(config_.card.in_delay_s[ch] * fs_);
    node_hist_[ch].assign(2 * kAdcTaps, solver_->voltage(ch == 0 ? node_a_ : node_b_));
  }
  hist_pos_ = 0;
  fine_.assign(kOversample, 0.0);
  for (int c = 0; c < 2; ++c)
    hp_state_[c] = hp_prev_in_[c] = 0;
  frame_ = 0;
}

double SimulatedCard::adc(int ch, double volts, double other_volts, double t_s) {
  const auto& card = config_.card;
  double x = (volts + card.crosstalk * other_volts) / card.adc_full_scale_v;
  if (card.in_highpass_hz[ch] > 0) {
    // AC coupling: first-order high-pass, y[n] = a (y[n-1] + x[n] - x[n-1]).
    const double a = 1 / (1 + 2 * std::numbers::pi * card.in_highpass_hz[ch] / fs_);
    hp_state_[ch] = a * (hp_state_[ch] + x - hp_prev_in_[ch]);
    hp_prev_in_[ch] = x;
    x = hp_state_[ch];
  }
  double gain = card.in_gain[ch];
  if (ch == 1) gain *= 1 + card.gain_drift_per_s * t_s;
  x *= gain;
  x += card.in_h2 * x * x + card.in_h3 * x * x * x;
  if (card.hum_rms_fs > 0) {
    const double w = 2 * std::numbers::pi * card.hum_hz * t_s;
    x += card.hum_rms_fs * std::numbers::sqrt2 *
         (std::sin(w + 0.3 * ch) + 0.5 * std::sin(2 * w + 1.1) + 0.25 * std::sin(3 * w + 2.0));
  }
  x += card.noise_rms_fs * gauss_(rng_);
  if (card.bits > 0) {
    const double scale = std::ldexp(1.0, card.bits - 1);
    x = std::clamp(std::round(x * scale), -scale, scale - 1) / scale;
  } else {
    x = std::clamp(x, -1.0, 1.0);
  }
  return x;
}

void SimulatedCard::render(std::span<const float> out, std::span<float> in_a,
                           std::span<float> in_b) {
  const auto& card = config_.card;
  const double step_ratio = 1 + card.clock_offset_ppm * 1e-6;
  const std::size_t node_o = solver_->node_index("o");
  for (std::size_t n = 0; n < out.size(); ++n) {
    // The DAC plays the callback's samples on its own clock, latency_frames late: read the
    // ring at a fractional position that advances by (1 + offset) per input sample.
    dac_delay_[frame_ % kDacRing] = out[n];
    double dac = 0;
    if (out_phase_ >= 0) {
      const auto i0 = static_cast<std::uint64_t>(out_phase_);
      const double frac = out_phase_ - static_cast<double>(i0);
      if (i0 + 1 <= frame_) {
        dac = (1 - frac) * dac_delay_[i0 % kDacRing] + frac * dac_delay_[(i0 + 1) % kDacRing];
      }
    }
    out_phase_ = std::min(out_phase_ + step_ratio, static_cast<double>(frame_));
    dac += card.out_h2 * dac * dac + card.out_h3 * dac * dac * dac;
    const double v_src = dac * card.dac_full_scale_v;
    // The DAC's reconstruction filter gives the source a band-limited value at every one of
    // the circuit's steps in this sample period: no images for the circuit to respond to.
    std::rotate(dac_hist_.rbegin(), dac_hist_.rbegin() + 1, dac_hist_.rend());
    dac_hist_[0] = v_src;
    for (std::size_t k = 0; k < kOversample; ++k) {
      double u = 0;
      for (std::size_t j = 0; j < kTapsPerPhase; ++j)
        u += dac_taps_[k + j * kOversample] * dac_hist_[j];
      fine_[k] = u;
    }
    // Node voltages on the fine grid (kReads per sample) into each input's ring.
    const std::size_t per_read = kOversample / kReads;
    for (std::size_t r = 0; r < kReads; ++r) {
      auto chunk = std::span<double>(fine_).subspan(r * per_read, per_read);
      if (card.out_current_limit_a > 0) {
        // The output stage cannot push more than its current limit: the band-limited
        // source is held within limit * Rout of the node it feeds (a compliance limit).
        // Judged at this chunk's first internal step, a 32nd of a sample after the node's
        // present value, and the whole chunk shifted alike, so the comparison is not
        // spoilt by how far the tone moves within a sample.
        const double swing = card.out_current_limit_a * std::max(card.out_resistance_ohm, 1e-6);
        const double d = chunk[0] - solver_->voltage(node_o);
        const double shift = std::clamp(d, -swing, swing) - d;
        for (double& u : chunk)
          u += shift;
      }
      solver_->step_oversampled(chunk);
      // Each value is written twice, kAdcTaps apart, so the filter reads one contiguous
      // window without wrapping.
      for (int ch = 0; ch < 2; ++ch) {
        const double v_node = solver_->voltage(ch == 0 ? node_a_ : node_b_);
        node_hist_[ch][hist_pos_] = v_node;
        node_hist_[ch][hist_pos_ + kAdcTaps] = v_node;
      }
      hist_pos_ = (hist_pos_ + 1) % kAdcTaps;
    }
    // Each input decimates its node through the anti-alias filter, at its own sampling
    // instant (the timing offset is in its taps); crosstalk is the other node seen the same way.
    double v[2], other[2];
    for (int ch = 0; ch < 2; ++ch) {
      const auto& g = adc_taps_[ch];
      double mine = 0, theirs = 0;
      // Newest sample at hist_pos_ + kAdcTaps - 1, oldest at hist_pos_.
      const double* m = node_hist_[ch].data() + hist_pos_ + kAdcTaps - 1;
      const double* o = node_hist_[1 - ch].data() + hist_pos_ + kAdcTaps - 1;
      for (std::size_t i = 0; i < kAdcTaps; ++i) {
        mine += g[i] * m[-static_cast<std::ptrdiff_t>(i)];
        theirs += g[i] * o[-static_cast<std::ptrdiff_t>(i)];
      }
      v[ch] = mine;
      other[ch] = theirs;
    }
    const double t = static_cast<double>(frame_) / fs_;
    in_a[n] = static_cast<float>(adc(0, v[0], other[0], t));
    in_b[n] = static_cast<float>(adc(1, v[1], other[1], t));
    ++frame_;
  }
}

void SimulatedCard::start(const StreamSpec& spec, DuplexCallback callback) {
  if (running())
    throw Error("device.busy", "the simulated bench is already streaming", "stop it first");
  const auto rates = info().sample_rates_hz;
  if (std::find(rates.begin(), rates.end(), spec.sample_rate_hz) == rates.end()) {
    throw Error(
        "device.bad_rate",
        "the simulated bench does not run at " + std::to_string(spec.sample_rate_hz) + " Hz",
        "use 44100, 48000, 96000 or 192000 Hz");
  }
  if (spec.period_frames < 16 || spec.period_frames > 16384) {
    throw Error("device.bad_period", "period of " + std::to_string(spec.period_frames) + " frames",
                "use 16 to 16384 frames per period");
  }
  if (spec.sample_rate_hz != fs_) build(spec.sample_rate_hz);
  stop_requested_ = false;
  running_ = true;
  thread_ = std::thread([this, spec, cb = std::move(callback)] {
    std::vector<float> a(spec.period_frames, 0.0f), b(spec.period_frames, 0.0f),
        out(spec.period_frames);
    const auto period = std::chrono::duration<double>(static_cast<double>(spec.period_frames) /
                                                      spec.sample_rate_hz);
    auto next = std::chrono::steady_clock::now();
    // The callback's "enough" ends the rendering: a free-running bench then renders
    // exactly the frames asked for, and its noise and lead draws repeat from run to run.
    while (!stop_requested_.load()) {
      if (!cb(a, b, out)) return;  // idle, still running, until stop()
      render(out, a, b);
      if (config_.real_time) {
        next += std::chrono::duration_cast<std::chrono::steady_clock::duration>(period);
        std::this_thread::sleep_until(next);
      }
    }
    running_ = false;
  });
}

void SimulatedCard::stop() {
  stop_requested_ = true;
  if (thread_.joinable()) thread_.join();
  running_ = false;
}

}  // namespace tb
