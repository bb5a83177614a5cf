// `tonebridge measure`: one reading at one frequency on a device (default: the simulated
// bench with a part given by --part or --netlist).
#pragma once

#include <ostream>
#include <span>
#include <string>

namespace tb {

/// Returns the exit code (0 ok, 1 measurement failed, 2 usage). One-line errors to err.
int run_measure(std::span<const std::string> args, std::ostream& out, std::ostream& err);

}  // namespace tb
