// The service's store: one SQLite file (WAL mode) holding every reading, every sweep and
// its points, calibrations, repair jobs, their parts and the verdicts on those parts, and
// the hashes of access tokens. A reading or sweep may be filed under a part, in a role.
//
// Every write is one transaction, committed before the call returns: a reading or a sweep
// point that has been handed to the store survives a kill -9 of the process. The schema
// carries a version (table schema_version) and is brought up to date by numbered
// migrations, each in its own transaction, when the file is opened.
//
// Opening never overwrites or repairs a file: a file that is not SQLite, is truncated or
// fails SQLite's quick_check is refused with tb::Error store.* (docs/errors.md), and the
// file is left exactly as it was.
//
// Thread safety: every member may be called from any thread; calls are serialised inside.
// Bodies are JSON objects, kept as text; the columns beside them are what lists and
// filters need.
#pragma once

#include <cstdint>
#include <filesystem>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

struct sqlite3;

namespace tb {

/// State of a sweep in the store. "running" only while the engine works on it; a
/// sweep found "running" when the store opens was cut off by a crash or kill and
/// becomes "interrupted".
enum class SweepStatus { running, complete, cancelled, interrupted, failed };
std::string to_string(SweepStatus s);  ///< "running", "complete", ...

/// What a reading or sweep filed under a part was taken of: the part as found in the unit
/// ("original", the default) or the new part fitted in its place ("replacement").
enum class PartRole { original, replacement };
std::string to_string(PartRole r);                                 ///< "original", "replacement"
std::optional<PartRole> parse_part_role(const std::string& text);  ///< nullopt if neither

struct ReadingRecord {
  std::int64_t id = 0;
  std::string taken_at;  ///< UTC, ISO 8601 with milliseconds, "2026-12-02T05:18:16.123Z"
  std::string origin;    ///< "single", "continuous"
  std::optional<std::int64_t> part_id;
  nlohmann::json body;                 ///< the reading as the API returns it
  PartRole role = PartRole::original;  ///< meaningful with a part_id
};

struct SweepRecord {
  std::int64_t id = 0;
  std::string started_at, ended_at;  ///< ended_at empty while running
  SweepStatus status = SweepStatus::running;
  std::string label;
  std::optional<std::int64_t> part_id;
  nlohmann::json params;  ///< the request that started it
  nlohmann::json end;     ///< why it ended when not complete: {"id":..,"message":..}; null
  int points_saved = 0;
  int points_planned = 0;
  PartRole role = PartRole::original;  ///< meaningful with a part_id
};

struct SweepPoint {
  int index = 0;  ///< 0-based position in the plan
  double freq_hz = 0;
  nlohmann::json body;
};

struct CalibrationRecord {
  std::int64_t id = 0;
  std::string taken_at;
  std::string kind;  ///< "channel_match", "open", "short", "load", "level"
  std::string device;
  double sample_rate_hz = 0;
  std::string layout;  ///< "part-low", "part-high"
  double rref_ohm = 0;
  nlohmann::json body;  ///< frequency grid and values
};

struct JobRecord {
  std::int64_t id = 0;
  std::string created_at;
  std::string make, model, serial, notes;
};

struct PartRecord {
  std::int64_t id = 0;
  std::int64_t job_id = 0;
  std::string designator;  ///< "C12", "L3"
  std::string marking;     ///< as printed on the part, e.g. "4n7 J 100V"
  std::string notes;
  std::string created_at;
};

/// One verdict on a part (pass/fail/inconclusive against tolerance, loss or a match),
/// drawn from a reading or a sweep. The body is the verdict as its maker wrote it, e.g.
/// {"kind":"tolerance","outcome":"fail","text":"…","role":"original"}.
struct VerdictRecord {
  std::int64_t id = 0;
  std::int64_t part_id = 0;
  std::string taken_at;
  std::optional<std::int64_t> reading_id, sweep_id;  ///< null once that record is deleted
  nlohmann::json body;
};

struct TokenRecord {
  std::int64_t id = 0;
  std::string role;      ///< "control" (may change things) or "view" (read only)
  std::string hash_hex;  ///< SHA-256 of the token, lower-case hex
  std::string created_at;
};

class Store {
 public:
  /// $XDG_DATA_HOME/tonebridge/tonebridge.db, or ~/.local/share/tonebridge/tonebridge.db.
  static std::filesystem::path default_path();

  /// Opens (creating the file and its folder if missing), sets WAL, checks integrity,
  /// migrates, then marks sweeps left "running" as "interrupted".
  /// Throws tb::Error store.not_sqlite (the file is something else), store.not_tonebridge
  /// (an SQLite database of another program), store.damaged (truncated or failing
  /// quick_check), store.too_new (schema newer than this program), store.unwritable
  /// (folder or file cannot be created or written).
  /// Any member may throw store.write_failed / store.read_failed when SQLite fails.
  explicit Store(const std::filesystem::path& path);
  ~Store();
  Store(const Store&) = delete;
  Store& operator=(const Store&) = delete;

  const std::filesystem::path& path() const { return path_; }
  int schema_version() const;
  static int latest_schema_version();
  /// Sweeps this open found "running" and marked "interrupted".
  int interrupted_at_open() const { return interrupted_at_open_; }

  // Readings.
  /// Throws store.not_found for an unknown part_id (as does begin_sweep).
  std::int64_t add_reading(const std::string& origin, const nlohmann::json& body,
                           std::optional<std::int64_t> part_id = std::nullopt,
                           PartRole role = PartRole::original);
  std::optional<ReadingRecord> reading(std::int64_t id) const;
  /// Newest first; `before_id` > 0 pages back from there.
  std::vector<ReadingRecord> readings(int limit, std::int64_t before_id = 0) const;
  std::optional<ReadingRecord> latest_reading() const;
  bool delete_reading(std::int64_t id);
  /// Files a reading under a part in a role, or unfiles it (part_id empty, role original).
  /// False if no such reading; throws store.not_found for an unknown part.
  bool file_reading(std::int64_t id, std::optional<std::int64_t> part_id, PartRole role);
  /// A part's readings, oldest first.
  std::vector<ReadingRecord> part_readings(std::int64_t part_id) const;

  // Sweeps.
  std::int64_t begin_sweep(const nlohmann::json& params, int points_planned,
                           const std::string& label = "",
                           std::optional<std::int64_t> part_id = std::nullopt,
                           PartRole role = PartRole::original);
  /// Saves one point (one transaction); a second point with the same index replaces it.
  /// Throws store.not_found for an unknown sweep.
  void add_sweep_point(std::int64_t sweep_id, const SweepPoint& point);
  /// A sweep that adds points as it goes (refinement) raises its plan. Throws
  /// store.not_found for an unknown sweep.
  void set_points_planned(std::int64_t sweep_id, int points_planned);
  /// Throws tb::Error store.not_found for an unknown sweep; std::logic_error for
  /// SweepStatus::running.
  void end_sweep(std::int64_t sweep_id, SweepStatus status, const nlohmann::json& end = nullptr);
  std::optional<SweepRecord> sweep(std::int64_t id) const;
  std::vector<SweepPoint> sweep_points(std::int64_t id) const;                   ///< by index
  std::vector<SweepRecord> sweeps(int limit, std::int64_t before_id = 0) const;  ///< newest first
  bool delete_sweep(std::int64_t id);  ///< with its points
  /// As file_reading, for a sweep.
  bool file_sweep(std::int64_t id, std::optional<std::int64_t> part_id, PartRole role);
  /// A part's sweeps, oldest first, without their points.
  std::vector<SweepRecord> part_sweeps(std::int64_t part_id) const;

  // Calibrations.
  std::int64_t add_calibration(const CalibrationRecord& c);  ///< id and taken_at are set here
  std::optional<CalibrationRecord> calibration(std::int64_t id) const;
  std::vector<CalibrationRecord> calibrations(int limit) const;  ///< newest first
  /// Newest calibration of this kind for this device, rate, layout and Rref.
  std::optional<CalibrationRecord> latest_calibration(const std::string& kind,
                                                      const std::string& device,
                                                      double sample_rate_hz,
                                                      const std::string& layout,
                                                      double rref_ohm) const;
  bool delete_calibration(std::int64_t id);

  // Repair jobs and their parts.
  std::int64_t add_job(const JobRecord& j);
  bool update_job(const JobRecord& j);  ///< false if no such job
  std::optional<JobRecord> job(std::int64_t id) const;
  std::vector<JobRecord> jobs() const;  ///< newest first
  /// With its parts and their verdicts; their readings and sweeps stay, unfiled.
  bool delete_job(std::int64_t id);
  /// Throws tb::Error store.not_found if the job does not exist, store.conflict if the
  /// job already has a part with this designator.
  std::int64_t add_part(const PartRecord& p);
  /// Changes designator, marking and notes (a part stays in its job); false if no such
  /// part; store.conflict if the job already has another part with that designator.
  bool update_part(const PartRecord& p);
  std::optional<PartRecord> part(std::int64_t id) const;
  std::vector<PartRecord> parts(std::int64_t job_id) const;  ///< by designator, C2 before C12
  bool delete_part(std::int64_t id);  ///< with its verdicts; its readings and sweeps stay

  // Verdicts on parts (a history: each one is kept).
  /// Saves a verdict drawn from a reading and/or a sweep (either may be empty); returns its
  /// id. Throws store.not_found for an unknown part, reading or sweep. The reading or
  /// sweep need not be filed under the part.
  std::int64_t add_verdict(std::int64_t part_id, std::optional<std::int64_t> reading_id,
                           std::optional<std::int64_t> sweep_id, const nlohmann::json& body);
  std::vector<VerdictRecord> verdicts(std::int64_t part_id) const;  ///< newest first

  // Access tokens (only hashes are stored).
  std::int64_t add_token(const std::string& role, const std::string& hash_hex);
  std::vector<TokenRecord> tokens() const;
  void delete_tokens();  ///< all of them (a new token replaces the old ones)

 private:
  std::filesystem::path path_;
  sqlite3* db_ = nullptr;
  mutable std::mutex mutex_;
  int interrupted_at_open_ = 0;
};

/// UTC now as ISO 8601 with milliseconds ("2026-12-02T05:18:16.123Z").
std::string utc_now_iso();

}  // namespace tb
