// A repair job as a technician hands it on: a CSV file for a spreadsheet and a printable
// HTML page for the customer's folder. Pure functions: the job's records in, text out (no
// store, no clock: the caller gives the date).
//
// Each part's readings and sweeps are grouped by role: "original" (the part as found) and
// "replacement" (the part fitted instead), side by side on the page.
//
//   JobReport r{job, {{part, store.part_readings(id), store.part_sweeps(id),
//                       store.verdicts(id)}}, "2026-12-02", ""};
//   std::string page = job_report_html(r);
#pragma once

#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "server/store.hpp"

namespace tb {

/// One part with everything filed under it.
struct PartHistory {
  PartRecord part;
  std::vector<ReadingRecord> readings;  ///< oldest first
  std::vector<SweepRecord> sweeps;      ///< oldest first
  std::vector<VerdictRecord> verdicts;  ///< newest first
};

struct JobReport {
  JobRecord job;
  std::vector<PartHistory> parts;  ///< in the order to print (by designator)
  std::string date;                ///< the report's date as printed, e.g. "2026-12-02"
  std::string workshop;            ///< the workshop's name for the header; may be empty
};

/// The reading's main value by its kind: C -> Cs in F, L -> Ls in H, R -> Rs in ohm, with
/// its expanded uncertainty; `quantity` empty when the body has no kind.
struct PrimaryValue {
  std::string quantity;              ///< "cs_f", "ls_h", "rs_ohm"
  std::string unit;                  ///< "F", "H", "ohm"
  nlohmann::json value, expanded_u;  ///< numbers, or null when the body lacks them
};
PrimaryValue primary_value(const nlohmann::json& reading_body);

/// A reading in a part's history: id, taken_at, role, freq_hz, kind, the primary value,
/// unit and expanded uncertainty, esr_ohm, d, q, z_mag_ohm, theta_deg, indicative.
nlohmann::json reading_summary(const ReadingRecord& r);
/// A sweep in a part's history: id, started_at, status, label, role, start_hz, stop_hz,
/// points_saved, points_planned.
nlohmann::json sweep_summary(const SweepRecord& s);
/// A verdict: its body's fields with id, part_id, taken_at, reading_id and sweep_id.
nlohmann::json verdict_json(const VerdictRecord& v);
/// {"readings": {"original": [...], "replacement": [...]}, "sweeps": {same}, "verdicts": [...]}
nlohmann::json part_history_json(const PartHistory& h);

/// One row per part and reading (a part without readings gets one row with its designator
/// and marking only), after a header row; RFC 4180: fields with a comma, quote, CR or LF
/// are quoted with quotes doubled, records end in CRLF. Numbers in SI base units.
/// `verdict` is the outcome of the newest verdict on that reading, else of the newest
/// verdict on the part in that role (body "role"), else empty.
std::string job_report_csv(const JobReport& report);

/// A self-contained page (inline CSS with A4 print margins, no scripts, no external
/// files): the unit, a table of parts with original and replacement readings side by side
/// and the verdict history, the date, and the safety line. Every text from a user is
/// HTML-escaped.
std::string job_report_html(const JobReport& report);

/// &, <, >, " and ' as entities.
std::string html_escape(const std::string& text);

}  // namespace tb
