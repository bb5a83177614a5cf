#include "server/store_file.hpp"

#include <unistd.h>

#include <array>
#include <cerrno>
#include <cstdint>
#include <cstring>
#include <fstream>
#include <string>

#include "server/error.hpp"
#include "server/store_schema.hpp"

namespace tb::store_file {

namespace fs = std::filesystem;

namespace {

Error unwritable(const fs::path& where, const std::string& problem, const std::string& reason) {
  return Error("store.unwritable", where.string() + ": " + problem + ": " + reason,
               "give tonebridged a --db path in a folder it may write, or fix the permissions");
}

Error damaged(const fs::path& db, const std::string& problem) {
  return Error("store.damaged", db.string() + ": the database is damaged (" + problem + ")",
               sqlite::hint_for(SQLITE_CORRUPT, db));
}

std::uint32_t big_endian(const std::array<unsigned char, 100>& head, std::size_t at,
                         std::size_t bytes) {
  std::uint32_t value = 0;
  for (std::size_t i = 0; i < bytes; ++i)
    value = (value << 8) | head[at + i];
  return value;
}

// The file format's first 100 bytes (https://www.sqlite.org/fileformat.html, section 1.3):
// magic string, page size at offset 16, and the page count at 28, which is valid when the
// change counter at 24 equals the "version-valid-for" number at 92.
// With a non-empty -wal beside it, the header may legitimately promise more than the file
// holds: a checkpoint that ran out of disk space writes page 1 and fails on later pages,
// which the WAL still holds. SQLite's own check (page count against file plus WAL) and
// quick_check judge that case.
void check_header(const fs::path& db, std::uintmax_t size, bool hot_wal) {
  std::array<unsigned char, 100> head{};
  std::ifstream in(db, std::ios::binary);
  in.read(reinterpret_cast<char*>(head.data()), static_cast<std::streamsize>(head.size()));
  if (!in && !in.eof()) throw unwritable(db, "cannot be read", std::strerror(errno));

  static constexpr char kMagic[] = "SQLite format 3";  // and its NUL: 16 bytes
  const std::size_t compared = size < sizeof kMagic ? size : sizeof kMagic;
  if (std::memcmp(head.data(), kMagic, compared) != 0) {
    throw Error("store.not_sqlite",
                db.string() + ": this file is not a tonebridge database (not SQLite)",
                "give tonebridged another --db path, or move the file away; it is left as it "
                "is");
  }
  if (size < head.size()) {
    throw damaged(db, "only " + std::to_string(size) + " bytes, shorter than an SQLite header");
  }
  std::uint32_t page_size = big_endian(head, 16, 2);
  if (page_size == 1) page_size = 65536;
  if (page_size < 512 || page_size > 65536 || (page_size & (page_size - 1)) != 0) {
    throw damaged(db, "the header gives an impossible page size, " + std::to_string(page_size));
  }
  const std::uint32_t pages = big_endian(head, 28, 4);
  const bool pages_valid = pages != 0 && big_endian(head, 24, 4) == big_endian(head, 92, 4);
  const std::uintmax_t expected = std::uintmax_t{pages} * page_size;
  if (pages_valid && !hot_wal && expected > size) {
    throw damaged(db, "truncated: the header promises " + std::to_string(expected) +
                          " bytes, the file has " + std::to_string(size));
  }
}

bool is_damage(int rc) {
  return (rc & 0xff) == SQLITE_CORRUPT || (rc & 0xff) == SQLITE_NOTADB;
}

void check_connected(const fs::path& db) {
  sqlite::Connection conn;
  std::string reason;
  const int rc = sqlite::open_connection(db, SQLITE_OPEN_READONLY, conn, reason);
  if (is_damage(rc)) throw damaged(db, reason);
  if (rc != SQLITE_OK) throw unwritable(db, "cannot be opened", reason);
  try {
    sqlite::Statement check(conn.get(), "PRAGMA quick_check(3)", sqlite::Access::read,
                            "checking the file");
    std::string problems;
    while (check.step()) {
      const std::string line = check.text_at(0);
      if (line != "ok") problems += (problems.empty() ? "" : "; ") + line;
    }
    if (!problems.empty()) throw damaged(db, "quick_check: " + problems);
    store_schema::stored_version(conn.get(), sqlite::Access::read);
  } catch (const Error& e) {
    if (e.id() == "store.read_failed" && is_damage(sqlite3_errcode(conn.get()))) {
      throw damaged(db, e.what());
    }
    throw;
  }
}

// Even read-only, SQLite makes the -wal and -shm files of a WAL-mode database. A refused
// file is left as the user had it, so the ones this check made go again.
void check_with_sqlite(const fs::path& db) {
  const fs::path wal = db.string() + "-wal", shm = db.string() + "-shm";
  const bool had_wal = fs::exists(wal), had_shm = fs::exists(shm);
  try {
    check_connected(db);
  } catch (const Error&) {
    std::error_code ec;
    if (!had_wal && fs::file_size(wal, ec) == 0 && !ec) fs::remove(wal, ec);
    if (!had_shm) fs::remove(shm, ec);
    throw;
  }
}

}  // namespace

void prepare_folder(const fs::path& db) {
  const fs::path folder = db.has_parent_path() ? db.parent_path() : fs::path(".");
  std::error_code ec;
  fs::create_directories(folder, ec);
  if (ec) throw unwritable(folder, "cannot create the folder", ec.message());
  // WAL mode keeps two more files (-wal, -shm) beside the database.
  if (::access(folder.c_str(), W_OK | X_OK) != 0) {
    throw unwritable(folder, "cannot write in the folder", std::strerror(errno));
  }
  if (fs::is_directory(db, ec)) throw unwritable(db, "cannot be used", "it is a folder");
  if (fs::exists(db, ec) && ::access(db.c_str(), R_OK | W_OK) != 0) {
    throw unwritable(db, "cannot be written", std::strerror(errno));
  }
}

void check_existing(const fs::path& db) {
  std::error_code ec;
  const std::uintmax_t size = fs::file_size(db, ec);
  if (ec == std::errc::no_such_file_or_directory) return;
  if (ec) throw unwritable(db, "cannot be read", ec.message());
  if (size == 0) return;
  const std::uintmax_t wal_size = fs::file_size(db.string() + "-wal", ec);
  check_header(db, size, !ec && wal_size > 0);
  check_with_sqlite(db);
}

sqlite::Connection open_for_writing(const fs::path& db) {
  sqlite::Connection conn;
  std::string reason;
  if (sqlite::open_connection(db, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE, conn, reason) !=
      SQLITE_OK) {
    throw unwritable(db, "cannot be opened for writing", reason);
  }
  if (sqlite3_db_readonly(conn.get(), "main") == 1) {
    throw unwritable(db, "cannot be opened for writing", std::strerror(EACCES));
  }
  std::string mode;
  {
    sqlite::Statement wal(conn.get(), "PRAGMA journal_mode=WAL", sqlite::Access::write,
                          "switching to WAL mode");
    if (wal.step()) mode = wal.text_at(0);
  }
  if (mode != "wal") {
    throw Error(
        "store.write_failed",
        db.string() + ": SQLite could not put the file in WAL mode (it stays in " + mode + " mode)",
        "keep the database on a local disk; network file systems cannot share WAL "
        "memory");
  }
  // With WAL, synchronous=NORMAL already keeps every commit through a kill -9 (the commit
  // is in the OS's cache when the call returns); only a power cut could lose the last
  // ones. FULL also syncs the WAL at each commit, so a saved point survives a power cut
  // too, for one fsync per write, which a few writes a second easily afford.
  sqlite::exec(conn.get(), "PRAGMA synchronous=FULL; PRAGMA foreign_keys=ON", sqlite::Access::write,
               "setting up the connection");
  return conn;
}

}  // namespace tb::store_file
