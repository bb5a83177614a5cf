// The faults of a simulated sound card, drawn at random per seed from documented ranges
// and hidden from the measuring code (which sees only samples). The ranges resemble a
// typical consumer USB audio interface; they are from memory, not from a datasheet, and
// are meant to be plausible rather than to describe any one product.
//
//   output: DAC full scale 0.5-1.6 V peak, output resistance 1-100 ohm, series coupling
//           capacitor 100-470 uF, current limit 30-120 mA peak, mild 2nd/3rd-order
//           distortion (-100..-75 dB);
//   inputs: ADC full scale 0.7-2.0 V peak, 10-100 kohm in parallel with 50-400 pF (the
//           card plus its cable), AC-coupling corner 0.8-8 Hz, gain mismatch +-0.3 dB,
//           timing offset 0-20 us per channel, crosstalk -110..-75 dB, noise floor
//           -112..-95 dBFS rms, 16- or 24-bit, mains hum -115..-90 dBFS at 50 or 60 Hz
//           with harmonics, latency 64-2048 frames;
//   jig:    lead and contact resistance 10-50 mohm per side, changing by up to +-1 mohm
//           at every reconnection; gain drift up to +-0.05 dB per hour;
//   clock:  output and input clocks differ by up to +-50 ppm, only when asked.
//
// A zero marks an element as absent: out_resistance_ohm, out_coupling_f,
// in_resistance_ohm/in_capacitance_f (no loading), in_highpass_hz (DC-coupled),
// out_current_limit_a (unlimited), bits (no quantisation).
#pragma once

#include <cstdint>

namespace tb::dsp {

struct CardFaults {
  // Output (the DAC and its amplifier).
  double dac_full_scale_v = 1.0;  ///< peak volts for a full-scale sample
  double out_resistance_ohm = 10;
  double out_coupling_f = 220e-6;     ///< series coupling capacitor
  double out_current_limit_a = 0.08;  ///< peak output current the amplifier can deliver
  double out_h2 = 0, out_h3 = 0;      ///< y = x + h2 x^2 + h3 x^3 (x in full-scale units)
  // Inputs, [0] reads node A, [1] reads node B.
  double adc_full_scale_v = 1.0;  ///< peak volts for a full-scale sample
  double in_resistance_ohm[2] = {47e3, 47e3};
  double in_capacitance_f[2] = {100e-12, 100e-12};
  double in_highpass_hz[2] = {2, 2};
  double in_gain[2] = {1, 1};     ///< linear gain error
  double in_delay_s[2] = {0, 0};  ///< sampling-instant offset of each input
  double crosstalk = 0;           ///< linear, each input picks up this much of the other
  double in_h2 = 0, in_h3 = 0;
  double noise_rms_fs = 1e-5;  ///< per input, full-scale units
  int bits = 24;
  double hum_hz = 50;
  double hum_rms_fs = 0;  ///< fundamental; 2nd and 3rd harmonics at half and a quarter
  int latency_frames = 256;
  double gain_drift_per_s = 0;  ///< relative gain change of input B per second
  // Jig.
  double lead_resistance_ohm = 0.02;  ///< per side of the part, at first connection
  double lead_jitter_ohm = 0.001;     ///< half-width of the change at each reconnection
  // Clock.
  double clock_offset_ppm = 0;  ///< output clock relative to input clock
};

struct FaultDraw {
  std::uint64_t seed = 1;
  bool clock_offset = false;  ///< draw a clock offset between output and input too
  bool sixteen_bit = false;   ///< force a 16-bit card (else 16 or 24 at random, mostly 24)
};

/// Draws every fault from the ranges above; the same seed always gives the same card.
CardFaults draw_card_faults(const FaultDraw& draw);

/// An ideal card: unit gains, no noise, no loading, no faults (for checks of the model).
CardFaults ideal_card();

}  // namespace tb::dsp
