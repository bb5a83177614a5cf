#include "server/cli_args.hpp"

#include <catch2/catch.hpp>

#include "server/error.hpp"

using namespace tb::cli;

TEST_CASE("quantities parse with SI prefixes and units as technicians type them", "[cli_args]") {
  CHECK(parse_quantity("1000", "ohm", "--rref") == 1000);
  CHECK(parse_quantity("4.7k", "ohm", "--rref") == Approx(4700));
  CHECK(parse_quantity("4.7 kohm", "ohm", "--rref") == Approx(4700));
  CHECK(parse_quantity("10Ω", "ohm", "--rref") == 10);
  CHECK(parse_quantity("100n", "F", "--input-c") == Approx(100e-9));
  CHECK(parse_quantity("2.2uF", "F", "--input-c") == Approx(2.2e-6));
  CHECK(parse_quantity("2.2µF", "F", "--input-c") == Approx(2.2e-6));
  CHECK(parse_quantity("1M", "ohm", "--rref") == Approx(1e6));
  CHECK(parse_quantity("1e3", "Hz", "--freq") == 1000);
  CHECK(parse_quantity("1kHz", "Hz", "--freq") == 1000);
  CHECK(parse_quantity("-40", "dB", "--min-tone-db") == -40);
  CHECK(parse_quantity_list("120,1k, 10k", "Hz", "--freq") ==
        std::vector<double>{120, 1000, 10000});
  for (const char* bad : {"", "abc", "4k7", "10 furlongs", "1e999", "5 F"}) {
    INFO(bad);
    CHECK_THROWS_AS(parse_quantity(bad, "ohm", "--rref"), tb::Error);
  }
}

TEST_CASE("options parse in both spellings and unknown ones are named", "[cli_args]") {
  const std::vector<OptionSpec> specs{{"rref", "OHMS", ""}, {"json", "", ""}};
  const std::vector<std::string> args{"file.wav", "--rref=10", "--json"};
  const auto p = parse_args(args, specs, "analyze");
  CHECK(p.positional == std::vector<std::string>{"file.wav"});
  CHECK(p.get("rref") == "10");
  CHECK(p.has("json"));
  const std::vector<std::string> bad{"--nope"};
  try {
    parse_args(bad, specs, "analyze");
    FAIL("accepted an unknown option");
  } catch (const tb::Error& e) {
    CHECK(e.id() == "cli.unknown_option");
    CHECK(std::string(e.what()).find("--nope") != std::string::npos);
  }
  const std::vector<std::string> flag_value{"--json=yes"};
  CHECK_THROWS_AS(parse_args(flag_value, specs, "analyze"), tb::Error);
}
