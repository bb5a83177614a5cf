// The SQLite store on real files: round trips, the refusals that protect a user's file,
// durability through kill -9 and concurrent use.
#include "server/store.hpp"

#include <signal.h>
#include <sqlite3.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <catch2/catch.hpp>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <iterator>
#include <set>
#include <string>
#include <thread>
#include <vector>

#include "server/error.hpp"
#include "server/sqlite_handle.hpp"
#include "server/store_schema.hpp"
#include "tests/support/signals.hpp"

namespace fs = std::filesystem;
using nlohmann::json;
using tb::Store;
using namespace std::string_literals;

namespace {

struct TempDir {
  fs::path path = tb::test::make_temp_dir("store");
  ~TempDir() { fs::remove_all(path); }
  fs::path db() const { return path / "tonebridge.db"; }
};

std::string file_bytes(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

void write_bytes(const fs::path& p, const std::string& bytes) {
  std::ofstream(p, std::ios::binary) << bytes;
}

// The tb::Error that opening `db` throws; id "opened" when it opens.
tb::Error open_error(const fs::path& db) {
  try {
    Store store(db);
  } catch (const tb::Error& e) {
    return e;
  }
  return tb::Error("opened", "", "");
}

std::string error_id(const std::function<void()>& call) {
  try {
    call();
  } catch (const tb::Error& e) {
    return e.id();
  }
  return "no error";
}

// Runs SQL on the file through a connection of its own, as another program would.
void run_sql(const fs::path& db, const std::string& sql) {
  sqlite3* conn = nullptr;
  REQUIRE(sqlite3_open(db.c_str(), &conn) == SQLITE_OK);
  char* err = nullptr;
  const int rc = sqlite3_exec(conn, sql.c_str(), nullptr, nullptr, &err);
  const std::string message = err ? err : "";
  sqlite3_free(err);
  sqlite3_close(conn);
  INFO(message);
  REQUIRE(rc == SQLITE_OK);
}

std::string query_text(const fs::path& db, const std::string& sql) {
  sqlite3* conn = nullptr;
  REQUIRE(sqlite3_open_v2(db.c_str(), &conn, SQLITE_OPEN_READONLY, nullptr) == SQLITE_OK);
  sqlite3_stmt* st = nullptr;
  REQUIRE(sqlite3_prepare_v2(conn, sql.c_str(), -1, &st, nullptr) == SQLITE_OK);
  std::string out;
  if (sqlite3_step(st) == SQLITE_ROW) {
    out = reinterpret_cast<const char*>(sqlite3_column_text(st, 0));
  }
  sqlite3_finalize(st);
  sqlite3_close(conn);
  return out;
}

// A closed store file spanning many pages (bodies of 3 kB each).
void make_filled_store(const fs::path& db) {
  Store store(db);
  for (int i = 0; i < 40; ++i)
    store.add_reading("single", {{"n", i}, {"pad", std::string(3000, 'x')}});
}

// A refused file keeps its bytes, and nothing was left beside it.
void check_refused_untouched(const fs::path& db, const std::string& id) {
  const std::string before = file_bytes(db);
  const auto files_before = std::distance(fs::directory_iterator(db.parent_path()), {});
  const tb::Error e = open_error(db);
  INFO(e.id() << ": " << e.what());
  CHECK(e.id() == id);
  CHECK(std::string(e.what()).find(db.string()) != std::string::npos);
  CHECK_FALSE(e.hint().empty());
  CHECK(file_bytes(db) == before);
  CHECK(std::distance(fs::directory_iterator(db.parent_path()), {}) == files_before);
}

// In a child process: runs `work`, which calls its argument when done, with the store
// still open; the child then waits there to be killed with SIGKILL. True when the work
// was done and the child died of the signal.
bool work_then_kill(const std::function<void(const std::function<void()>& done)>& work) {
  int fds[2];
  if (pipe(fds) != 0) return false;
  const pid_t child = fork();
  if (child == 0) {
    close(fds[0]);
    try {
      work([&] {
        if (write(fds[1], "ready", 5) != 5) _exit(2);
        for (;;)
          pause();
      });
    } catch (...) {
      _exit(1);
    }
    _exit(3);
  }
  close(fds[1]);
  char buf[8] = {};
  const auto got = child > 0 ? read(fds[0], buf, 5) : 0;
  close(fds[0]);
  if (child < 0) return false;
  kill(child, SIGKILL);
  int status = 0;
  waitpid(child, &status, 0);
  return got == 5 && WIFSIGNALED(status) && WTERMSIG(status) == SIGKILL;
}

// In a child process limited to `file_limit` bytes a file (RLIMIT_FSIZE, as a full disk):
// saves 3 small readings, then large ones until a write fails. Exits 0 when that failure
// was store.write_failed. The Store then closes, so its checkpoint may fail half-way too.
int fill_until_write_fails(const fs::path& db, rlim_t file_limit) {
  const pid_t child = fork();
  if (child != 0) {
    int status = 0;
    waitpid(child, &status, 0);
    return WIFEXITED(status) ? WEXITSTATUS(status) : 100;
  }
  try {
    Store store(db);
    for (int i = 0; i < 3; ++i)
      store.add_reading("single", {{"n", i}});
    signal(SIGXFSZ, SIG_IGN);
    const rlimit limit{file_limit, file_limit};
    setrlimit(RLIMIT_FSIZE, &limit);
    for (int i = 0; i < 1000; ++i)
      store.add_reading("single", {{"pad", std::string(16384, 'x')}});
  } catch (const tb::Error& e) {
    _exit(e.id() == "store.write_failed" ? 0 : 1);
  } catch (...) {
    _exit(3);
  }
  _exit(2);
}

}  // namespace

TEST_CASE("store: a new file gets its folder and keeps its data when reopened", "[store]") {
  TempDir dir;
  const fs::path db = dir.path / "nested" / "deeper" / "tonebridge.db";
  std::int64_t id = 0;
  {
    Store store(db);
    CHECK(store.path() == db);
    CHECK(store.schema_version() == Store::latest_schema_version());
    CHECK(Store::latest_schema_version() >= 1);
    CHECK(store.interrupted_at_open() == 0);
    id = store.add_reading("single", {{"r_ohm", 4.7}});
  }
  Store again(db);
  CHECK(again.schema_version() == Store::latest_schema_version());
  REQUIRE(again.reading(id));
  CHECK(again.reading(id)->body == json{{"r_ohm", 4.7}});
}

TEST_CASE("store: the file is in WAL mode", "[store]") {
  TempDir dir;
  Store store(dir.db());
  store.add_reading("single", json::object());
  CHECK(query_text(dir.db(), "PRAGMA journal_mode") == "wal");
  CHECK(query_text(dir.db(), "SELECT max(version) FROM schema_version") ==
        std::to_string(Store::latest_schema_version()));
}

TEST_CASE("store: utc_now_iso gives UTC with milliseconds", "[store]") {
  const std::string t = tb::utc_now_iso();
  REQUIRE(t.size() == 24);
  CHECK(t[4] == '-');
  CHECK(t[10] == 'T');
  CHECK(t[19] == '.');
  CHECK(t.back() == 'Z');
}

TEST_CASE("store: readings round trip and page back newest first", "[store]") {
  TempDir dir;
  Store store(dir.db());
  CHECK_FALSE(store.latest_reading());
  std::vector<std::int64_t> ids;
  for (int i = 0; i < 25; ++i) {
    ids.push_back(store.add_reading(i % 2 ? "continuous" : "single", {{"n", i}, {"text", "4µ7"}}));
  }
  const auto first = store.reading(ids[0]);
  REQUIRE(first);
  CHECK(first->origin == "single");
  CHECK(first->body == json{{"n", 0}, {"text", "4µ7"}});
  CHECK_FALSE(first->part_id);
  CHECK(first->taken_at.size() == 24);
  CHECK(store.latest_reading()->id == ids.back());

  const auto page1 = store.readings(10);
  REQUIRE(page1.size() == 10);
  CHECK(page1.front().id == ids[24]);
  CHECK(page1.back().id == ids[15]);
  const auto page3 = store.readings(10, store.readings(10, page1.back().id).back().id);
  REQUIRE(page3.size() == 5);
  CHECK(page3.back().id == ids[0]);
  CHECK(store.readings(0).empty());

  CHECK(store.delete_reading(ids[3]));
  CHECK_FALSE(store.delete_reading(ids[3]));
  CHECK_FALSE(store.reading(ids[3]));
  CHECK(store.readings(100).size() == 24);
  CHECK(error_id([&] { store.add_reading("single", json::object(), 999); }) == "store.not_found");
}

TEST_CASE("store: a sweep saves its points, replaces a repeated index and ends", "[store]") {
  TempDir dir;
  Store store(dir.db());
  const json params{{"start_hz", 20}, {"stop_hz", 20000}, {"points", 5}};
  const auto id = store.begin_sweep(params, 5, "C12 after reflow");
  for (int i = 0; i < 5; ++i)
    store.add_sweep_point(id, {i, 20.0 * (i + 1), {{"i", i}}});
  store.add_sweep_point(id, {2, 61.0, {{"i", "again"}}});

  auto s = store.sweep(id);
  REQUIRE(s);
  CHECK(s->status == tb::SweepStatus::running);
  CHECK(s->ended_at.empty());
  CHECK(s->label == "C12 after reflow");
  CHECK(s->params == params);
  CHECK(s->points_saved == 5);
  CHECK(s->points_planned == 5);
  const auto points = store.sweep_points(id);
  REQUIRE(points.size() == 5);
  CHECK(points[2].freq_hz == 61.0);
  CHECK(points[2].body == json{{"i", "again"}});
  CHECK(points[4].index == 4);

  store.end_sweep(id, tb::SweepStatus::complete);
  s = store.sweep(id);
  CHECK(s->status == tb::SweepStatus::complete);
  CHECK_FALSE(s->ended_at.empty());
  CHECK(s->end.is_null());

  const auto other = store.begin_sweep(params, 5);
  const json why{{"id", "device.lost"}, {"message", "the card went away"}};
  store.end_sweep(other, tb::SweepStatus::failed, why);
  CHECK(store.sweep(other)->end == why);
  CHECK(store.sweeps(10).front().id == other);
  CHECK(store.sweeps(10, other).front().id == id);

  CHECK(error_id([&] { store.end_sweep(999, tb::SweepStatus::cancelled); }) == "store.not_found");
  CHECK(error_id([&] { store.add_sweep_point(999, {0, 1, {}}); }) == "store.not_found");
  CHECK(tb::to_string(tb::SweepStatus::interrupted) == "interrupted");
}

TEST_CASE("store: a sweep left running is interrupted with all its points when reopened",
          "[store]") {
  TempDir dir;
  std::int64_t id = 0;
  {
    Store store(dir.db());
    id = store.begin_sweep(json::object(), 10);
    for (int i = 0; i < 3; ++i)
      store.add_sweep_point(id, {i, 100.0 * i, json::object()});
  }
  {
    Store store(dir.db());
    CHECK(store.interrupted_at_open() == 1);
    const auto s = store.sweep(id);
    REQUIRE(s);
    CHECK(s->status == tb::SweepStatus::interrupted);
    CHECK(s->end["id"] == "sweep.interrupted");
    CHECK_FALSE(s->ended_at.empty());
    CHECK(s->points_saved == 3);
  }
  CHECK(Store(dir.db()).interrupted_at_open() == 0);
}

TEST_CASE("store: deleting a sweep deletes its points", "[store]") {
  TempDir dir;
  Store store(dir.db());
  const auto id = store.begin_sweep(json::object(), 2);
  store.add_sweep_point(id, {0, 1000, json::object()});
  store.add_sweep_point(id, {1, 2000, json::object()});
  CHECK(store.delete_sweep(id));
  CHECK_FALSE(store.delete_sweep(id));
  CHECK_FALSE(store.sweep(id));
  CHECK(store.sweep_points(id).empty());
  CHECK(query_text(dir.db(), "SELECT count(*) FROM sweep_points") == "0");
}

TEST_CASE("store: jobs and parts: designators unique per job, unknown jobs refused", "[store]") {
  TempDir dir;
  Store store(dir.db());
  tb::JobRecord j;
  j.make = "Marantz";
  j.model = "2230";
  const auto job = store.add_job(j);
  const auto other_job = store.add_job({});
  CHECK(store.jobs().front().id == other_job);
  j.id = job;
  j.notes = "hum in left channel";
  CHECK(store.update_job(j));
  CHECK(store.job(job)->notes == "hum in left channel");
  CHECK_FALSE(store.job(job)->created_at.empty());
  j.id = 999;
  CHECK_FALSE(store.update_job(j));

  for (const char* d : {"C12", "L3", "C2", "c1"})
    store.add_part({0, job, d, "4n7 J 100V", "", ""});
  std::vector<std::string> order;
  for (const auto& p : store.parts(job))
    order.push_back(p.designator);
  CHECK(order == std::vector<std::string>{"c1", "C2", "C12", "L3"});

  CHECK(error_id([&] { store.add_part({0, job, "C12", "", "", ""}); }) == "store.conflict");
  CHECK(error_id([&] { store.add_part({0, 999, "C1", "", "", ""}); }) == "store.not_found");
  const auto c12_elsewhere = store.add_part({0, other_job, "C12", "", "", ""});
  auto p = *store.part(c12_elsewhere);
  p.marking = "10u 50V";
  CHECK(store.update_part(p));
  CHECK(store.part(c12_elsewhere)->marking == "10u 50V");
  auto moved = store.parts(job).front();
  moved.designator = "C12";
  CHECK(error_id([&] { store.update_part(moved); }) == "store.conflict");
  p.id = 999;
  CHECK_FALSE(store.update_part(p));
  CHECK(store.delete_part(c12_elsewhere));
  CHECK_FALSE(store.part(c12_elsewhere));
}

TEST_CASE("store: deleting a job deletes its parts and keeps their readings and sweeps",
          "[store]") {
  TempDir dir;
  Store store(dir.db());
  const auto job = store.add_job({});
  const auto part = store.add_part({0, job, "C7", "", "", ""});
  const auto reading = store.add_reading("single", json::object(), part);
  const auto sweep = store.begin_sweep(json::object(), 1, "", part);
  CHECK(store.reading(reading)->part_id == part);
  CHECK(store.sweep(sweep)->part_id == part);
  CHECK(store.delete_job(job));
  CHECK_FALSE(store.job(job));
  CHECK_FALSE(store.part(part));
  REQUIRE(store.reading(reading));
  CHECK_FALSE(store.reading(reading)->part_id);
  REQUIRE(store.sweep(sweep));
  CHECK_FALSE(store.sweep(sweep)->part_id);
}

TEST_CASE("store: access tokens are listed and replaced all at once", "[store]") {
  TempDir dir;
  Store store(dir.db());
  store.add_token("control", std::string(64, 'a'));
  store.add_token("view", std::string(64, 'b'));
  const auto tokens = store.tokens();
  REQUIRE(tokens.size() == 2);
  CHECK(tokens[0].role == "control");
  CHECK(tokens[1].hash_hex == std::string(64, 'b'));
  CHECK_FALSE(tokens[1].created_at.empty());
  store.delete_tokens();
  CHECK(store.tokens().empty());
}

TEST_CASE("store: latest_calibration matches kind, device, rate, layout and Rref", "[store]") {
  TempDir dir;
  Store store(dir.db());
  auto cal = [](const std::string& kind, double rate, double rref, int tag) {
    return tb::CalibrationRecord{0, "", kind, "hw:1", rate, "part-low", rref, {{"tag", tag}}};
  };
  store.add_calibration(cal("open", 48000, 1000, 1));
  const auto newest_open = store.add_calibration(cal("open", 48000, 1000, 2));
  store.add_calibration(cal("open", 96000, 1000, 3));
  store.add_calibration(cal("open", 48000, 100, 4));
  store.add_calibration(cal("short", 48000, 1000, 5));

  const auto found = store.latest_calibration("open", "hw:1", 48000, "part-low", 1000);
  REQUIRE(found);
  CHECK(found->id == newest_open);
  CHECK(found->body == json{{"tag", 2}});
  CHECK(found->sample_rate_hz == 48000);
  CHECK_FALSE(found->taken_at.empty());
  CHECK(store.latest_calibration("open", "hw:1", 48000, "part-high", 1000) == std::nullopt);
  CHECK(store.latest_calibration("open", "hw:2", 48000, "part-low", 1000) == std::nullopt);
  CHECK(store.latest_calibration("load", "hw:1", 48000, "part-low", 1000) == std::nullopt);
  CHECK(store.calibrations(2).size() == 2);
  CHECK(store.calibration(newest_open)->kind == "open");
  CHECK(store.delete_calibration(newest_open));
  CHECK(store.latest_calibration("open", "hw:1", 48000, "part-low", 1000)->body["tag"] == 1);
}

TEST_CASE("store: a file that is not SQLite is refused and left as it was", "[store]") {
  TempDir dir;
  SECTION("text") {
    write_bytes(dir.db(), "rref = 1k\nlayout = part-low\n");
  }
  SECTION("a WAV recording") {
    std::string wav = "RIFF\x24\x10\0\0WAVEfmt "s;
    for (int i = 0; i < 4000; ++i)
      wav.push_back(static_cast<char>((i * 37) & 0xff));
    write_bytes(dir.db(), wav);
  }
  SECTION("a few bytes") {
    write_bytes(dir.db(), "hi");
  }
  check_refused_untouched(dir.db(), "store.not_sqlite");
}

TEST_CASE("store: a truncated database is refused as damaged and left as it was", "[store]") {
  TempDir dir;
  make_filled_store(dir.db());
  REQUIRE_FALSE(fs::exists(dir.db().string() + "-wal"));
  const auto size = fs::file_size(dir.db());
  REQUIRE(size >= 20 * 4096);
  fs::resize_file(dir.db(), size / 2);
  check_refused_untouched(dir.db(), "store.damaged");
}

TEST_CASE("store: a database with a scribbled page fails quick_check and is left as it was",
          "[store]") {
  TempDir dir;
  make_filled_store(dir.db());
  std::string bytes = file_bytes(dir.db());
  for (std::size_t i = 4096; i < 5 * 4096; ++i)
    bytes[i] = static_cast<char>(0xA5 ^ (i & 0xff));
  write_bytes(dir.db(), bytes);
  check_refused_untouched(dir.db(), "store.damaged");
}

TEST_CASE("store: a file shorter than an SQLite header is refused as damaged", "[store]") {
  TempDir dir;
  write_bytes(dir.db(), std::string("SQLite format 3\0\x10\0", 18));
  check_refused_untouched(dir.db(), "store.damaged");
}

TEST_CASE("store: a database from a newer tonebridge is refused and left as it was", "[store]") {
  TempDir dir;
  { Store store(dir.db()); }
  run_sql(dir.db(), "UPDATE schema_version SET version = 999");
  check_refused_untouched(dir.db(), "store.too_new");
}

TEST_CASE("store: another program's SQLite database is refused and left as it was", "[store]") {
  TempDir dir;
  run_sql(dir.db(), "CREATE TABLE photos(name TEXT); INSERT INTO photos VALUES ('amp.jpg')");
  check_refused_untouched(dir.db(), "store.not_tonebridge");
}

TEST_CASE("store: a path under a regular file is unwritable", "[store]") {
  TempDir dir;
  write_bytes(dir.path / "file.txt", "not a folder");
  const tb::Error e = open_error(dir.path / "file.txt" / "tonebridge.db");
  CHECK(e.id() == "store.unwritable");
  CHECK(std::string(e.what()).find("file.txt") != std::string::npos);
  CHECK(open_error(dir.path).id() == "store.unwritable");  // a folder
}

TEST_CASE("store: default_path follows XDG_DATA_HOME when it is absolute", "[store]") {
  const char* old = std::getenv("XDG_DATA_HOME");
  const std::string saved = old ? old : "";
  setenv("XDG_DATA_HOME", "/srv/data", 1);
  CHECK(Store::default_path() == fs::path("/srv/data/tonebridge/tonebridge.db"));
  setenv("XDG_DATA_HOME", "relative/data", 1);
  const auto fallback = Store::default_path();
  CHECK(fallback.is_absolute());
  CHECK(fallback.string().ends_with(".local/share/tonebridge/tonebridge.db"));
  if (old) {
    setenv("XDG_DATA_HOME", saved.c_str(), 1);
  } else {
    unsetenv("XDG_DATA_HOME");
  }
}

TEST_CASE("store: saved sweep points survive kill -9 of the process", "[store]") {
  TempDir dir;
  const bool killed = work_then_kill([&](const std::function<void()>& done) {
    Store store(dir.db());
    const auto id = store.begin_sweep({{"points", 100}}, 100, "killed");
    for (int i = 0; i < 50; ++i)
      store.add_sweep_point(id, {i, 20.0 + i, {{"i", i}}});
    done();
  });
  REQUIRE(killed);
  CHECK(fs::exists(dir.db().string() + "-wal"));  // it did not close cleanly

  Store store(dir.db());
  CHECK(store.interrupted_at_open() == 1);
  const auto sweeps = store.sweeps(10);
  REQUIRE(sweeps.size() == 1);
  CHECK(sweeps[0].status == tb::SweepStatus::interrupted);
  CHECK(sweeps[0].points_saved == 50);
  CHECK(store.sweep_points(sweeps[0].id).size() == 50);
}

TEST_CASE("store: a truncated database is damaged even with a WAL beside it", "[store]") {
  TempDir dir;
  make_filled_store(dir.db());
  REQUIRE(work_then_kill([&](const std::function<void()>& done) {
    Store store(dir.db());
    store.add_reading("single", json::object());
    done();
  }));
  REQUIRE(fs::file_size(dir.db().string() + "-wal") > 0);
  fs::resize_file(dir.db(), fs::file_size(dir.db()) / 2);
  check_refused_untouched(dir.db(), "store.damaged");
}

TEST_CASE("store: a write that finds no room fails as store.write_failed and keeps earlier data",
          "[store]") {
  // 64 kB: even the checkpoint at close runs out of room, leaving the file's header ahead
  // of its size with the rest in the WAL; 256 kB: the checkpoint fits.
  for (const rlim_t file_limit : {rlim_t{64 * 1024}, rlim_t{256 * 1024}}) {
    INFO("file size limit " << file_limit);
    TempDir dir;
    CHECK(fill_until_write_fails(dir.db(), file_limit) == 0);
    Store store(dir.db());
    CHECK(store.readings(10000).size() >= 3);
  }
}

TEST_CASE("store: concurrent writers and readers see every reading", "[store]") {
  TempDir dir;
  Store store(dir.db());
  constexpr int kWriters = 4, kEach = 25;
  std::atomic<int> writers_left{kWriters};
  std::atomic<bool> reader_saw_fewer{false};
  std::atomic<int> failures{0};
  std::vector<std::vector<std::int64_t>> ids(kWriters);
  std::vector<std::thread> threads;
  for (int w = 0; w < kWriters; ++w) {
    threads.emplace_back([&, w] {
      try {
        for (int i = 0; i < kEach; ++i) {
          ids[w].push_back(store.add_reading("writer" + std::to_string(w), {{"i", i}}));
        }
      } catch (...) {
        ++failures;
      }
      --writers_left;
    });
  }
  for (int r = 0; r < 2; ++r) {
    threads.emplace_back([&] {
      try {
        std::size_t seen = 0;
        while (writers_left > 0) {
          const auto now = store.readings(1000).size();
          if (now < seen) reader_saw_fewer = true;
          seen = now;
          store.latest_reading();
        }
      } catch (...) {
        ++failures;
      }
    });
  }
  for (auto& t : threads)
    t.join();
  CHECK(failures == 0);
  CHECK_FALSE(reader_saw_fewer);
  std::set<std::int64_t> all;
  for (const auto& v : ids) {
    CHECK(v.size() == kEach);
    all.insert(v.begin(), v.end());
  }
  CHECK(all.size() == kWriters * kEach);
  const auto rows = store.readings(1000);
  CHECK(rows.size() == kWriters * kEach);
  CHECK(std::count_if(rows.begin(), rows.end(),
                      [](const tb::ReadingRecord& r) { return r.origin == "writer2"; }) == kEach);
}

// A file as tonebridge left it before roles and verdicts (schema version 1), with a part
// that has a reading and a sweep.
void make_version_1_store(const fs::path& db) {
  tb::sqlite::Connection conn;
  std::string reason;
  REQUIRE(tb::sqlite::open_connection(db, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE, conn,
                                      reason) == SQLITE_OK);
  tb::store_schema::migrate(conn.get(), 1);
  conn.reset();
  run_sql(db,
          "INSERT INTO jobs(created_at, make, model, serial, notes) "
          "VALUES ('2026-01-05T09:00:00.000Z', 'Quillon Audio', 'QI-260', 'LLA-26-099', '');"
          "INSERT INTO parts(job_id, designator, marking, notes, created_at) "
          "VALUES (1, 'C41', '470 uF 35 V', '', '2026-01-05T09:01:00.000Z');"
          "INSERT INTO readings(taken_at, origin, part_id, body) "
          "VALUES ('2026-01-05T09:02:00.000Z', 'single', 1, '{\"cs_f\": 4.1e-4}');"
          "INSERT INTO sweeps(started_at, ended_at, status, label, part_id, params, "
          "points_planned) VALUES ('2026-01-05T09:03:00.000Z', '2026-01-05T09:04:00.000Z', "
          "'complete', 'C41 as found', 1, '{}', 2);");
}

TEST_CASE("store: a version 1 file migrates, its filed readings and sweeps become original",
          "[store]") {
  TempDir dir;
  make_version_1_store(dir.db());
  CHECK(query_text(dir.db(), "SELECT version FROM schema_version") == "1");
  Store store(dir.db());
  CHECK(store.schema_version() == Store::latest_schema_version());
  CHECK(Store::latest_schema_version() == 2);
  const auto r = store.reading(1);
  REQUIRE(r);
  CHECK(r->part_id == 1);
  CHECK(r->role == tb::PartRole::original);
  CHECK(r->body.at("cs_f").get<double>() == 4.1e-4);
  const auto s = store.sweep(1);
  REQUIRE(s);
  CHECK(s->role == tb::PartRole::original);
  CHECK(s->label == "C41 as found");
  CHECK(store.part_readings(1).size() == 1);
  CHECK(store.part_sweeps(1).size() == 1);
  const auto v = store.add_verdict(1, 1, std::nullopt, {{"outcome", "fail"}});
  CHECK(store.verdicts(1).front().id == v);
}

TEST_CASE("store: the role column refuses anything but original and replacement", "[store]") {
  TempDir dir;
  { Store store(dir.db()); }
  run_sql(dir.db(), "INSERT INTO readings(taken_at, origin, body) VALUES ('t', 'single', '{}')");
  sqlite3* conn = nullptr;
  REQUIRE(sqlite3_open(dir.db().c_str(), &conn) == SQLITE_OK);
  const int rc =
      sqlite3_exec(conn, "UPDATE readings SET part_role = 'spare'", nullptr, nullptr, nullptr);
  sqlite3_close(conn);
  CHECK(rc == SQLITE_CONSTRAINT);
}

TEST_CASE("store: readings and sweeps are filed under a part in a role and refiled later",
          "[store]") {
  TempDir dir;
  Store store(dir.db());
  const auto job = store.add_job({});
  const auto c41 = store.add_part({0, job, "C41", "", "", ""});
  const auto l2 = store.add_part({0, job, "L2", "", "", ""});
  const auto found = store.add_reading("single", {{"n", 1}}, c41);
  const auto fitted = store.add_reading("single", {{"n", 2}}, c41, tb::PartRole::replacement);
  const auto loose = store.add_reading("single", {{"n", 3}});
  const auto sweep = store.begin_sweep(json::object(), 3, "L2", l2, tb::PartRole::replacement);
  CHECK(store.reading(found)->role == tb::PartRole::original);
  CHECK(store.reading(fitted)->role == tb::PartRole::replacement);
  CHECK(store.sweep(sweep)->role == tb::PartRole::replacement);

  // A reading taken before the part was chosen is filed afterwards.
  CHECK(store.file_reading(loose, c41, tb::PartRole::replacement));
  std::vector<std::int64_t> ids;
  for (const auto& r : store.part_readings(c41))
    ids.push_back(r.id);
  CHECK(ids == std::vector<std::int64_t>{found, fitted, loose});
  CHECK(store.reading(loose)->role == tb::PartRole::replacement);

  CHECK(store.file_sweep(sweep, c41, tb::PartRole::original));
  CHECK(store.part_sweeps(l2).empty());
  CHECK(store.part_sweeps(c41).front().role == tb::PartRole::original);
  // Unfiled, a record's role goes back to original.
  CHECK(store.file_reading(fitted, std::nullopt, tb::PartRole::replacement));
  CHECK_FALSE(store.reading(fitted)->part_id);
  CHECK(store.reading(fitted)->role == tb::PartRole::original);

  CHECK_FALSE(store.file_reading(9999, c41, tb::PartRole::original));
  CHECK_FALSE(store.file_sweep(9999, c41, tb::PartRole::original));
  CHECK(error_id([&] { store.file_reading(found, 9999, tb::PartRole::original); }) ==
        "store.not_found");
  CHECK(store.reading(found)->part_id == c41);
  CHECK(tb::parse_part_role("replacement") == tb::PartRole::replacement);
  CHECK_FALSE(tb::parse_part_role("Original"));
}

TEST_CASE("store: verdicts are a history, newest first, and go with their part", "[store]") {
  TempDir dir;
  Store store(dir.db());
  const auto job = store.add_job({});
  const auto part = store.add_part({0, job, "C12", "", "", ""});
  const auto other = store.add_part({0, job, "C13", "", "", ""});
  const auto reading = store.add_reading("single", json::object(), part);
  const auto sweep = store.begin_sweep(json::object(), 2, "", part);
  const json fail = {
      {"kind", "loss"}, {"outcome", "fail"}, {"text", "ESR 3x the limit"}, {"role", "original"}};
  const json pass = {{"kind", "tolerance"}, {"outcome", "pass"}, {"role", "replacement"}};
  const auto first = store.add_verdict(part, reading, std::nullopt, fail);
  const auto second = store.add_verdict(part, std::nullopt, sweep, pass);
  store.add_verdict(other, std::nullopt, std::nullopt, pass);

  const auto list = store.verdicts(part);
  REQUIRE(list.size() == 2);
  CHECK(list[0].id == second);
  CHECK(list[0].sweep_id == sweep);
  CHECK_FALSE(list[0].reading_id);
  CHECK(list[1].id == first);
  CHECK(list[1].reading_id == reading);
  CHECK(list[1].body == fail);
  CHECK(list[1].part_id == part);
  CHECK_FALSE(list[1].taken_at.empty());

  CHECK(error_id([&] { store.add_verdict(9999, std::nullopt, std::nullopt, pass); }) ==
        "store.not_found");
  CHECK(error_id([&] { store.add_verdict(part, 9999, std::nullopt, pass); }) == "store.not_found");
  CHECK(error_id([&] { store.add_verdict(part, std::nullopt, 9999, pass); }) == "store.not_found");
  CHECK(store.verdicts(part).size() == 2);

  // The verdict outlives the reading it was drawn from; the link is cleared.
  CHECK(store.delete_reading(reading));
  CHECK_FALSE(store.verdicts(part).back().reading_id);

  CHECK(store.delete_part(part));
  CHECK(store.verdicts(part).empty());
  CHECK(query_text(dir.db(), "SELECT count(*) FROM part_verdicts") == "1");
  CHECK(store.verdicts(other).size() == 1);
  // A part of a deleted job takes its verdicts with it too.
  CHECK(store.delete_job(job));
  CHECK(query_text(dir.db(), "SELECT count(*) FROM part_verdicts") == "0");
}
