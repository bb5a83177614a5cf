#include "server/store_schema.hpp"

#include <array>
#include <string>

#include "server/error.hpp"

namespace tb::store_schema {

namespace {

// Never edit a migration that has shipped: files out there carry its result. Change the
// schema by appending one. Ids use AUTOINCREMENT so that an id, once handed out in the
// API, never names a different row after a delete.
constexpr std::array kMigrations{
    // 1: the first schema.
    R"sql(
CREATE TABLE jobs(
  id INTEGER PRIMARY KEY AUTOINCREMENT,
  created_at TEXT NOT NULL,
  make TEXT NOT NULL,
  model TEXT NOT NULL,
  serial TEXT NOT NULL,
  notes TEXT NOT NULL);

CREATE TABLE parts(
  id INTEGER PRIMARY KEY AUTOINCREMENT,
  job_id INTEGER NOT NULL REFERENCES jobs(id) ON DELETE CASCADE,
  designator TEXT NOT NULL,
  marking TEXT NOT NULL,
  notes TEXT NOT NULL,
  created_at TEXT NOT NULL,
  UNIQUE(job_id, designator));

CREATE TABLE readings(
  id INTEGER PRIMARY KEY AUTOINCREMENT,
  taken_at TEXT NOT NULL,
  origin TEXT NOT NULL,
  part_id INTEGER REFERENCES parts(id) ON DELETE SET NULL,
  body TEXT NOT NULL);
CREATE INDEX readings_by_part ON readings(part_id);

CREATE TABLE sweeps(
  id INTEGER PRIMARY KEY AUTOINCREMENT,
  started_at TEXT NOT NULL,
  ended_at TEXT,
  status TEXT NOT NULL
    CHECK(status IN ('running', 'complete', 'cancelled', 'interrupted', 'failed')),
  label TEXT NOT NULL,
  part_id INTEGER REFERENCES parts(id) ON DELETE SET NULL,
  params TEXT NOT NULL,
  end_reason TEXT,
  points_planned INTEGER NOT NULL);
CREATE INDEX sweeps_by_part ON sweeps(part_id);
CREATE INDEX sweeps_by_status ON sweeps(status);

CREATE TABLE sweep_points(
  sweep_id INTEGER NOT NULL REFERENCES sweeps(id) ON DELETE CASCADE,
  idx INTEGER NOT NULL,
  freq_hz REAL NOT NULL,
  body TEXT NOT NULL,
  UNIQUE(sweep_id, idx));

CREATE TABLE calibrations(
  id INTEGER PRIMARY KEY AUTOINCREMENT,
  taken_at TEXT NOT NULL,
  kind TEXT NOT NULL,
  device TEXT NOT NULL,
  sample_rate_hz REAL NOT NULL,
  layout TEXT NOT NULL,
  rref_ohm REAL NOT NULL,
  body TEXT NOT NULL);
CREATE INDEX calibrations_by_setup
  ON calibrations(kind, device, sample_rate_hz, layout, rref_ohm, id);

CREATE TABLE access_tokens(
  id INTEGER PRIMARY KEY AUTOINCREMENT,
  role TEXT NOT NULL CHECK(role IN ('control', 'view')),
  hash_hex TEXT NOT NULL UNIQUE,
  created_at TEXT NOT NULL);
)sql",
    // 2: readings and sweeps of a part say whether they are of the part as found
    // ("original") or of the part fitted in its place ("replacement"); verdicts on a part
    // are kept as a history. A verdict goes with its part; it outlives the reading or sweep
    // it was drawn from (the link is then cleared).
    R"sql(
ALTER TABLE readings ADD COLUMN part_role TEXT NOT NULL DEFAULT 'original'
  CHECK(part_role IN ('original', 'replacement'));
ALTER TABLE sweeps ADD COLUMN part_role TEXT NOT NULL DEFAULT 'original'
  CHECK(part_role IN ('original', 'replacement'));

CREATE TABLE part_verdicts(
  id INTEGER PRIMARY KEY AUTOINCREMENT,
  part_id INTEGER NOT NULL REFERENCES parts(id) ON DELETE CASCADE,
  taken_at TEXT NOT NULL,
  reading_id INTEGER REFERENCES readings(id) ON DELETE SET NULL,
  sweep_id INTEGER REFERENCES sweeps(id) ON DELETE SET NULL,
  body TEXT NOT NULL);
CREATE INDEX part_verdicts_by_part ON part_verdicts(part_id, id);
)sql",
};

}  // namespace

int latest_version() {
  return static_cast<int>(kMigrations.size());
}

int stored_version(sqlite3* db, sqlite::Access access) {
  sqlite::Statement tables(db,
                           "SELECT count(*), count(*) FILTER (WHERE name = 'schema_version') "
                           "FROM sqlite_schema WHERE name NOT LIKE 'sqlite\\_%' ESCAPE '\\'",
                           access, "reading the schema version");
  tables.step();
  const std::string file = sqlite3_db_filename(db, "main");
  if (tables.int_at(1) == 0) {
    if (tables.int_at(0) == 0) return 0;
    throw Error("store.not_tonebridge",
                file +
                    ": this is an SQLite database of another program, not a tonebridge "
                    "database",
                "give tonebridged another --db path; the file is left as it is");
  }
  sqlite::Statement version(db, "SELECT coalesce(max(version), 0) FROM schema_version", access,
                            "reading the schema version");
  version.step();
  const int found = version.int_at(0);
  if (found > latest_version()) {
    throw Error("store.too_new",
                file + ": the database has schema version " + std::to_string(found) +
                    ", this tonebridge knows versions up to " + std::to_string(latest_version()),
                "update tonebridge, or start with --db NEWPATH; the file is left as it is");
  }
  return found;
}

void migrate(sqlite3* db, int up_to) {
  if (up_to < 0 || up_to > latest_version()) up_to = latest_version();
  for (int to = stored_version(db, sqlite::Access::write) + 1; to <= up_to; ++to) {
    const std::string what = "bringing the schema to version " + std::to_string(to);
    sqlite::Transaction tx(db, what);
    sqlite::exec(db, "CREATE TABLE IF NOT EXISTS schema_version(version INTEGER NOT NULL)",
                 sqlite::Access::write, what);
    sqlite::exec(db, kMigrations[static_cast<std::size_t>(to - 1)], sqlite::Access::write, what);
    sqlite::exec(db, "DELETE FROM schema_version", sqlite::Access::write, what);
    sqlite::Statement(db, "INSERT INTO schema_version(version) VALUES (?1)", sqlite::Access::write,
                      what)
        .bind(1, to)
        .run();
    tx.commit();
  }
}

}  // namespace tb::store_schema
