// `tonebridge calibrate`: walks the guided calibration of a running tonebridged. For each
// step of the guide (calibration_guide.hpp) it says what to connect, waits for Enter,
// asks the service to take the step and prints what was saved. The level step plays the
// test tone while the technician reads node A with a multimeter and types the reading.
#pragma once

#include <iosfwd>
#include <string>
#include <vector>

namespace tb {

/// Returns the exit code: 0 done, 1 a step failed (the service's error is printed with
/// what to do), 2 a usage mistake. Reads answers from `in`.
int run_calibrate(const std::vector<std::string>& args, std::istream& in, std::ostream& out,
                  std::ostream& err);

}  // namespace tb
