// Readings and sweeps in the shapes clients want: columns ready for a plot
// ({"freq_hz":[...],"z_mag_ohm":[...]}) and CSV files for a spreadsheet. Values a point
// lacks (a frequency that could not be read) are null in JSON and empty in CSV.
#pragma once

#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "server/store.hpp"

namespace tb {

/// One CSV field after RFC 4180 (quoted only when it must be). Text that a spreadsheet would
/// take for a formula (starting with =, +, -, @, a tab or a carriage return: a designator or
/// a note typed as "=HYPERLINK(...)") gets a leading apostrophe, so opening a report runs
/// nothing (OWASP, "CSV Injection", from memory).
/// Example: csv_field("=1+1") == "'=1+1"; csv_field("a,b") == "\"a,b\"".
std::string csv_field(const std::string& text);

/// The quantities every export carries, in this order: name in the reading's JSON.
const std::vector<std::string>& export_quantities();

/// Columns of a sweep: "index", "freq_hz" and every export quantity, plus "u_z_mag_ohm",
/// "u_theta_deg" (expanded uncertainty) and "error" (the point's error id or null).
nlohmann::json sweep_columns(const std::vector<SweepPoint>& points);

/// The sweep with its points as CSV (header line, one line per point; RFC 4180 quoting).
std::string sweep_csv(const SweepRecord& sweep, const std::vector<SweepPoint>& points);
/// Readings as CSV, one line per reading.
std::string readings_csv(const std::vector<ReadingRecord>& readings);

nlohmann::json to_json(const SweepRecord& s);
nlohmann::json to_json(const ReadingRecord& r);

}  // namespace tb
