// The one place where exceptions become the command line's one-line errors.
#pragma once

#include <ostream>
#include <string_view>

namespace tb {

/// Call inside a catch (...) block. Prints `tonebridge COMMAND: error [id]: what. what to do`
/// for the exception in flight and returns the exit code: 2 for a usage mistake (cli.*,
/// a bad configuration), 1 otherwise. Unexpected exceptions report as `internal`.
int report_current_error(std::string_view command, std::ostream& err);

}  // namespace tb
