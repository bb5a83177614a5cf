// What the store does with its file before trusting it: make the folder, check that an
// existing file is an intact tonebridge database without writing to it, then open it for
// writing with the store's pragmas. Internal to the store; errors are the tb::Error
// store.* ids documented on tb::Store's constructor.
#pragma once

#include <filesystem>

#include "server/sqlite_handle.hpp"

namespace tb::store_file {

/// Creates the file's folder if missing and checks that the folder (and the file, if it
/// exists) may be written. Throws store.unwritable.
void prepare_folder(const std::filesystem::path& db);

/// For an existing, non-empty file: the SQLite header (store.not_sqlite), its size against
/// the page count in the header and SQLite's quick_check (store.damaged), the schema
/// version (store.not_tonebridge, store.too_new). Opens the file read-only; the file's
/// bytes are never changed. A missing or empty file passes.
void check_existing(const std::filesystem::path& db);

/// Opens (creating) the file read-write in WAL mode with synchronous=FULL, foreign keys on
/// and a 5 s busy timeout. Throws store.unwritable or store.write_failed.
sqlite::Connection open_for_writing(const std::filesystem::path& db);

}  // namespace tb::store_file
