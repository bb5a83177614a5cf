// Serving the LAN: every other machine needs the token that was shown once; a view token
// only reads. Requests arrive from this machine's own LAN address, which the service
// cannot tell from a tablet's.
#include <catch2/catch.hpp>

#include <regex>

#include "tests/support/service_process.hpp"
#include "tests/support/signals.hpp"

using tb::test::ServiceProcess;

namespace {

std::string token_in(const std::string& text, int which) {
  const std::regex url(R"(\?token=([A-Za-z0-9_-]{43}))");
  int n = 0;
  for (auto it = std::sregex_iterator(text.begin(), text.end(), url); it != std::sregex_iterator();
       ++it)
    if (n++ == which) return (*it)[1].str();
  return "";
}

}  // namespace

TEST_CASE("on the LAN a token is needed, shown once, and a view token only reads", "[service]") {
  const std::string lan = tb::test::lan_address();
  INFO("this test needs a non-loopback IPv4 address on the machine");
  REQUIRE_FALSE(lan.empty());
  ServiceProcess svc({"--listen", lan, "--viewer-token"});
  const std::string control = token_in(svc.output(), 0), view = token_in(svc.output(), 1);
  REQUIRE(control.size() == 43);
  REQUIRE(view.size() == 43);
  CHECK(control != view);
  // The terminal QR code is printed with the URL.
  CHECK(svc.output().find("\u2580") != std::string::npos);

  auto call = [&](const std::string& method, const std::string& path,
                  const std::map<std::string, std::string>& headers) {
    return svc.request(method, path, method == "POST" ? R"({"make":"Quillon Audio"})" : "", headers,
                       lan);
  };
  const std::string host = lan + ":" + std::to_string(svc.port());
  const auto missing = call("GET", "/api/v1/status", {{"Host", host}});
  CHECK(missing.status == 401);
  CHECK(missing.json().at("error").at("id") == "access.token_missing");
  const auto wrong = call("GET", "/api/v1/status",
                          {{"Host", host}, {"Authorization", "Bearer " + std::string(43, 'x')}});
  CHECK(wrong.status == 401);
  CHECK(wrong.json().at("error").at("id") == "access.token_wrong");
  CHECK(call("GET", "/api/v1/status", {{"Host", host}, {"Authorization", "Bearer " + control}})
            .status == 200);
  CHECK(call("GET", "/api/v1/status?token=" + control, {{"Host", host}}).status == 200);
  CHECK(call("GET", "/api/v1/status", {{"Host", host}, {"Cookie", "tb_token=" + view}}).status ==
        200);
  const auto read_only =
      call("POST", "/api/v1/jobs", {{"Host", host}, {"Authorization", "Bearer " + view}});
  CHECK(read_only.status == 403);
  CHECK(read_only.json().at("error").at("id") == "access.read_only");
  CHECK(call("POST", "/api/v1/jobs", {{"Host", host}, {"Authorization", "Bearer " + control}})
            .status == 201);
  // A foreign Host is refused even with the token (DNS rebinding).
  CHECK(call("GET", "/api/v1/status",
             {{"Host", "rebind.example:" + std::to_string(svc.port())},
              {"Authorization", "Bearer " + control}})
            .status == 403);
}

TEST_CASE("a restart keeps the token without showing it and --new-token replaces it", "[service]") {
  const std::string lan = tb::test::lan_address();
  REQUIRE_FALSE(lan.empty());
  const std::string dir = tb::test::make_temp_dir("tok");
  std::string first;
  {
    ServiceProcess svc({"--listen", lan}, dir);
    first = token_in(svc.output(), 0);
    REQUIRE(first.size() == 43);
  }
  const std::string host_of = lan + ":";
  {
    ServiceProcess svc({"--listen", lan}, dir);
    CHECK(token_in(svc.output(), 0).empty());
    CHECK(svc.output().find("--new-token") != std::string::npos);
    CHECK(svc.request("GET", "/api/v1/status", "",
                      {{"Host", host_of + std::to_string(svc.port())},
                       {"Authorization", "Bearer " + first}},
                      lan)
              .status == 200);
  }
  ServiceProcess svc({"--listen", lan, "--new-token"}, dir);
  const std::string second = token_in(svc.output(), 0);
  CHECK(second.size() == 43);
  CHECK(svc.request("GET", "/api/v1/status", "",
                    {{"Host", host_of + std::to_string(svc.port())},
                     {"Authorization", "Bearer " + first}},
                    lan)
            .status == 401);
}

TEST_CASE("on loopback no token is asked and nothing is reachable from the LAN", "[service]") {
  ServiceProcess svc;
  CHECK(svc.output().find("?token=") == std::string::npos);
  CHECK(svc.get("/api/v1/status").status == 200);
  const std::string lan = tb::test::lan_address();
  REQUIRE_FALSE(lan.empty());
  CHECK(svc.request("GET", "/api/v1/status", "", {}, lan).status == 0);  // not listening there
}
