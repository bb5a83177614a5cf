// tonebridge: the command-line entry point. Each command lives in its own file.
#include <iostream>
#include <string>
#include <vector>

#include "server/analyze_command.hpp"
#include "server/calibrate_command.hpp"
#include "server/measure_command.hpp"
#include "server/sweep_command.hpp"

namespace {

constexpr const char* kHelp =
    "tonebridge: impedance of audio parts through a sound card and a reference resistor.\n\n"
    "commands:\n"
    "  analyze RECORDING.wav --rref OHMS   impedance, ESR, D/Q at each tone of a jig recording\n"
    "  measure --part TEXT                 one reading on the simulated bench\n"
    "  calibrate [--service URL]           the guided calibration of a running tonebridged\n"
    "  sweep --start HZ --stop HZ          a sweep by a running tonebridged, as CSV or JSON\n\n"
    "run `tonebridge COMMAND --help` for a command's options.\n"
    "SAFETY: discharge capacitors before connecting them; never connect the jig to\n"
    "powered equipment. See docs/safety.md.\n";

}  // namespace

int main(int argc, char** argv) {
  std::vector<std::string> args(argv + 1, argv + argc);
  if (args.empty() || args[0] == "--help" || args[0] == "help" || args[0] == "-h") {
    std::cout << kHelp;
    return args.empty() ? 2 : 0;
  }
  const std::string command = args[0];
  args.erase(args.begin());
  if (command == "analyze") return tb::run_analyze(args, std::cout, std::cerr);
  if (command == "measure") return tb::run_measure(args, std::cout, std::cerr);
  if (command == "calibrate") return tb::run_calibrate(args, std::cin, std::cout, std::cerr);
  if (command == "sweep") return tb::run_sweep_command(args, std::cout, std::cerr);
  std::cerr << "tonebridge: error [cli.unknown_command]: no command '" << command
            << "'. Run `tonebridge --help` for the commands\n";
  return 2;
}
