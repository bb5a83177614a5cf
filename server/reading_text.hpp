// Human-readable readings for the terminal: each value with only the digits its
// expanded uncertainty supports, in engineering units.
#pragma once

#include <string>

#include "dsp/recording_analysis.hpp"

namespace tb {

/// "6.812 µF ± 0.068 µF": U rounded to two significant digits, the value to the same
/// place, one SI prefix for both. With u == 0 the value keeps 6 significant digits.
std::string format_measured(double value, double expanded_u, const std::string& unit);

/// A value alone with an SI prefix and `digits` significant digits: "4.70 kΩ".
std::string format_si(double value, const std::string& unit, int digits = 4);

/// The block of lines for one tone.
std::string format_reading(const dsp::ToneReading& reading);

}  // namespace tb
