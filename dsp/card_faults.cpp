#include "dsp/card_faults.hpp"

#include <cmath>
#include <random>

namespace tb::dsp {

namespace {

class Drawer {
 public:
  explicit Drawer(std::uint64_t seed) : rng_(seed) {}
  double uniform(double lo, double hi) {
    return std::uniform_real_distribution<double>(lo, hi)(rng_);
  }
  // Log-uniform: ranges spanning a decade or more are drawn evenly in ratio.
  double log_uniform(double lo, double hi) { return std::exp(uniform(std::log(lo), std::log(hi))); }
  double db_to_lin(double db) { return std::pow(10.0, db / 20); }
  bool chance(double p) { return uniform(0, 1) < p; }

 private:
  std::mt19937_64 rng_;
};

}  // namespace

CardFaults draw_card_faults(const FaultDraw& draw) {
  Drawer d(draw.seed);
  CardFaults c;
  c.dac_full_scale_v = d.uniform(0.5, 1.6);
  c.out_resistance_ohm = d.log_uniform(1, 100);
  c.out_coupling_f = d.log_uniform(100e-6, 470e-6);
  c.out_current_limit_a = d.uniform(0.03, 0.12);
  c.out_h2 = d.db_to_lin(d.uniform(-100, -75));
  c.out_h3 = d.db_to_lin(d.uniform(-100, -75));
  c.adc_full_scale_v = d.uniform(0.7, 2.0);
  for (int ch = 0; ch < 2; ++ch) {
    c.in_resistance_ohm[ch] = d.log_uniform(10e3, 100e3);
    c.in_capacitance_f[ch] = d.log_uniform(50e-12, 400e-12);
    c.in_highpass_hz[ch] = d.log_uniform(0.8, 8);
    c.in_gain[ch] = d.db_to_lin(d.uniform(-0.3, 0.3));
    c.in_delay_s[ch] = d.uniform(0, 20e-6);
  }
  c.crosstalk = d.db_to_lin(d.uniform(-110, -75));
  c.in_h2 = d.db_to_lin(d.uniform(-105, -85));
  c.in_h3 = d.db_to_lin(d.uniform(-105, -85));
  c.noise_rms_fs = d.db_to_lin(d.uniform(-112, -95));
  c.bits = draw.sixteen_bit || d.chance(0.2) ? 16 : 24;
  c.hum_hz = d.chance(0.5) ? 50 : 60;
  c.hum_rms_fs = d.db_to_lin(d.uniform(-115, -90));
  c.latency_frames = static_cast<int>(std::lround(d.log_uniform(64, 2048)));
  c.gain_drift_per_s = (d.db_to_lin(d.uniform(-0.05, 0.05)) - 1) / 3600;
  c.lead_resistance_ohm = d.uniform(0.01, 0.05);
  c.lead_jitter_ohm = 0.001;
  c.clock_offset_ppm = draw.clock_offset ? d.uniform(-50, 50) : 0;
  return c;
}

CardFaults ideal_card() {
  CardFaults c;
  c.out_resistance_ohm = 0;
  c.out_coupling_f = 0;       // 0: no coupling capacitor (a wire)
  c.out_current_limit_a = 0;  // 0: unlimited
  for (int ch = 0; ch < 2; ++ch) {
    c.in_resistance_ohm[ch] = 0;  // 0: no loading (infinite)
    c.in_capacitance_f[ch] = 0;
    c.in_highpass_hz[ch] = 0;
  }
  c.noise_rms_fs = 0;
  c.bits = 0;  // 0: no quantisation
  c.latency_frames = 0;
  c.lead_resistance_ohm = 0;
  c.lead_jitter_ohm = 0;
  return c;
}

}  // namespace tb::dsp
