#include "dsp/test_level.hpp"

#include <algorithm>
#include <stdexcept>

namespace tb::dsp {

std::string_view part_class_name(PartClass c) {
  switch (c) {
    case PartClass::general:
      return "general";
    case PartClass::electrolytic:
      return "electrolytic";
    case PartClass::in_circuit:
      return "in_circuit";
  }
  return "general";
}

std::optional<PartClass> parse_part_class(std::string_view text) {
  if (text == "general") return PartClass::general;
  if (text == "electrolytic") return PartClass::electrolytic;
  if (text == "in_circuit" || text == "in-circuit") return PartClass::in_circuit;
  return std::nullopt;
}

std::optional<double> part_voltage_cap_vrms(PartClass c) {
  switch (c) {
    case PartClass::general:
      return std::nullopt;
    case PartClass::electrolytic:
      return 0.5;  // IEC 60384-4: <= 0.5 V rms AC
    case PartClass::in_circuit:
      return 0.1 / 1.4142135623730951;  // 100 mV peak (common practice, no source)
  }
  return std::nullopt;
}

std::string_view level_limit_name(LevelLimit l) {
  switch (l) {
    case LevelLimit::requested:
      return "requested";
    case LevelLimit::input_headroom:
      return "input_headroom";
    case LevelLimit::level_cap:
      return "level_cap";
    case LevelLimit::part_voltage:
      return "part_voltage";
    case LevelLimit::clipping:
      return "clipping";
    case LevelLimit::drive_distortion:
      return "drive_distortion";
  }
  return "requested";
}

LevelChoice choose_level(const LevelProbe& p) {
  if (!(p.level_fs > 0 && p.peak_fs > 0))
    throw std::invalid_argument("probe level and input peak must be > 0");
  if (!(p.level_cap_fs > 0 && p.level_cap_fs <= 1))
    throw std::invalid_argument("level cap must be in (0, 1]");
  if (p.part_cap_vrms > 0 && !(p.part_vrms > 0))
    throw std::invalid_argument("a part voltage cap needs the probe's part voltage");
  LevelChoice c;
  if (p.requested_fs > 0) {
    c = {p.requested_fs, LevelLimit::requested};
  } else {
    c = {p.level_fs * p.target_peak_fs / p.peak_fs, LevelLimit::input_headroom};
  }
  if (p.level_cap_fs < c.level_fs) c = {p.level_cap_fs, LevelLimit::level_cap};
  if (p.part_cap_vrms > 0) {
    // A linear part: its voltage scales with the output level.
    const double part_level = p.level_fs * p.part_margin * p.part_cap_vrms / p.part_vrms;
    if (part_level < c.level_fs) c = {part_level, LevelLimit::part_voltage};
  }
  return c;
}

}  // namespace tb::dsp
