// The test level of one reading: how hard the part may be driven, by its class, and the
// output level that puts the larger input near -6 dBFS without passing any cap.
//
// Caps by part class, as the voltage across the part:
//   electrolytic: at most 0.5 V rms AC (IEC 60384-4, measurement conditions for aluminium
//                 electrolytic capacitors; also IEC 60384-1);
//   in_circuit:   at most 100 mV peak, so the junctions of semiconductors in the circuit
//                 stay off (common practice, no source); such a reading is indicative only;
//   general:      no cap beyond the output level cap.
#pragma once

#include <optional>
#include <string_view>

namespace tb::dsp {

enum class PartClass { general, electrolytic, in_circuit };

std::string_view part_class_name(PartClass c);  ///< "general", "electrolytic", "in_circuit"
/// Inverse of part_class_name (also "in-circuit"); nullopt otherwise.
std::optional<PartClass> parse_part_class(std::string_view text);

/// Largest rms voltage across the part for its class, volts; nullopt = no cap (general).
/// Example: *part_voltage_cap_vrms(PartClass::electrolytic) == 0.5.
std::optional<double> part_voltage_cap_vrms(PartClass c);

/// What set the output level of a reading.
enum class LevelLimit {
  requested,         ///< the level asked for
  input_headroom,    ///< the larger input at the target (-6 dBFS peak)
  level_cap,         ///< the configured output cap (level_cap_fs)
  part_voltage,      ///< the part class's voltage cap
  clipping,          ///< the inputs clipped and the tone was played again lower
  drive_distortion,  ///< the card's output distorted into the load; played again lower
};

std::string_view level_limit_name(LevelLimit l);  ///< "requested", "input_headroom", ...

struct LevelProbe {
  double level_fs = 0;          ///< output level of the probe, > 0
  double peak_fs = 0;           ///< larger input amplitude it produced, full-scale peak, > 0
  double part_vrms = 0;         ///< voltage across the part it produced; 0 = unknown
  double requested_fs = 0;      ///< a fixed level to keep as an upper bound; 0 = automatic
  double level_cap_fs = 1;      ///< output cap, (0, 1]
  double part_cap_vrms = 0;     ///< the class's cap; 0 = none
  double target_peak_fs = 0.5;  ///< -6 dBFS peak at the larger input
  double part_margin = 0.95;    ///< stay this fraction below the part cap (noise, rounding)
};

struct LevelChoice {
  double level_fs = 0;
  LevelLimit limited_by = LevelLimit::requested;
};

/// Scales the probe linearly to the lowest of: the requested level (or, automatic, the
/// level that puts the larger input at target_peak_fs), level_cap_fs, and the level that
/// puts part_margin * part_cap_vrms across the part. Throws std::invalid_argument for a
/// probe level or peak <= 0, a cap outside (0, 1], or a part cap without a part voltage.
/// Example: probe 0.02 FS read 0.05 FS peak, automatic, cap 0.5 -> 0.2 FS (input_headroom).
LevelChoice choose_level(const LevelProbe& probe);

}  // namespace tb::dsp
