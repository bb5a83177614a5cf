// Start-up refusals: a damaged or foreign database file, a bad config. Each is a clear
// one-line error, and the file is left exactly as it was.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>
#include <sstream>

#include "tests/support/service_process.hpp"
#include "tests/support/signals.hpp"

using tb::test::run_service_once;
using tb::test::ServiceProcess;

namespace {

std::string bytes_of(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

}  // namespace

TEST_CASE("a database file that is not SQLite is refused and left alone", "[service]") {
  const std::string dir = tb::test::make_temp_dir("notdb");
  const std::string db = dir + "/notes.db";
  std::ofstream(db) << "C12 100n K 400V  -- bench notes, not a database\n";
  const std::string before = bytes_of(db);
  const auto r = run_service_once({"--db", db, "--port", "0"});
  CHECK(r.exit_code == 1);
  CHECK(r.err.find("store.not_sqlite") != std::string::npos);
  CHECK(r.err.find(db) != std::string::npos);
  CHECK(bytes_of(db) == before);
}

TEST_CASE("a truncated database is refused with a clear message and left alone", "[service]") {
  const std::string dir = tb::test::make_temp_dir("trunc");
  {
    ServiceProcess svc({"--duration-s", "0.1"}, dir);
    for (int i = 0; i < 30; ++i) {
      svc.post("/api/v1/jobs", {{"make", "Marlowe Acoustics"},
                                {"notes", std::string(400, 'n')},
                                {"serial", "LLA-" + std::to_string(i)}});
    }
  }
  const std::string db = dir + "/tonebridge.db";
  const auto size = std::filesystem::file_size(db);
  REQUIRE(size > 8192);
  std::filesystem::resize_file(db, size / 2);
  const std::string before = bytes_of(db);
  const auto r = run_service_once({"--db", db, "--port", "0"});
  CHECK(r.exit_code == 1);
  CHECK(r.err.find("store.damaged") != std::string::npos);
  CHECK(bytes_of(db) == before);
}

TEST_CASE("bad settings stop the start with the key and the allowed range", "[service]") {
  const auto r = run_service_once({"--level-cap-fs", "3", "--port", "0"});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("level_cap_fs") != std::string::npos);
  CHECK(r.err.find("between") != std::string::npos);
  const auto unknown = run_service_once({"--colour", "blue"});
  CHECK(unknown.exit_code == 2);
  CHECK(unknown.err.find("--colour") != std::string::npos);
  const std::string dir = tb::test::make_temp_dir("conf");
  std::ofstream(dir + "/bench.conf")
      << "# workshop bench 2\nrref_ohm = 4.7k\nsample_rate_hz = 47000\n";
  const auto conf = run_service_once({"--config", dir + "/bench.conf", "--port", "0"});
  CHECK(conf.exit_code == 2);
  CHECK(conf.err.find("line 3") != std::string::npos);
  CHECK(conf.err.find("sample_rate_hz") != std::string::npos);
}

TEST_CASE("a config file's values are used and flags win over them", "[service]") {
  const std::string dir = tb::test::make_temp_dir("conf2");
  std::ofstream(dir + "/bench.conf") << "rref_ohm = 4.7k\nmains_hz = 60\n";
  ServiceProcess svc({"--config", dir + "/bench.conf", "--mains-hz", "50"});
  const auto v = svc.get("/api/v1/settings").json().at("values");
  CHECK(v.at("rref_ohm").get<double>() == Approx(4700));
  CHECK(v.at("mains_hz").get<double>() == Approx(50));
}

TEST_CASE("a port already in use is a clear error", "[service]") {
  ServiceProcess first;
  const auto r =
      run_service_once({"--port", std::to_string(first.port()), "--db", first.dir() + "/other.db"});
  CHECK(r.exit_code == 1);
  CHECK(r.err.find("http.bind_failed") != std::string::npos);
}
