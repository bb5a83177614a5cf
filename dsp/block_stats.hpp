// Statistics over the per-block results of the lock-in: mean, spread, SNR, and the
// check that a reading has settled (start-up transients gone, no drift left).
#pragma once

#include <complex>
#include <cstddef>
#include <span>
#include <string_view>

namespace tb::dsp {

struct BlockSpread {
  std::complex<double> mean;
  double spread = 0;  ///< rms deviation of one block from the mean (n-1 in the denominator)
  double snr_db = 0;  ///< 20 log10(|mean| / spread), capped at 200 dB; per-block SNR
  std::size_t n = 0;
};

/// Mean and spread of complex per-block values; n >= 1 (spread 0 for n == 1).
BlockSpread block_spread(std::span<const std::complex<double>> values);

enum class SettleVerdict {
  settled,        ///< a steady run of blocks was found and shows no significant drift
  drifting,       ///< the steady run still moves (trend larger than its noise allows)
  too_few_blocks  ///< fewer than min_blocks remain once transients are removed
};

std::string_view settle_verdict_name(SettleVerdict verdict);

struct SettleResult {
  SettleVerdict verdict = SettleVerdict::too_few_blocks;
  std::size_t first = 0;  ///< first block of the steady run
  std::size_t last = 0;   ///< one past the last block of the steady run
  double drift_rel = 0;   ///< |trend over the run| / |median|
};

struct SettleConfig {
  /// Blocks further than this (relative to |median|) or than 5 robust sigmas from the
  /// median are transients. The floor keeps noise-free signals from chasing round-off.
  double rel_floor = 2e-6;
  /// A linear trend over the run that exceeds both this share of |median| and 4 of its
  /// own standard errors means the reading has not settled.
  double drift_limit_rel = 1e-4;
  std::size_t min_blocks = 2;
};

/// Finds the steady run in per-block values (typically the ratio V_B/V_A): leading and
/// trailing blocks that sit away from the robust median are dropped (start-up and stop
/// transients), then the remaining run is tested for drift.
SettleResult check_settled(std::span<const std::complex<double>> values,
                           const SettleConfig& config);

}  // namespace tb::dsp
