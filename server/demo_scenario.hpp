// The demo: an invented workshop, Larkspur Lane Audio, with two repair jobs on the
// simulated bench. Every name, unit and serial here is made up for the demo.
//
// The tray also holds the new parts a technician fits in place of two worn ones (C41, L2),
// with role "replacement". No reading is seeded: the demo's readings of the part as found
// and of its replacement are taken on the simulated bench (put the tray part on the jig,
// then file the reading with part_id and role), so every value in the store was measured
// through the same chain as a real reading.
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
  std::string role = "original";  ///< "replacement": the new part fitted for `designator`
};

/// The parts on the demo tray, first one on the jig at start.
const std::vector<TrayPart>& demo_tray();

/// Adds the demo jobs and their parts (one per designator; replacements are tray parts,
/// not parts of their own) when the store has no jobs yet; returns how many jobs it added
/// (0 when the store already had some).
int seed_demo_jobs(Store& store);

nlohmann::json tray_json();

}  // namespace tb
