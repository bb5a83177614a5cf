// Runs a program (the tonebridge CLI) with arguments, capturing stdout, stderr and the
// exit code, without a shell in between.
#pragma once

#include <string>
#include <vector>

namespace tb::test {

struct CommandResult {
  int exit_code = -1;
  std::string out, err;
};

/// The whole file as text ("" when it cannot be read).
std::string read_text_file(const std::string& path);

CommandResult run_command(const std::string& program, const std::vector<std::string>& args);

/// run_command on the tonebridge CLI built with the tests.
CommandResult run_cli(const std::vector<std::string>& args);

}  // namespace tb::test
