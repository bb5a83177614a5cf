// The store's schema: numbered migrations, migration N bringing the file from version N-1
// to N, and the version a file carries (table schema_version). Internal to the store.
#pragma once

#include <sqlite3.h>

#include <filesystem>

#include "server/sqlite_handle.hpp"

namespace tb::store_schema {

/// The number of migrations: the version this program writes.
int latest_version();

/// The version the file carries, 0 for a file without tables. Throws tb::Error
/// store.not_tonebridge when the file holds tables but no schema_version (another
/// program's database), store.too_new when the version is above latest_version(), and
/// store.read_failed / store.write_failed (per `access`) when SQLite fails.
int stored_version(sqlite3* db, sqlite::Access access);

/// Applies the migrations after the file's version up to `up_to` (the latest when
/// negative or above it), each in its own transaction. Tests stop early to make a file
/// as an older tonebridge left it.
void migrate(sqlite3* db, int up_to = -1);

}  // namespace tb::store_schema
