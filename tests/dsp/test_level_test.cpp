#include "dsp/test_level.hpp"

#include <catch2/catch.hpp>
#include <cmath>

using namespace tb::dsp;

TEST_CASE("part classes carry their voltage caps", "[test_level]") {
  // IEC 60384-4: aluminium electrolytics measured at <= 0.5 V rms AC.
  CHECK(*part_voltage_cap_vrms(PartClass::electrolytic) == 0.5);
  // 100 mV peak in circuit (common practice, no source) = 70.7 mV rms.
  CHECK(*part_voltage_cap_vrms(PartClass::in_circuit) == Approx(0.1 / std::sqrt(2.0)));
  CHECK_FALSE(part_voltage_cap_vrms(PartClass::general));
  for (auto c : {PartClass::general, PartClass::electrolytic, PartClass::in_circuit})
    CHECK(parse_part_class(part_class_name(c)) == c);
  CHECK(parse_part_class("in-circuit") == PartClass::in_circuit);
  CHECK_FALSE(parse_part_class("ceramic"));
}

TEST_CASE("the automatic level scales the probe to the lowest limit", "[test_level]") {
  LevelProbe p{.level_fs = 0.02, .peak_fs = 0.05, .part_vrms = 0.01, .level_cap_fs = 0.5};
  // -6 dBFS at the larger input: 0.02 * 0.5 / 0.05 = 0.2.
  auto c = choose_level(p);
  CHECK(c.level_fs == Approx(0.2));
  CHECK(c.limited_by == LevelLimit::input_headroom);
  // A lower output cap wins.
  p.level_cap_fs = 0.1;
  c = choose_level(p);
  CHECK(c.level_fs == Approx(0.1));
  CHECK(c.limited_by == LevelLimit::level_cap);
  // An electrolytic that read 10 mV at 0.02 FS may have 0.95 * 0.5 V: level 0.95.
  // In circuit: 0.95 * 70.7 mV -> 0.02 * 6.72 = 0.134, under the 0.2 headroom level.
  p.level_cap_fs = 1;
  p.part_cap_vrms = *part_voltage_cap_vrms(PartClass::in_circuit);
  c = choose_level(p);
  CHECK(c.limited_by == LevelLimit::part_voltage);
  CHECK(c.level_fs == Approx(0.02 * 0.95 * 0.1 / std::sqrt(2.0) / 0.01));
  // A fixed request stays an upper bound.
  p.requested_fs = 0.05;
  c = choose_level(p);
  CHECK(c.level_fs == Approx(0.05));
  CHECK(c.limited_by == LevelLimit::requested);
  // A cap without a part voltage cannot be kept.
  p.part_vrms = 0;
  CHECK_THROWS_AS(choose_level(p), std::invalid_argument);
}
