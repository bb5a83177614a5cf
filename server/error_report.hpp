// The one place where exceptions become errors a person can act on: the command line's
// one-line errors, and (through describe_current_error) the service's JSON errors.
#pragma once

#include <ostream>
#include <string>
#include <string_view>

namespace tb {

struct ErrorInfo {
  std::string id;  ///< stable, listed in docs/errors.md; "internal" for a bug
  std::string message, hint;
};

/// Call inside a catch (...) block: the exception in flight as id, message and hint.
ErrorInfo describe_current_error();

/// Call inside a catch (...) block. Prints `tonebridge COMMAND: error [id]: what. what to do`
/// for the exception in flight and returns the exit code: 2 for a usage mistake (cli.*,
/// a bad configuration), 1 otherwise. Unexpected exceptions report as `internal`.
int report_current_error(std::string_view command, std::ostream& err);

}  // namespace tb
