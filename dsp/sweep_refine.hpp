// Where a stepped sweep needs more points, and how long each point must settle.
//
// Refinement: a log-spaced sweep with 10 points per decade steps 26 % in frequency, so a
// driver's resonance with Qms 5 (a -3 dB width of 20 % of fs) can fall between two points,
// and a coil's self-resonance shows as one odd point. After the planned points, the sweep
// looks at each interval between neighbours and adds its geometric midpoint where the curve
// is sharp there:
//   - the phase of Z turns by more than `max_phase_step_deg` across the interval, or
//   - log |Z| bends: the middle of three neighbours sits further than `max_log_bend` (natural
//     log units) from the straight line in log f through the outer two, or
//   - |Z| has a local maximum or minimum at one end of the interval (a resonance peak or dip).
// Rounds repeat on the new intervals until nothing is sharp, the intervals are narrower than
// `min_ratio`, or `max_added` points were added.
//
// Settling: the analysis discards blocks that have not settled, but a point is quicker when
// its settling interval already covers the jig's own response time. That time comes from
// the part itself: the group delay of the divider ratio (largest near a resonance, where
// it is 2Q/w0) and the first-order time constant of Rref with the part's C or L; plus the
// card's input coupling (a high-pass near a few hertz) for tones within 20x of its corner.
#pragma once

#include <complex>
#include <span>
#include <vector>

namespace tb::dsp {

struct RefineConfig {
  double max_phase_step_deg = 20;  ///< > 0
  double max_log_bend = 0.08;      ///< > 0; 0.08 is an 8 % departure from the log-log line
  double min_ratio = 1.01;         ///< > 1: intervals narrower than this are not split
  int max_added = 30;              ///< >= 0, over all rounds
};

/// Frequencies to add between the points measured so far. freqs_hz ascending, z one value
/// per frequency (a point whose z is not finite is skipped, as if unmeasured). `added_so_far`
/// counts points added in earlier rounds against config.max_added. Returns ascending
/// geometric midpoints, none closer than min_ratio to a measured frequency.
/// Example: a series RLC resonance at 1 kHz measured at 10 points per decade gets points
/// added between 794 Hz and 1.26 kHz.
std::vector<double> refine_frequencies(std::span<const double> freqs_hz,
                                       std::span<const std::complex<double>> z,
                                       const RefineConfig& config = {}, int added_so_far = 0);

struct SettleInputs {
  double freq_hz = 1000;          ///< the tone to settle, > 0
  double group_delay_s = 0;       ///< |d(arg H)/d omega| of the divider ratio near freq_hz, >= 0
  double circuit_tau_s = 0;       ///< Rref with the part's C or L, >= 0
  double coupling_hz = 5;         ///< the card's input high-pass corner, >= 0 (0: none)
  double min_s = 0.1, max_s = 2;  ///< bounds of the answer
};

/// Settling time before analysis: 6 time constants of the slowest of the jig's responses
/// (a transient left at e^-6 = 0.25 % of its start), within [min_s, max_s].
/// Example: settle_time_s({.freq_hz = 40, .group_delay_s = 0.04}) == 0.24.
double settle_time_s(const SettleInputs& in);

/// Group delay of the divider ratio between two neighbouring points, from the ratio's phase
/// (H = Z/(Z+Rref) for part-low, Rref/(Z+Rref) for part-high; both have the same |slope| of
/// arg(Z+Rref) apart from arg Z itself, so this takes the slope of arg H directly).
/// part_high selects the layout. Returns |d arg H / d omega| in seconds; 0 for equal
/// frequencies.
double divider_group_delay_s(double f1_hz, std::complex<double> z1, double f2_hz,
                             std::complex<double> z2, double rref_ohm, bool part_high);

/// Rref with the part's series C or L: (Rref + R) C for a capacitive Z = R + 1/(j w C),
/// L / (Rref + R) for an inductive one; at frequency f_hz.
double circuit_time_constant_s(double f_hz, std::complex<double> z, double rref_ohm);

/// Analysed duration for a target Type A uncertainty: the noise-limited u falls as
/// 1/sqrt(duration), so duration_now * (u_now / u_target)^2, within [min_s, max_s].
double duration_for_target_s(double duration_now_s, double u_now_rel, double u_target_rel,
                             double min_s = 0.1, double max_s = 10);

}  // namespace tb::dsp
