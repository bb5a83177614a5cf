#include "server/store.hpp"

#include <pwd.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <initializer_list>
#include <limits>
#include <stdexcept>
#include <string_view>

#include "server/error.hpp"
#include "server/sqlite_handle.hpp"
#include "server/store_file.hpp"
#include "server/store_schema.hpp"

namespace tb {

namespace fs = std::filesystem;
using sqlite::Access;
using sqlite::Statement;
using Lock = std::lock_guard<std::mutex>;

namespace {

constexpr std::string_view kReadings =
    "SELECT id, taken_at, origin, part_id, body, part_role FROM readings";
constexpr std::string_view kSweeps =
    "SELECT id, started_at, ended_at, status, label, part_id, params, end_reason, "
    "points_planned, (SELECT count(*) FROM sweep_points WHERE sweep_id = sweeps.id), "
    "part_role FROM sweeps";
constexpr std::string_view kVerdicts =
    "SELECT id, part_id, taken_at, reading_id, sweep_id, body FROM part_verdicts";
constexpr std::string_view kCalibrations =
    "SELECT id, taken_at, kind, device, sample_rate_hz, layout, rref_ohm, body FROM calibrations";
constexpr std::string_view kJobs = "SELECT id, created_at, make, model, serial, notes FROM jobs";
constexpr std::string_view kParts =
    "SELECT id, job_id, designator, marking, notes, created_at FROM parts";

SweepStatus status_from(const std::string& text) {
  for (SweepStatus s : {SweepStatus::running, SweepStatus::complete, SweepStatus::cancelled,
                        SweepStatus::interrupted, SweepStatus::failed}) {
    if (to_string(s) == text) return s;
  }
  throw Error("store.read_failed", "reading a sweep: unknown status \"" + text + "\"",
              "the database was changed by another program; restore a backup");
}

PartRole role_from(const std::string& text) {
  if (auto r = parse_part_role(text)) return *r;
  throw Error("store.read_failed", "reading a part's record: unknown role \"" + text + "\"",
              "the database was changed by another program; restore a backup");
}

ReadingRecord reading_row(const Statement& st) {
  return {st.int64_at(0),          st.text_at(1), st.text_at(2),
          st.optional_int64_at(3), st.json_at(4), role_from(st.text_at(5))};
}

VerdictRecord verdict_row(const Statement& st) {
  return {st.int64_at(0),          st.int64_at(1),          st.text_at(2),
          st.optional_int64_at(3), st.optional_int64_at(4), st.json_at(5)};
}

SweepRecord sweep_row(const Statement& st) {
  SweepRecord r;
  r.id = st.int64_at(0);
  r.started_at = st.text_at(1);
  r.ended_at = st.text_at(2);
  r.status = status_from(st.text_at(3));
  r.label = st.text_at(4);
  r.part_id = st.optional_int64_at(5);
  r.params = st.json_at(6);
  r.end = st.json_at(7);
  r.points_planned = st.int_at(8);
  r.points_saved = st.int_at(9);
  r.role = role_from(st.text_at(10));
  return r;
}

CalibrationRecord calibration_row(const Statement& st) {
  return {st.int64_at(0),  st.text_at(1), st.text_at(2),   st.text_at(3),
          st.double_at(4), st.text_at(5), st.double_at(6), st.json_at(7)};
}

JobRecord job_row(const Statement& st) {
  return {st.int64_at(0), st.text_at(1), st.text_at(2),
          st.text_at(3),  st.text_at(4), st.text_at(5)};
}

PartRecord part_row(const Statement& st) {
  return {st.int64_at(0), st.int64_at(1), st.text_at(2),
          st.text_at(3),  st.text_at(4),  st.text_at(5)};
}

TokenRecord token_row(const Statement& st) {
  return {st.int64_at(0), st.text_at(1), st.text_at(2), st.text_at(3)};
}

template <class Row>
std::vector<Row> all_rows(Statement& st, Row (*row)(const Statement&)) {
  std::vector<Row> rows;
  while (st.step())
    rows.push_back(row(st));
  return rows;
}

template <class Row>
std::optional<Row> by_id(sqlite3* db, std::string_view select, std::int64_t id,
                         Row (*row)(const Statement&), const std::string& what) {
  Statement st(db, std::string(select) + " WHERE id = ?1", Access::read, what);
  st.bind(1, id);
  if (!st.step()) return std::nullopt;
  return row(st);
}

// Every row of `select` whose part_id is `part_id`, by id, oldest first.
template <class Row>
std::vector<Row> of_part(sqlite3* db, std::string_view select, std::int64_t part_id,
                         Row (*row)(const Statement&), const std::string& what) {
  Statement st(db, std::string(select) + " WHERE part_id = ?1 ORDER BY id", Access::read, what);
  st.bind(1, part_id);
  return all_rows(st, row);
}

// limit < 0: no limit (SQLite's LIMIT -1).
template <class Row>
std::vector<Row> newest_first(sqlite3* db, std::string_view select, int limit,
                              std::int64_t before_id, Row (*row)(const Statement&),
                              const std::string& what) {
  Statement st(db, std::string(select) + " WHERE id < ?1 ORDER BY id DESC LIMIT ?2", Access::read,
               what);
  st.bind_all(before_id > 0 ? before_id : std::numeric_limits<std::int64_t>::max(), limit);
  return all_rows(st, row);
}

// One INSERT; returns the new row's id.
template <class... Values>
std::int64_t insert(sqlite3* db, std::string_view sql, const std::string& what,
                    const Values&... values) {
  Statement(db, sql, Access::write, what).bind_all(values...).run();
  return sqlite3_last_insert_rowid(db);
}

// One UPDATE or DELETE; returns the number of rows it changed.
template <class... Values>
int change(sqlite3* db, std::string_view sql, const std::string& what, const Values&... values) {
  return Statement(db, sql, Access::write, what).bind_all(values...).run();
}

bool delete_by_id(sqlite3* db, std::string_view table, std::int64_t id, const std::string& what) {
  return change(db, "DELETE FROM " + std::string(table) + " WHERE id = ?1", what, id) > 0;
}

// Steps a one-statement write. Returns SQLITE_DONE, or one of the `expected` constraint
// failures, which the caller turns into its own error; throws for anything else.
int step_write(Statement& st, std::initializer_list<int> expected) {
  const int rc = st.try_step();
  if (rc == SQLITE_DONE || std::find(expected.begin(), expected.end(), rc) != expected.end()) {
    return rc;
  }
  st.fail(rc);
}

Error not_found(const std::string& kind, std::int64_t id) {
  return Error("store.not_found", "there is no " + kind + " " + std::to_string(id),
               "it may have been deleted; list the " + kind + "s to see which exist");
}

Error designator_taken(const std::string& designator) {
  return Error("store.conflict", "the job already has a part " + designator,
               "use another designator, or change that part");
}

// "C2" before "C12": runs of digits compare by value, the rest case-blind.
bool designator_less(const std::string& a, const std::string& b) {
  std::size_t i = 0, j = 0;
  auto digit = [](char c) { return std::isdigit(static_cast<unsigned char>(c)) != 0; };
  while (i < a.size() && j < b.size()) {
    if (digit(a[i]) && digit(b[j])) {
      while (i < a.size() && a[i] == '0')
        ++i;
      while (j < b.size() && b[j] == '0')
        ++j;
      const std::size_t ei = std::find_if_not(a.begin() + i, a.end(), digit) - a.begin();
      const std::size_t ej = std::find_if_not(b.begin() + j, b.end(), digit) - b.begin();
      const auto na = a.substr(i, ei - i), nb = b.substr(j, ej - j);
      if (na.size() != nb.size()) return na.size() < nb.size();
      if (na != nb) return na < nb;
      i = ei;
      j = ej;
      continue;
    }
    const int ca = std::tolower(static_cast<unsigned char>(a[i]));
    const int cb = std::tolower(static_cast<unsigned char>(b[j]));
    if (ca != cb) return ca < cb;
    ++i;
    ++j;
  }
  if ((a.size() - i) != (b.size() - j)) return (a.size() - i) < (b.size() - j);
  return a < b;
}

}  // namespace

std::string to_string(SweepStatus s) {
  switch (s) {
    case SweepStatus::running:
      return "running";
    case SweepStatus::complete:
      return "complete";
    case SweepStatus::cancelled:
      return "cancelled";
    case SweepStatus::interrupted:
      return "interrupted";
    case SweepStatus::failed:
      return "failed";
  }
  return "failed";
}

std::string to_string(PartRole r) {
  return r == PartRole::replacement ? "replacement" : "original";
}

std::optional<PartRole> parse_part_role(const std::string& text) {
  if (text == "original") return PartRole::original;
  if (text == "replacement") return PartRole::replacement;
  return std::nullopt;
}

std::string utc_now_iso() {
  using namespace std::chrono;
  const auto now = floor<milliseconds>(system_clock::now());
  const auto secs = floor<seconds>(now);
  const std::time_t t = system_clock::to_time_t(secs);
  std::tm tm{};
  gmtime_r(&t, &tm);
  char date[32];
  std::strftime(date, sizeof date, "%Y-%m-%dT%H:%M:%S", &tm);
  char out[48];
  std::snprintf(out, sizeof out, "%s.%03dZ", date, static_cast<int>((now - secs).count()));
  return out;
}

fs::path Store::default_path() {
  const char* xdg = std::getenv("XDG_DATA_HOME");
  fs::path base;
  if (xdg && fs::path(xdg).is_absolute()) {
    base = xdg;
  } else {
    const char* home = std::getenv("HOME");
    const passwd* pw = (home && *home) ? nullptr : getpwuid(getuid());
    base = fs::path(home && *home ? home : pw ? pw->pw_dir : ".") / ".local" / "share";
  }
  return base / "tonebridge" / "tonebridge.db";
}

Store::Store(const fs::path& path) : path_(path) {
  store_file::prepare_folder(path_);
  store_file::check_existing(path_);
  sqlite::Connection conn = store_file::open_for_writing(path_);
  store_schema::migrate(conn.get());
  const nlohmann::json end = {{"id", "sweep.interrupted"},
                              {"message", "the service stopped before the sweep finished"}};
  interrupted_at_open_ = change(conn.get(),
                                "UPDATE sweeps SET status = 'interrupted', ended_at = ?1, "
                                "end_reason = ?2 WHERE status = 'running'",
                                "marking unfinished sweeps interrupted", utc_now_iso(), end);
  db_ = conn.release();
}

// sqlite3_close_v2 checkpoints the WAL into the file and removes it (the last connection
// does); every statement is finalized already, by its RAII wrapper.
Store::~Store() {
  sqlite3_close_v2(db_);
}

int Store::schema_version() const {
  Lock lock(mutex_);
  return store_schema::stored_version(db_, Access::read);
}

int Store::latest_schema_version() {
  return store_schema::latest_version();
}

// Readings.

std::int64_t Store::add_reading(const std::string& origin, const nlohmann::json& body,
                                std::optional<std::int64_t> part_id, PartRole role) {
  Lock lock(mutex_);
  Statement st(db_,
               "INSERT INTO readings(taken_at, origin, part_id, body, part_role) "
               "VALUES (?1, ?2, ?3, ?4, ?5)",
               Access::write, "saving a reading");
  st.bind_all(utc_now_iso(), origin, part_id, body, to_string(role));
  if (step_write(st, {SQLITE_CONSTRAINT_FOREIGNKEY}) != SQLITE_DONE) {
    throw not_found("part", *part_id);
  }
  return sqlite3_last_insert_rowid(db_);
}

std::optional<ReadingRecord> Store::reading(std::int64_t id) const {
  Lock lock(mutex_);
  return by_id(db_, kReadings, id, reading_row, "reading a reading");
}

std::vector<ReadingRecord> Store::readings(int limit, std::int64_t before_id) const {
  Lock lock(mutex_);
  return newest_first(db_, kReadings, std::max(limit, 0), before_id, reading_row,
                      "listing readings");
}

std::optional<ReadingRecord> Store::latest_reading() const {
  Lock lock(mutex_);
  auto rows = newest_first(db_, kReadings, 1, 0, reading_row, "reading the latest reading");
  if (rows.empty()) return std::nullopt;
  return rows.front();
}

bool Store::delete_reading(std::int64_t id) {
  Lock lock(mutex_);
  return delete_by_id(db_, "readings", id, "deleting a reading");
}

// Readings and sweeps are filed the same way; `table` is one of the two.
namespace {
bool file_under_part(sqlite3* db, std::string_view table, std::int64_t id,
                     std::optional<std::int64_t> part_id, PartRole role, const std::string& what) {
  Statement st(db,
               "UPDATE " + std::string(table) + " SET part_id = ?2, part_role = ?3 WHERE id = ?1",
               Access::write, what);
  st.bind_all(id, part_id, to_string(part_id ? role : PartRole::original));
  if (step_write(st, {SQLITE_CONSTRAINT_FOREIGNKEY}) != SQLITE_DONE) {
    throw not_found("part", *part_id);
  }
  return sqlite3_changes(db) > 0;
}
}  // namespace

bool Store::file_reading(std::int64_t id, std::optional<std::int64_t> part_id, PartRole role) {
  Lock lock(mutex_);
  return file_under_part(db_, "readings", id, part_id, role, "filing a reading under a part");
}

std::vector<ReadingRecord> Store::part_readings(std::int64_t part_id) const {
  Lock lock(mutex_);
  return of_part(db_, kReadings, part_id, reading_row, "listing a part's readings");
}

// Sweeps.

std::int64_t Store::begin_sweep(const nlohmann::json& params, int points_planned,
                                const std::string& label, std::optional<std::int64_t> part_id,
                                PartRole role) {
  Lock lock(mutex_);
  Statement st(db_,
               "INSERT INTO sweeps(started_at, status, label, part_id, params, points_planned, "
               "part_role) VALUES (?1, 'running', ?2, ?3, ?4, ?5, ?6)",
               Access::write, "starting a sweep");
  st.bind_all(utc_now_iso(), label, part_id, params, points_planned, to_string(role));
  if (step_write(st, {SQLITE_CONSTRAINT_FOREIGNKEY}) != SQLITE_DONE) {
    throw not_found("part", *part_id);
  }
  return sqlite3_last_insert_rowid(db_);
}

void Store::add_sweep_point(std::int64_t sweep_id, const SweepPoint& point) {
  Lock lock(mutex_);
  Statement st(db_,
               "INSERT INTO sweep_points(sweep_id, idx, freq_hz, body) VALUES (?1, ?2, ?3, ?4) "
               "ON CONFLICT(sweep_id, idx) DO UPDATE SET freq_hz = excluded.freq_hz, "
               "body = excluded.body",
               Access::write, "saving a sweep point");
  st.bind_all(sweep_id, point.index, point.freq_hz, point.body);
  if (step_write(st, {SQLITE_CONSTRAINT_FOREIGNKEY}) != SQLITE_DONE) {
    throw not_found("sweep", sweep_id);
  }
}

void Store::set_points_planned(std::int64_t sweep_id, int points_planned) {
  Lock lock(mutex_);
  if (change(db_, "UPDATE sweeps SET points_planned = ?2 WHERE id = ?1", "replanning a sweep",
             sweep_id, points_planned) == 0) {
    throw not_found("sweep", sweep_id);
  }
}

void Store::end_sweep(std::int64_t sweep_id, SweepStatus status, const nlohmann::json& end) {
  if (status == SweepStatus::running) {
    throw std::logic_error("Store::end_sweep: a sweep cannot end as running");
  }
  Lock lock(mutex_);
  if (change(db_, "UPDATE sweeps SET status = ?2, ended_at = ?3, end_reason = ?4 WHERE id = ?1",
             "ending a sweep", sweep_id, to_string(status), utc_now_iso(), end) == 0) {
    throw not_found("sweep", sweep_id);
  }
}

std::optional<SweepRecord> Store::sweep(std::int64_t id) const {
  Lock lock(mutex_);
  return by_id(db_, kSweeps, id, sweep_row, "reading a sweep");
}

std::vector<SweepPoint> Store::sweep_points(std::int64_t id) const {
  Lock lock(mutex_);
  Statement st(db_, "SELECT idx, freq_hz, body FROM sweep_points WHERE sweep_id = ?1 ORDER BY idx",
               Access::read, "reading sweep points");
  st.bind(1, id);
  std::vector<SweepPoint> points;
  while (st.step())
    points.push_back({st.int_at(0), st.double_at(1), st.json_at(2)});
  return points;
}

std::vector<SweepRecord> Store::sweeps(int limit, std::int64_t before_id) const {
  Lock lock(mutex_);
  return newest_first(db_, kSweeps, std::max(limit, 0), before_id, sweep_row, "listing sweeps");
}

bool Store::delete_sweep(std::int64_t id) {
  Lock lock(mutex_);
  return delete_by_id(db_, "sweeps", id, "deleting a sweep");
}

bool Store::file_sweep(std::int64_t id, std::optional<std::int64_t> part_id, PartRole role) {
  Lock lock(mutex_);
  return file_under_part(db_, "sweeps", id, part_id, role, "filing a sweep under a part");
}

std::vector<SweepRecord> Store::part_sweeps(std::int64_t part_id) const {
  Lock lock(mutex_);
  return of_part(db_, kSweeps, part_id, sweep_row, "listing a part's sweeps");
}

// Calibrations.

std::int64_t Store::add_calibration(const CalibrationRecord& c) {
  Lock lock(mutex_);
  return insert(db_,
                "INSERT INTO calibrations(taken_at, kind, device, sample_rate_hz, layout, "
                "rref_ohm, body) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)",
                "saving a calibration", utc_now_iso(), c.kind, c.device, c.sample_rate_hz, c.layout,
                c.rref_ohm, c.body);
}

std::optional<CalibrationRecord> Store::calibration(std::int64_t id) const {
  Lock lock(mutex_);
  return by_id(db_, kCalibrations, id, calibration_row, "reading a calibration");
}

std::vector<CalibrationRecord> Store::calibrations(int limit) const {
  Lock lock(mutex_);
  return newest_first(db_, kCalibrations, std::max(limit, 0), 0, calibration_row,
                      "listing calibrations");
}

std::optional<CalibrationRecord> Store::latest_calibration(const std::string& kind,
                                                           const std::string& device,
                                                           double sample_rate_hz,
                                                           const std::string& layout,
                                                           double rref_ohm) const {
  Lock lock(mutex_);
  Statement st(db_,
               std::string(kCalibrations) +
                   " WHERE kind = ?1 AND device = ?2 AND sample_rate_hz = ?3 AND layout = ?4 "
                   "AND rref_ohm = ?5 ORDER BY id DESC LIMIT 1",
               Access::read, "finding a calibration");
  st.bind_all(kind, device, sample_rate_hz, layout, rref_ohm);
  if (!st.step()) return std::nullopt;
  return calibration_row(st);
}

bool Store::delete_calibration(std::int64_t id) {
  Lock lock(mutex_);
  return delete_by_id(db_, "calibrations", id, "deleting a calibration");
}

// Repair jobs and their parts.

std::int64_t Store::add_job(const JobRecord& j) {
  Lock lock(mutex_);
  return insert(db_,
                "INSERT INTO jobs(created_at, make, model, serial, notes) "
                "VALUES (?1, ?2, ?3, ?4, ?5)",
                "saving a job", utc_now_iso(), j.make, j.model, j.serial, j.notes);
}

bool Store::update_job(const JobRecord& j) {
  Lock lock(mutex_);
  return change(db_, "UPDATE jobs SET make = ?2, model = ?3, serial = ?4, notes = ?5 WHERE id = ?1",
                "changing a job", j.id, j.make, j.model, j.serial, j.notes) > 0;
}

std::optional<JobRecord> Store::job(std::int64_t id) const {
  Lock lock(mutex_);
  return by_id(db_, kJobs, id, job_row, "reading a job");
}

std::vector<JobRecord> Store::jobs() const {
  Lock lock(mutex_);
  return newest_first(db_, kJobs, -1, 0, job_row, "listing jobs");
}

bool Store::delete_job(std::int64_t id) {
  Lock lock(mutex_);
  return delete_by_id(db_, "jobs", id, "deleting a job");
}

std::int64_t Store::add_part(const PartRecord& p) {
  Lock lock(mutex_);
  Statement st(db_,
               "INSERT INTO parts(job_id, designator, marking, notes, created_at) "
               "VALUES (?1, ?2, ?3, ?4, ?5)",
               Access::write, "saving a part");
  st.bind_all(p.job_id, p.designator, p.marking, p.notes, utc_now_iso());
  const int rc = step_write(st, {SQLITE_CONSTRAINT_FOREIGNKEY, SQLITE_CONSTRAINT_UNIQUE});
  if (rc == SQLITE_CONSTRAINT_FOREIGNKEY) throw not_found("job", p.job_id);
  if (rc == SQLITE_CONSTRAINT_UNIQUE) throw designator_taken(p.designator);
  return sqlite3_last_insert_rowid(db_);
}

bool Store::update_part(const PartRecord& p) {
  Lock lock(mutex_);
  Statement st(db_, "UPDATE parts SET designator = ?2, marking = ?3, notes = ?4 WHERE id = ?1",
               Access::write, "changing a part");
  st.bind_all(p.id, p.designator, p.marking, p.notes);
  if (step_write(st, {SQLITE_CONSTRAINT_UNIQUE}) != SQLITE_DONE) {
    throw designator_taken(p.designator);
  }
  return sqlite3_changes(db_) > 0;
}

std::optional<PartRecord> Store::part(std::int64_t id) const {
  Lock lock(mutex_);
  return by_id(db_, kParts, id, part_row, "reading a part");
}

std::vector<PartRecord> Store::parts(std::int64_t job_id) const {
  Lock lock(mutex_);
  Statement st(db_, std::string(kParts) + " WHERE job_id = ?1", Access::read, "listing parts");
  st.bind(1, job_id);
  auto rows = all_rows(st, part_row);
  std::sort(rows.begin(), rows.end(), [](const PartRecord& a, const PartRecord& b) {
    return designator_less(a.designator, b.designator);
  });
  return rows;
}

bool Store::delete_part(std::int64_t id) {
  Lock lock(mutex_);
  return delete_by_id(db_, "parts", id, "deleting a part");
}

// Verdicts.

std::int64_t Store::add_verdict(std::int64_t part_id, std::optional<std::int64_t> reading_id,
                                std::optional<std::int64_t> sweep_id, const nlohmann::json& body) {
  Lock lock(mutex_);
  Statement st(db_,
               "INSERT INTO part_verdicts(part_id, taken_at, reading_id, sweep_id, body) "
               "VALUES (?1, ?2, ?3, ?4, ?5)",
               Access::write, "saving a verdict");
  st.bind_all(part_id, utc_now_iso(), reading_id, sweep_id, body);
  if (step_write(st, {SQLITE_CONSTRAINT_FOREIGNKEY}) != SQLITE_DONE) {
    // SQLite does not say which key failed: look.
    if (!by_id(db_, kParts, part_id, part_row, "checking a verdict's part")) {
      throw not_found("part", part_id);
    }
    if (reading_id && !by_id(db_, kReadings, *reading_id, reading_row, "checking a verdict")) {
      throw not_found("reading", *reading_id);
    }
    throw not_found("sweep", sweep_id.value_or(0));
  }
  return sqlite3_last_insert_rowid(db_);
}

std::vector<VerdictRecord> Store::verdicts(std::int64_t part_id) const {
  Lock lock(mutex_);
  Statement st(db_, std::string(kVerdicts) + " WHERE part_id = ?1 ORDER BY id DESC", Access::read,
               "listing a part's verdicts");
  st.bind(1, part_id);
  return all_rows(st, verdict_row);
}

// Access tokens.

std::int64_t Store::add_token(const std::string& role, const std::string& hash_hex) {
  Lock lock(mutex_);
  return insert(db_, "INSERT INTO access_tokens(role, hash_hex, created_at) VALUES (?1, ?2, ?3)",
                "saving an access token", role, hash_hex, utc_now_iso());
}

std::vector<TokenRecord> Store::tokens() const {
  Lock lock(mutex_);
  Statement st(db_, "SELECT id, role, hash_hex, created_at FROM access_tokens ORDER BY id",
               Access::read, "listing access tokens");
  return all_rows(st, token_row);
}

void Store::delete_tokens() {
  Lock lock(mutex_);
  change(db_, "DELETE FROM access_tokens", "deleting the access tokens");
}

}  // namespace tb
