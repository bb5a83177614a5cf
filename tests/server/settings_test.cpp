#include "server/settings.hpp"

#include <algorithm>
#include <catch2/catch.hpp>
#include <cstdlib>
#include <filesystem>
#include <fstream>

#include "server/error.hpp"
#include "tests/support/signals.hpp"

using tb::Settings;

namespace {

// The error a call throws; fails the test when it throws none.
template <typename F>
tb::Error error_of(F&& call) {
  try {
    call();
  } catch (const tb::Error& e) {
    return e;
  }
  FAIL("no tb::Error was thrown");
  throw std::logic_error("unreachable");
}

bool contains(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

// A config file in a fresh temporary folder, removed with it.
class ConfigFile {
 public:
  explicit ConfigFile(const std::string& text)
      : dir_(tb::test::make_temp_dir("settings")), path_(dir_ / "tonebridged.conf") {
    std::ofstream(path_) << text;
  }
  ~ConfigFile() { std::filesystem::remove_all(dir_); }
  const std::filesystem::path& path() const { return path_; }

 private:
  std::filesystem::path dir_, path_;
};

}  // namespace

TEST_CASE("every setting loads its default", "[settings]") {
  const Settings s;
  const auto json = s.to_json();
  REQUIRE(json.size() == tb::setting_specs().size());
  for (const auto& spec : tb::setting_specs()) {
    INFO(spec.name);
    CHECK(json.contains(spec.name));
    Settings copy;
    CHECK_NOTHROW(copy.set(spec.name, spec.default_value));
    CHECK(copy.as_text(spec.name) == s.as_text(spec.name));
  }
  CHECK(s.text("listen") == "127.0.0.1");
  CHECK(s.integer("port") == 7583);
  CHECK(s.text("db").empty());
  CHECK(s.text("device") == "simulated");
  CHECK(s.integer("sample_rate_hz") == 48000);
  CHECK(s.number("sample_rate_hz") == 48000);
  CHECK(s.integer("period_frames") == 256);
  CHECK(s.text("layout") == "part-low");
  CHECK(s.number("rref_ohm") == 1000);
  CHECK(s.numbers("rref_set_ohm") == std::vector<double>{1, 10, 100, 1e3, 1e4, 1e5});
  CHECK(s.number("rref_tolerance_pct") == 0.1);
  CHECK(s.number("freq_hz") == 1000);
  CHECK(s.number("level_fs") == 0.3);
  CHECK(s.number("level_cap_fs") == 0.5);
  CHECK(s.number("duration_s") == 0.5);
  CHECK(s.number("readings_per_s_max") == 4);
  CHECK(s.integer("mains_hz") == 50);
  CHECK(s.number("full_scale_vrms") == 0);
  CHECK(s.integer("sim_seed") == 1);
  CHECK(s.text("sim_part") == "cap 6.8u esr 0.05");
  CHECK(s.boolean("sim_real_time"));
  CHECK(s.integer("max_body_bytes") == 65536);
  CHECK(s.integer("max_event_clients") == 64);
}

TEST_CASE("values parse as technicians write them", "[settings]") {
  Settings s;
  s.set("rref_ohm", "4.7k");
  CHECK(s.number("rref_ohm") == 4700);
  s.set("rref_ohm", "10 kohm");
  CHECK(s.number("rref_ohm") == 10000);
  s.set("duration_s", "250ms");
  CHECK(s.number("duration_s") == 0.25);
  s.set("rref_tolerance_pct", "1%");
  CHECK(s.number("rref_tolerance_pct") == 1);
  s.set("port", "8080");
  CHECK(s.integer("port") == 8080);
  s.set("sample_rate_hz", "96k");
  CHECK(s.text("sample_rate_hz") == "96000");
  s.set("layout", "Part-High");
  CHECK(s.text("layout") == "part-high");
  s.set("rref_set_ohm", "10, 4.7k,1M");
  CHECK(s.numbers("rref_set_ohm") == std::vector<double>{10, 4700, 1e6});
  for (const char* yes : {"true", "yes", "on", "1", "TRUE"}) {
    s.set("sim_real_time", "false");
    s.set("sim_real_time", yes);
    CHECK(s.boolean("sim_real_time"));
  }
  for (const char* no : {"false", "no", "off", "0"}) {
    s.set("sim_real_time", "true");
    s.set("sim_real_time", no);
    CHECK_FALSE(s.boolean("sim_real_time"));
  }
  for (const char* address : {"0.0.0.0", "192.168.1.20", "localhost", "255.255.255.255"}) {
    s.set("listen", address);
    CHECK(s.text("listen") == address);
  }
}

TEST_CASE("numbers are stored so that their text reads back exactly", "[settings]") {
  Settings s;
  s.set("level_fs", "0.1");
  s.set("rref_ohm", "3.3000000000000003");
  Settings copy;
  copy.set("level_fs", s.as_text("level_fs"));
  copy.set("rref_ohm", s.as_text("rref_ohm"));
  CHECK(copy.number("level_fs") == 0.1);
  CHECK(copy.number("rref_ohm") == 3.3000000000000003);
  CHECK(s.as_text("rref_ohm") != "3.3");
  s.set("full_scale_vrms", "-0");
  CHECK(s.as_text("full_scale_vrms") == "0");
}

TEST_CASE("bad values are rejected naming the key, the value and what is allowed", "[settings]") {
  struct Case {
    const char *name, *value, *id, *allowed;
  };
  const Case cases[] = {
      {"port", "80.5", "config.bad_value", "whole number between 0 and 65535"},
      {"port", "-1", "config.out_of_range", "between 0 and 65535"},
      {"port", "70000", "config.out_of_range", "between 0 and 65535"},
      {"period_frames", "many", "config.bad_value", "between 64 and 8192"},
      {"rref_ohm", "abc", "config.bad_value", "between 0.1 and 10M ohm"},
      {"rref_ohm", "0.05", "config.out_of_range", "between 0.1 and 10M ohm"},
      {"rref_ohm", "20M", "config.out_of_range", "between 0.1 and 10M ohm"},
      {"freq_hz", "1 kV", "config.bad_value", "between 10 and 96k Hz"},
      {"freq_hz", "5", "config.out_of_range", "between 10 and 96k Hz"},
      {"level_cap_fs", "2", "config.out_of_range", "between 0.001 and 1"},
      {"rref_set_ohm", "1,20M", "config.out_of_range", "each between 0.1 and 10M ohm"},
      {"rref_set_ohm", "1,,10", "config.bad_value", "each between 0.1 and 10M ohm"},
      {"rref_set_ohm", "", "config.bad_value", "each between 0.1 and 10M ohm"},
      {"sample_rate_hz", "22050", "config.bad_value", "one of 44100, 48000, 96000, 192000 Hz"},
      {"layout", "sideways", "config.bad_value", "one of part-low, part-high"},
      {"sim_real_time", "maybe", "config.bad_value", "true or false"},
      {"listen", "192.168.1", "config.bad_value", "IPv4 address"},
      {"listen", "192.168.1.256", "config.bad_value", "IPv4 address"},
      {"listen", "010.0.0.1", "config.bad_value", "IPv4 address"},
      {"sim_part", "  ", "config.bad_value", "must not be empty"},
  };
  for (const auto& c : cases) {
    INFO(c.name << " = '" << c.value << "'");
    Settings s;
    const std::string before = s.as_text(c.name);
    const auto e = error_of([&] { s.set(c.name, c.value, "test.conf line 4"); });
    CHECK(e.id() == c.id);
    const std::string message = e.what();
    CHECK(message.rfind("test.conf line 4: " + std::string(c.name), 0) == 0);
    CHECK(contains(message, c.value));
    CHECK(contains(message, c.allowed));
    CHECK(contains(e.hint(), "--"));
    CHECK(s.as_text(c.name) == before);
  }
  const auto e = error_of([] { Settings().set("level_cap_fs", "2"); });
  CHECK(std::string(e.what()) == "level_cap_fs must be between 0.001 and 1, got 2");
  CHECK(e.hint() == "set it in the config file or with --level-cap-fs");
}

TEST_CASE("unknown keys are named with the settings they may have meant", "[settings]") {
  const auto e = error_of([] { Settings().set("rref", "1k"); });
  CHECK(e.id() == "config.unknown_key");
  CHECK(std::string(e.what()) == "no setting named 'rref'");
  CHECK(contains(e.hint(), "rref_ohm, rref_set_ohm, rref_tolerance_pct"));
  const auto far = error_of([] { Settings().set("colour", "red"); });
  CHECK(far.hint() == "`tonebridged --help` lists every setting");
  CHECK(contains(error_of([] { Settings().set("prot", "80"); }).hint(), "port"));
}

TEST_CASE("the output level may not exceed the safety cap", "[settings]") {
  Settings s;
  const auto e = error_of([&] { s.set("level_fs", "0.8"); });
  CHECK(e.id() == "config.out_of_range");
  CHECK(contains(e.what(), "level_fs"));
  CHECK(contains(e.what(), "level_cap_fs"));
  CHECK(s.number("level_fs") == 0.3);
  // Raising the cap and the level together works in either order.
  s.set_all({{"level_fs", "0.8", ""}, {"level_cap_fs", "0.9", ""}});
  CHECK(s.number("level_fs") == 0.8);
  CHECK_THROWS_AS(s.set("level_cap_fs", "0.5"), tb::Error);
  CHECK(s.number("level_cap_fs") == 0.9);
  const auto json_error = error_of([&] { s.apply_json({{"level_fs", 1.0}}, true); });
  CHECK(contains(json_error.what(), "level_cap_fs"));
  CHECK(s.number("level_fs") == 0.8);
}

TEST_CASE("a config file with comments, blank lines, quotes and duplicates loads", "[settings]") {
  const ConfigFile file(
      "\xEF\xBB\xBF# tonebridged settings\n"
      "\n"
      "   # an indented comment\n"
      "port = 8000\n"
      "rref_ohm=4.7k   # the 4k7 from the drawer\n"
      "sim_part = \"cap 10u # marked\"  # quoted, so its # stays\n"
      "device = card#2\n"
      "listen = '0.0.0.0'\n"
      "layout = part-high\r\n"
      "port = 8001\n"
      "db = \"\"\n");
  Settings s;
  load_config_file(file.path(), s);
  CHECK(s.integer("port") == 8001);
  CHECK(s.number("rref_ohm") == 4700);
  CHECK(s.text("sim_part") == "cap 10u # marked");
  CHECK(s.as_text("sim_part") == "\"cap 10u # marked\"");
  CHECK(s.text("device") == "card#2");
  CHECK(s.text("listen") == "0.0.0.0");
  CHECK(s.text("layout") == "part-high");
  CHECK(s.text("db").empty());

  const ConfigFile bad_last("port = 8002\nfreq_hz = 2k\nlayout = diagonal\n");
  CHECK_THROWS_AS(load_config_file(bad_last.path(), s), tb::Error);
  CHECK(s.integer("port") == 8001);  // all or nothing
  CHECK(s.number("freq_hz") == 1000);
}

TEST_CASE("as_text writes what a config file reads back", "[settings]") {
  Settings s;
  s.set("sim_part", " cap 1u # odd ");
  s.set("rref_set_ohm", "1,2.2k");
  std::string text;
  for (const auto& spec : tb::setting_specs())
    text += spec.name + " = " + s.as_text(spec.name) + "\n";
  const ConfigFile file(text);
  Settings copy;
  load_config_file(file.path(), copy);
  CHECK(copy.to_json() == s.to_json());
}

TEST_CASE("a bad config line reports its line number", "[settings]") {
  const ConfigFile no_equals("port = 8000\n\nrref_ohm 4.7k\n");
  Settings s;
  const auto e = error_of([&] { load_config_file(no_equals.path(), s); });
  CHECK(e.id() == "config.bad_value");
  CHECK(contains(e.what(), no_equals.path().string() + " line 3"));
  CHECK(contains(e.what(), "rref_ohm 4.7k"));

  const ConfigFile bad_value("# comment\nfreq_hz = 200k\n");
  const auto range = error_of([&] { load_config_file(bad_value.path(), s); });
  CHECK(range.id() == "config.out_of_range");
  CHECK(contains(range.what(), "line 2: freq_hz must be between 10 and 96k Hz, got 200k"));

  const ConfigFile unknown("rref = 1k\n");
  CHECK(error_of([&] { load_config_file(unknown.path(), s); }).id() == "config.unknown_key");
  const ConfigFile unclosed("sim_part = \"cap 1u\n");
  CHECK(contains(error_of([&] { load_config_file(unclosed.path(), s); }).what(), "line 1"));
}

TEST_CASE("a missing config file is unreadable with the system's reason", "[settings]") {
  Settings s;
  const auto e = error_of([&] { load_config_file("/nonexistent/tonebridged.conf", s); });
  CHECK(e.id() == "config.unreadable");
  CHECK(contains(e.what(), "/nonexistent/tonebridged.conf: No such file or directory"));
  const auto dir = error_of([&] { load_config_file("/", s); });
  CHECK(dir.id() == "config.unreadable");
  CHECK(contains(dir.what(), "Is a directory"));
}

TEST_CASE("flags override the config file and leave other arguments", "[settings]") {
  const ConfigFile file("rref_ohm = 100\nport = 8000\nsim_real_time = false\n");
  Settings s;
  load_config_file(file.path(), s);
  const std::vector<std::string> args{"--config",    "x.conf",          "--rref-ohm", "4.7k",
                                      "--port=9000", "--sim-real-time", "--verbose",  "--layout",
                                      "part-high",   "positional",      "--",         "--port=1"};
  const auto rest = apply_setting_flags(args, s);
  CHECK(rest == std::vector<std::string>{"--config", "x.conf", "--verbose", "positional", "--",
                                         "--port=1"});
  CHECK(s.number("rref_ohm") == 4700);
  CHECK(s.integer("port") == 9000);
  CHECK(s.boolean("sim_real_time"));
  CHECK(s.text("layout") == "part-high");

  apply_setting_flags({"--sim-real-time=false"}, s);
  CHECK_FALSE(s.boolean("sim_real_time"));

  const auto missing = error_of([&] { apply_setting_flags({"--port=9001", "--rref-ohm"}, s); });
  CHECK(missing.id() == "config.bad_value");
  CHECK(contains(missing.what(), "--rref-ohm"));
  CHECK(s.integer("port") == 9000);  // all or nothing

  const auto bad = error_of([&] { apply_setting_flags({"--port", "70000"}, s); });
  CHECK(std::string(bad.what()).rfind("--port: port must be", 0) == 0);
}

TEST_CASE("JSON changes apply all or nothing", "[settings]") {
  Settings s;
  const auto e = error_of([&] { s.apply_json({{"freq_hz", 2000}, {"rref_ohm", "50M"}}, true); });
  CHECK(e.id() == "config.out_of_range");
  CHECK(s.number("freq_hz") == 1000);
  CHECK(s.number("rref_ohm") == 1000);

  s.apply_json({{"freq_hz", 2000},
                {"rref_ohm", "4.7k"},
                {"layout", "part-high"},
                {"mains_hz", 60},
                {"rref_set_ohm", {10, "1k"}},
                {"full_scale_vrms", 1.25}},
               true);
  CHECK(s.number("freq_hz") == 2000);
  CHECK(s.number("rref_ohm") == 4700);
  CHECK(s.text("layout") == "part-high");
  CHECK(s.integer("mains_hz") == 60);
  CHECK(s.numbers("rref_set_ohm") == std::vector<double>{10, 1000});
  CHECK(s.number("full_scale_vrms") == 1.25);

  s.apply_json({{"port", 8080}, {"sim_real_time", false}}, false);
  CHECK(s.integer("port") == 8080);
  CHECK_FALSE(s.boolean("sim_real_time"));

  for (const auto& bad :
       {nlohmann::json{{"freq_hz", true}}, nlohmann::json{{"layout", 1}},
        nlohmann::json{{"sim_real_time", 1}}, nlohmann::json{{"rref_set_ohm", {{"a", 1}}}},
        nlohmann::json{{"sim_part", nullptr}}, nlohmann::json::array()}) {
    INFO(bad.dump());
    CHECK(error_of([&] { s.apply_json(bad, false); }).id() == "config.bad_value");
  }
  CHECK(error_of([&] { s.apply_json({{"nope", 1}}, false); }).id() == "config.unknown_key");
}

TEST_CASE("live changes cannot touch settings that need a restart", "[settings]") {
  Settings s;
  const auto e = error_of([&] { s.apply_json({{"level_cap_fs", 1}}, true); });
  CHECK(e.id() == "config.not_live");
  CHECK(std::string(e.what()) == "level_cap_fs cannot change while tonebridged runs");
  CHECK(contains(e.hint(), "--level-cap-fs"));
  CHECK(s.number("level_cap_fs") == 0.5);
}

TEST_CASE("to_json gives every value its JSON type", "[settings]") {
  const auto j = Settings().to_json();
  CHECK(j["rref_ohm"].is_number_float());
  CHECK(j["rref_ohm"] == 1000.0);
  CHECK(j["port"].is_number_integer());
  CHECK(j["port"] == 7583);
  CHECK(j["sim_real_time"].is_boolean());
  CHECK(j["rref_set_ohm"] == nlohmann::json{1.0, 10.0, 100.0, 1e3, 1e4, 1e5});
  CHECK(j["sample_rate_hz"].is_number_integer());
  CHECK(j["sample_rate_hz"] == 48000);
  CHECK(j["mains_hz"] == 50);
  CHECK(j["layout"] == "part-low");
  CHECK(j["listen"] == "127.0.0.1");
  // What to_json gives, apply_json takes back unchanged.
  Settings s;
  s.apply_json(j, false);
  CHECK(s.to_json() == j);
}

TEST_CASE("the schema describes every setting", "[settings]") {
  const auto schema = tb::settings_schema_json();
  REQUIRE(schema.size() == tb::setting_specs().size());
  for (std::size_t i = 0; i < schema.size(); ++i) {
    const auto& row = schema[i];
    const auto& spec = tb::setting_specs()[i];
    INFO(spec.name);
    CHECK(row["name"] == spec.name);
    for (const char* key : {"type", "default", "unit", "description", "live"})
      CHECK(row.contains(key));
    CHECK_FALSE(spec.description.empty());
  }
  CHECK(schema[7]["name"] == "rref_ohm");
  CHECK(schema[7]["min"] == 0.1);
  CHECK(schema[7]["max"] == 1e7);
  CHECK(schema[4]["choices"] == nlohmann::json{44100, 48000, 96000, 192000});
  CHECK(schema[0]["rule"] == "ipv4_address");
}

TEST_CASE("help has one line per setting with its flag, unit and default", "[settings]") {
  const std::string help = tb::settings_help();
  CHECK(static_cast<std::size_t>(std::count(help.begin(), help.end(), '\n')) ==
        tb::setting_specs().size());
  CHECK(contains(help, "--rref-ohm OHM"));
  CHECK(contains(help, "0.1 to 10M ohm, default 1k)"));
  CHECK(contains(help, "--sim-real-time[=BOOL]"));
  CHECK(contains(help, "--sample-rate-hz 44100|48000|96000|192000"));
  CHECK(contains(help, "default 48000 Hz)"));
}

TEST_CASE("the config file is looked for under XDG_CONFIG_HOME, else HOME", "[settings]") {
  const char* xdg = std::getenv("XDG_CONFIG_HOME");
  const std::string saved_xdg = xdg ? xdg : "";
  const char* home = std::getenv("HOME");
  const std::string saved_home = home ? home : "";
  setenv("XDG_CONFIG_HOME", "/xdg", 1);
  setenv("HOME", "/home/tech", 1);
  CHECK(tb::default_config_path() == "/xdg/tonebridge/tonebridged.conf");
  setenv("XDG_CONFIG_HOME", "relative", 1);
  CHECK(tb::default_config_path() == "/home/tech/.config/tonebridge/tonebridged.conf");
  unsetenv("XDG_CONFIG_HOME");
  CHECK(tb::default_config_path() == "/home/tech/.config/tonebridge/tonebridged.conf");
  if (xdg) setenv("XDG_CONFIG_HOME", saved_xdg.c_str(), 1);
  if (home) setenv("HOME", saved_home.c_str(), 1);
}

TEST_CASE("the channel map defaults to 1, 2, 1 and one input cannot read both nodes",
          "[settings]") {
  Settings s;
  CHECK(s.integer("input_node_a") == 1);
  CHECK(s.integer("input_node_b") == 2);
  CHECK(s.integer("output_channel") == 1);
  try {
    s.set("input_node_b", "1", "test");
    FAIL("no error");
  } catch (const tb::Error& e) {
    CHECK(e.id() == "config.out_of_range");
  }
  CHECK(s.integer("input_node_b") == 2);  // all or nothing: unchanged
  s.set_all({{"input_node_a", "3", "test"}, {"input_node_b", "4", "test"}}, "test");
  CHECK(s.integer("input_node_a") == 3);
  CHECK(s.integer("input_node_b") == 4);
}
