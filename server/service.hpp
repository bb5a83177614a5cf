// tonebridged put together: settings from defaults, the config file and flags; the store;
// the LAN access token; the audio device and the engine; the HTTP service; and an orderly
// stop on SIGINT/SIGTERM (the sweep in flight is kept as interrupted, the store closed).
#pragma once

#include <ostream>
#include <string>
#include <vector>

namespace tb {

/// The whole program; returns its exit code. Errors at start are printed as one line
/// each with what to do (2 for a bad flag or config, 1 for anything else).
int run_service(const std::vector<std::string>& args, std::ostream& out, std::ostream& err);

}  // namespace tb
