// Thin RAII over the SQLite C API for the store: a connection that closes itself, a
// prepared statement that finalizes itself and binds by position, and a transaction that
// rolls back unless committed. SQLite's failures become tb::Error store.read_failed or
// store.write_failed, "<what the store was doing>: <sqlite3_errmsg>", with a hint chosen
// by the error code (disk full, read-only, locked, damaged).
//
// Every connection used here has extended result codes on (open_connection), so
// try_step() can tell a foreign-key failure from a UNIQUE one.
#pragma once

#include <sqlite3.h>

#include <cstdint>
#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <string_view>

#include <nlohmann/json.hpp>

namespace tb::sqlite {

enum class Access { read, write };

struct CloseConnection {
  void operator()(sqlite3* db) const { sqlite3_close_v2(db); }
};
using Connection = std::unique_ptr<sqlite3, CloseConnection>;

/// sqlite3_open_v2 with `flags`, extended result codes on and a 5 s busy timeout. On
/// failure returns the SQLite result code and sets `reason` (the OS's strerror when SQLite
/// saw one, else SQLite's message); `db` is then empty.
int open_connection(const std::filesystem::path& path, int flags, Connection& db,
                    std::string& reason);

/// What to do about a failed SQLite call with this (extended or primary) result code.
std::string hint_for(int rc, const std::filesystem::path& file);

/// Throws store.read_failed or store.write_failed for the last error on `db`.
[[noreturn]] void fail(sqlite3* db, int rc, Access access, const std::string& what);

/// Runs SQL without values to bind (pragmas, migrations, BEGIN/COMMIT); throws via fail().
void exec(sqlite3* db, const char* sql, Access access, const std::string& what);

class Statement {
 public:
  /// `what` names the operation in error messages: "saving a reading".
  Statement(sqlite3* db, std::string_view sql, Access access, std::string what);
  ~Statement() { sqlite3_finalize(stmt_); }
  Statement(const Statement&) = delete;
  Statement& operator=(const Statement&) = delete;

  // Parameters are numbered from 1, as in the SQL's ?1, ?2...
  Statement& bind(int index, std::int64_t value);
  Statement& bind(int index, int value) { return bind(index, std::int64_t{value}); }
  Statement& bind(int index, double value);
  Statement& bind(int index, std::string_view text);
  Statement& bind(int index, const char* text) { return bind(index, std::string_view(text)); }
  Statement& bind(int index, const std::string& text) {
    return bind(index, std::string_view(text));
  }
  Statement& bind(int index, std::optional<std::int64_t> value);
  /// JSON as compact text. Invalid UTF-8 in strings is replaced (U+FFFD) rather than
  /// refusing the write.
  Statement& bind(int index, const nlohmann::json& value);

  /// Binds ?1, ?2, ... to the values in order.
  template <class... Values>
  Statement& bind_all(const Values&... values) {
    int index = 0;
    (bind(++index, values), ...);
    return *this;
  }

  /// True while a row is ready; false when done. Throws via fail().
  bool step();
  /// Steps to the end and returns the rows changed (sqlite3_changes).
  int run();
  /// One step without throwing: SQLITE_ROW, SQLITE_DONE or the extended error code.
  int try_step() { return sqlite3_step(stmt_); }
  [[noreturn]] void fail(int rc) const { sqlite::fail(db_, rc, access_, what_); }

  // Columns are numbered from 0.
  bool is_null(int col) const { return sqlite3_column_type(stmt_, col) == SQLITE_NULL; }
  std::int64_t int64_at(int col) const { return sqlite3_column_int64(stmt_, col); }
  int int_at(int col) const { return sqlite3_column_int(stmt_, col); }
  double double_at(int col) const { return sqlite3_column_double(stmt_, col); }
  std::string text_at(int col) const;  ///< "" for NULL
  std::optional<std::int64_t> optional_int64_at(int col) const;
  /// Parses stored JSON text; NULL reads as null. Throws store.read_failed if it does not
  /// parse.
  nlohmann::json json_at(int col) const;

 private:
  sqlite3* db_;
  sqlite3_stmt* stmt_ = nullptr;
  Access access_;
  std::string what_;
};

/// BEGIN IMMEDIATE on construction; ROLLBACK on destruction unless commit() ran.
class Transaction {
 public:
  Transaction(sqlite3* db, std::string what);
  ~Transaction();
  Transaction(const Transaction&) = delete;
  Transaction& operator=(const Transaction&) = delete;
  void commit();

 private:
  sqlite3* db_;
  std::string what_;
  bool open_ = true;
};

}  // namespace tb::sqlite
