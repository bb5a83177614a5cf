// Phase drift across blocks. Every lock-in block is referenced to absolute time, so a
// tone whose true frequency differs from the demodulation frequency shows a phase that
// moves steadily from block to block; a clock that wanders shows a curved or ragged
// phase. A quadratic fit to the unwrapped phase gives the frequency error (linear term)
// and the frequency's change over the recording (quadratic term); what is left over is
// wander that no smooth correction can follow.
#pragma once

#include <complex>
#include <cstddef>
#include <span>

namespace tb::dsp {

struct PhaseDrift {
  double freq_error_hz = 0;        ///< true minus demodulation frequency, at the middle of the run
  double freq_slope_hz_per_s = 0;  ///< change of the true frequency per second
  double residual_rad = 0;         ///< rms phase left after the quadratic fit
};

/// phasors: one channel's per-block amplitude at one tone; starts: absolute block start
/// indices (ascending); fs > 0. Needs >= 3 blocks (returns zeros otherwise). The frequency
/// error must stay below half a cycle per block for the unwrapping to hold, which the
/// sine fit guarantees.
PhaseDrift measure_phase_drift(std::span<const std::complex<double>> phasors,
                               std::span<const std::size_t> starts, std::size_t block_len,
                               double sample_rate_hz);

}  // namespace tb::dsp
