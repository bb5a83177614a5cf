// `tonebridge sweep`: asks a running tonebridged for a sweep of the part on the jig, shows
// a progress line while it runs, and writes the saved sweep as CSV or JSON. The service does
// the measuring (its device, its stored calibrations) and keeps the sweep; Ctrl-C cancels
// it there and the points measured so far are still written, marked partial.
#pragma once

#include <iosfwd>
#include <string>
#include <vector>

namespace tb {

/// Returns the exit code: 0 complete, 1 the sweep failed or was cancelled (what was saved is
/// still written), 2 a usage mistake. The sweep goes to `out` (or --output FILE), the
/// progress line and messages to `err`.
int run_sweep_command(const std::vector<std::string>& args, std::ostream& out, std::ostream& err);

}  // namespace tb
