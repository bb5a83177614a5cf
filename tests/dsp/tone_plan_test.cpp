#include "dsp/tone_plan.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>

using namespace tb::dsp;

TEST_CASE("tones are moved onto exact bins and the achieved frequency is reported", "[tone_plan]") {
  const auto plan =
      plan_tones({.sample_rate_hz = 48000, .block_len = 4800, .requested_hz = {1000.3, 120, 7001}});
  REQUIRE(plan.tones.size() == 3);
  CHECK(plan.tones[0].achieved_hz == 1000.0);
  CHECK(plan.tones[1].achieved_hz == 120.0);
  CHECK(plan.tones[2].achieved_hz == 7000.0);
  CHECK(plan.tones[2].bin == 700);
}

TEST_CASE("tone plan refuses impossible requests", "[tone_plan]") {
  CHECK_THROWS_AS(plan_tones({.sample_rate_hz = 48000, .block_len = 4800, .requested_hz = {30000}}),
                  std::invalid_argument);
  CHECK_THROWS_AS(plan_tones({.sample_rate_hz = 48000, .block_len = 4800, .requested_hz = {-1}}),
                  std::invalid_argument);
  // 3 Hz needs a block longer than 0.1 s (10 Hz bins).
  CHECK_THROWS_AS(plan_tones({.sample_rate_hz = 48000, .block_len = 4800, .requested_hz = {3}}),
                  std::invalid_argument);
  CHECK_THROWS_AS(
      plan_tones({.sample_rate_hz = 48000, .block_len = 4800, .requested_hz = {1000, 1002}}),
      std::invalid_argument);
  CHECK_THROWS_AS(plan_tones({.sample_rate_hz = 48000, .block_len = 4800, .requested_hz = {}}),
                  std::invalid_argument);
}

TEST_CASE("synthesised excitation has fade-in, settling and whole periods per block",
          "[tone_plan]") {
  const auto plan = plan_tones({.sample_rate_hz = 48000,
                                .block_len = 480,
                                .requested_hz = {1000},
                                .fade_in_s = 0.01,
                                .settle_s = 0.01,
                                .blocks = 4});
  const double amp[] = {0.5}, ph[] = {0.0};
  const auto x = synthesize(plan, amp, ph);
  REQUIRE(x.size() == plan.total_samples());
  CHECK(plan.analysis_start() == 960);
  CHECK(std::abs(x[0]) < 1e-12);  // faded in from zero
  // Every analysis block starts at the same phase (coherent).
  for (std::size_t blk = 0; blk < plan.blocks; ++blk) {
    CHECK(x[plan.analysis_start() + blk * plan.block_len] == Approx(0.5));
  }
}

TEST_CASE("Schroeder phases give the published crest factors", "[tone_plan]") {
  // Source: Schroeder, IEEE Trans. Inf. Theory IT-16(1), 1970; crest factors for
  // harmonics 1..N from shared references [calc]: 1.786 (8), 1.826 (16), 1.735 (32),
  // 1.707 (64); zero phases give sqrt(2N).
  for (auto [n, expected] : {std::pair{8, 1.786}, {16, 1.826}, {32, 1.735}, {64, 1.707}}) {
    const auto count = static_cast<std::size_t>(n);
    std::vector<double> freqs;
    for (std::size_t k = 1; k <= count; ++k)
      freqs.push_back(static_cast<double>(k) * 10.0);
    const auto plan = plan_tones({.sample_rate_hz = 48000,
                                  .block_len = 4800 * 4,
                                  .requested_hz = freqs,
                                  .fade_in_s = 0,
                                  .settle_s = 0,
                                  .blocks = 1});
    const std::vector<double> amps(count, 1.0);
    const auto phases = schroeder_phases(count);
    CHECK(crest_factor(synthesize(plan, amps, phases)) == Approx(expected).margin(0.002));
    const std::vector<double> zero(count, 0.0);
    CHECK(crest_factor(synthesize(plan, amps, zero)) == Approx(std::sqrt(2.0 * n)).margin(0.002));
  }
}
