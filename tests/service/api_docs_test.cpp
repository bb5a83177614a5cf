// docs/api.md must describe every route the service has: a route added in the code
// without its section there fails here.
#include <catch2/catch.hpp>

#include <fstream>
#include <sstream>

#include "tests/support/service_process.hpp"

TEST_CASE("every route of the service is documented in docs/api.md", "[service]") {
  const auto r = tb::test::run_service_once({"--list-routes", "--port", "0"});
  REQUIRE(r.exit_code == 0);
  std::ifstream in(std::string(TB_SOURCE_DIR) + "/docs/api.md");
  REQUIRE(in);
  std::stringstream doc;
  doc << in.rdbuf();
  std::istringstream routes(r.out);
  std::string line;
  int n = 0;
  while (std::getline(routes, line)) {
    if (line.empty()) continue;
    ++n;
    INFO("route: " << line);
    CHECK(doc.str().find("### `" + line + "`") != std::string::npos);
  }
  CHECK(n >= 30);
}
