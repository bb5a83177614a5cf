#include "server/error_report.hpp"

#include <exception>
#include <stdexcept>
#include <string>

#include "dsp/circuit.hpp"
#include "dsp/part_spec.hpp"
#include "dsp/recording_analysis.hpp"
#include "server/error.hpp"

namespace tb {

int report_current_error(std::string_view command, std::ostream& err) {
  auto line = [&](const std::string& id, const std::string& what, const std::string& hint) {
    err << "tonebridge " << command << ": error [" << id << "]: " << what << ". " << hint << "\n";
  };
  try {
    throw;
  } catch (const Error& e) {
    line(e.id(), e.what(), e.hint());
    return e.id().rfind("cli.", 0) == 0 ? 2 : 1;
  } catch (const dsp::AnalysisError& e) {
    line(e.id(), e.what(), e.hint());
  } catch (const dsp::CircuitError& e) {
    line(e.id(), e.message(), e.hint());
  } catch (const dsp::PartSpecError& e) {
    line(e.id(), e.what(), e.hint());
  } catch (const std::invalid_argument& e) {
    line("analysis.bad_config", e.what(),
         "check the options against `tonebridge " + std::string(command) + " --help`");
    return 2;
  } catch (const std::exception& e) {
    line("internal", e.what(),
         "this is a bug in tonebridge: please report it with the command line");
  }
  return 1;
}

}  // namespace tb
