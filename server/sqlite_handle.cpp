#include "server/sqlite_handle.hpp"

#include <cstring>

#include "server/error.hpp"

namespace tb::sqlite {

int open_connection(const std::filesystem::path& path, int flags, Connection& db,
                    std::string& reason) {
  sqlite3* raw = nullptr;
  const int rc = sqlite3_open_v2(path.c_str(), &raw, flags, nullptr);
  db.reset(raw);
  if (rc != SQLITE_OK) {
    const int err = raw ? sqlite3_system_errno(raw) : 0;
    reason = err ? std::strerror(err) : raw ? sqlite3_errmsg(raw) : sqlite3_errstr(rc);
    db.reset();
    return rc;
  }
  sqlite3_extended_result_codes(raw, 1);
  sqlite3_busy_timeout(raw, 5000);
  return SQLITE_OK;
}

std::string hint_for(int rc, const std::filesystem::path& file) {
  switch (rc & 0xff) {
    case SQLITE_FULL:
      return "the disk holding " + file.string() +
             " is full: free some space, then try again; what was saved before is kept";
    case SQLITE_READONLY:
    case SQLITE_PERM:
    case SQLITE_CANTOPEN:
    case SQLITE_AUTH:
      return "check that the user running tonebridged may write " + file.string() +
             " and its folder";
    case SQLITE_BUSY:
    case SQLITE_LOCKED:
      return "another program holds the database locked: stop it, or give tonebridged its "
             "own --db path";
    case SQLITE_CORRUPT:
    case SQLITE_NOTADB:
      return "the file is kept as it is; restore a backup, or start with --db NEWPATH; "
             "`sqlite3 " +
             file.string() + " .recover` may rescue readings";
    case SQLITE_IOERR:
      return "the disk reported an error: check it (dmesg) and its free space";
    default:
      return "try again; if it keeps failing, restart tonebridged and report this message";
  }
}

void fail(sqlite3* db, int rc, Access access, const std::string& what) {
  const char* file = sqlite3_db_filename(db, "main");
  throw Error(access == Access::write ? "store.write_failed" : "store.read_failed",
              what + ": " + sqlite3_errmsg(db), hint_for(rc, file ? file : ""));
}

void exec(sqlite3* db, const char* sql, Access access, const std::string& what) {
  const int rc = sqlite3_exec(db, sql, nullptr, nullptr, nullptr);
  if (rc != SQLITE_OK) fail(db, rc, access, what);
}

Statement::Statement(sqlite3* db, std::string_view sql, Access access, std::string what)
    : db_(db), access_(access), what_(std::move(what)) {
  const int rc = sqlite3_prepare_v2(db_, sql.data(), static_cast<int>(sql.size()), &stmt_, nullptr);
  if (rc != SQLITE_OK) fail(rc);
}

namespace {

void check_bind(const Statement& st, int rc) {
  if (rc != SQLITE_OK) st.fail(rc);
}

}  // namespace

Statement& Statement::bind(int index, std::int64_t value) {
  check_bind(*this, sqlite3_bind_int64(stmt_, index, value));
  return *this;
}

Statement& Statement::bind(int index, double value) {
  check_bind(*this, sqlite3_bind_double(stmt_, index, value));
  return *this;
}

Statement& Statement::bind(int index, std::string_view text) {
  check_bind(*this, sqlite3_bind_text64(stmt_, index, text.data(), text.size(), SQLITE_TRANSIENT,
                                        SQLITE_UTF8));
  return *this;
}

Statement& Statement::bind(int index, std::optional<std::int64_t> value) {
  if (value) return bind(index, *value);
  check_bind(*this, sqlite3_bind_null(stmt_, index));
  return *this;
}

Statement& Statement::bind(int index, const nlohmann::json& value) {
  return bind(index, value.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace));
}

bool Statement::step() {
  const int rc = sqlite3_step(stmt_);
  if (rc == SQLITE_ROW) return true;
  if (rc == SQLITE_DONE) return false;
  fail(rc);
}

int Statement::run() {
  while (step()) {
  }
  return sqlite3_changes(db_);
}

std::string Statement::text_at(int col) const {
  const auto* text = reinterpret_cast<const char*>(sqlite3_column_text(stmt_, col));
  if (!text) return {};
  return std::string(text, static_cast<std::size_t>(sqlite3_column_bytes(stmt_, col)));
}

std::optional<std::int64_t> Statement::optional_int64_at(int col) const {
  if (is_null(col)) return std::nullopt;
  return int64_at(col);
}

nlohmann::json Statement::json_at(int col) const {
  if (is_null(col)) return nullptr;
  auto parsed = nlohmann::json::parse(text_at(col), nullptr, false);
  if (parsed.is_discarded()) {
    const char* file = sqlite3_db_filename(db_, "main");
    throw Error("store.read_failed", what_ + ": a stored JSON body does not parse",
                hint_for(SQLITE_CORRUPT, file ? file : ""));
  }
  return parsed;
}

Transaction::Transaction(sqlite3* db, std::string what) : db_(db), what_(std::move(what)) {
  exec(db_, "BEGIN IMMEDIATE", Access::write, what_);
}

Transaction::~Transaction() {
  if (open_) sqlite3_exec(db_, "ROLLBACK", nullptr, nullptr, nullptr);
}

void Transaction::commit() {
  exec(db_, "COMMIT", Access::write, what_);
  open_ = false;
}

}  // namespace tb::sqlite
