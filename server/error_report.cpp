#include "server/error_report.hpp"

#include <exception>
#include <stdexcept>
#include <string>

#include "dsp/circuit.hpp"
#include "dsp/circuit_fit.hpp"
#include "dsp/part_marking.hpp"
#include "dsp/part_spec.hpp"
#include "dsp/recording_analysis.hpp"
#include "server/error.hpp"

namespace tb {

ErrorInfo describe_current_error() {
  try {
    throw;
  } catch (const Error& e) {
    return {e.id(), e.what(), e.hint()};
  } catch (const dsp::AnalysisError& e) {
    return {e.id(), e.what(), e.hint()};
  } catch (const dsp::CircuitError& e) {
    return {e.id(), e.message(), e.hint()};
  } catch (const dsp::PartSpecError& e) {
    return {e.id(), e.what(), e.hint()};
  } catch (const dsp::MarkingError& e) {
    return {e.id(), e.what(), "docs/verdicts.md shows the markings it reads"};
  } catch (const dsp::FitError& e) {
    return {e.id(), e.what(), e.hint()};
  } catch (const std::invalid_argument& e) {
    return {"analysis.bad_config", e.what(), "check the options against the command's help"};
  } catch (const std::exception& e) {
    return {"internal", e.what(), "this is a bug in tonebridge: please report it"};
  }
}

int report_current_error(std::string_view command, std::ostream& err) {
  const ErrorInfo e = describe_current_error();
  err << "tonebridge " << command << ": error [" << e.id << "]: " << e.message << ". " << e.hint
      << "\n";
  const bool usage = e.id.rfind("cli.", 0) == 0 || e.id == "analysis.bad_config";
  return usage ? 2 : 1;
}

}  // namespace tb
