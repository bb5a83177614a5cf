// The demo: an invented workshop, Larkspur Lane Audio, with two repair jobs on the
// simulated bench. Every name, unit and serial here is made up for the demo.
#pragma once

#include <string>
#include <vector>

#include <nlohmann/json.hpp>

namespace tb {

class Store;

struct TrayPart {
  std::string job;         ///< the job's serial, e.g. "LLA-26-130"
  std::string designator;  ///< "C3"
  std::string marking;     ///< what is printed on it
  std::string part;        ///< the simulated part (part_spec.hpp)
  std::string note;
};

/// The parts on the demo tray, first one on the jig at start.
const std::vector<TrayPart>& demo_tray();

/// Adds the demo jobs and their parts when the store has no jobs yet; returns how many
/// jobs it added (0 when the store already had some).
int seed_demo_jobs(Store& store);

nlohmann::json tray_json();

}  // namespace tb
