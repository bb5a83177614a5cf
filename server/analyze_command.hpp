// `tonebridge analyze FILE --rref OHMS [...]`: offline analysis of a recording of the jig.
#pragma once

#include <ostream>
#include <span>
#include <string>

namespace tb {

/// Runs the command; returns the process exit code (0 ok, 1 analysis failed, 2 usage).
/// Results go to out, the one-line error (id, what, what to do) to err.
int run_analyze(std::span<const std::string> args, std::ostream& out, std::ostream& err);

}  // namespace tb
