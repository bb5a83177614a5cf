// The page and its plotting library as static files: the page from --web-dir at "/", the
// library from --vendor-dir under /vendor/uplot/ (the bench has no internet), each folder
// kept to itself.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>

#include "tests/support/service_process.hpp"
#include "tests/support/signals.hpp"

using tb::test::ServiceProcess;

namespace {

void write(const std::filesystem::path& path, const std::string& text) {
  std::filesystem::create_directories(path.parent_path());
  std::ofstream(path) << text;
}

}  // namespace

TEST_CASE("the service serves the page and the plotting library from their folders", "[service]") {
  const std::filesystem::path dir = tb::test::make_temp_dir("static");
  write(dir / "web" / "index.html", "<title>bench page</title>");
  write(dir / "web" / "app.js", "export {};");
  write(dir / "vendor" / "uPlot.iife.min.js", "var uPlot = function () {};");
  write(dir / "vendor" / "uPlot.min.css", ".uplot {}");
  write(dir / "secret.txt", "not for the page");
  ServiceProcess svc(
      {"--web-dir", (dir / "web").string(), "--vendor-dir", (dir / "vendor").string()});

  const auto page = svc.get("/");
  CHECK(page.status == 200);
  CHECK(page.body == "<title>bench page</title>");
  CHECK(page.headers.at("Content-Type").find("text/html") == 0);
  const auto script = svc.get("/vendor/uplot/uPlot.iife.min.js");
  CHECK(script.status == 200);
  CHECK(script.body == "var uPlot = function () {};");
  CHECK(script.headers.at("Content-Type").find("javascript") != std::string::npos);
  const auto css = svc.get("/vendor/uplot/uPlot.min.css");
  CHECK(css.status == 200);
  CHECK(css.headers.at("Content-Type").find("text/css") == 0);
  // Neither mount reaches outside its folder, nor does one reach into the other.
  CHECK(svc.get("/vendor/uplot/../../secret.txt").status == 404);
  CHECK(svc.get("/vendor/uplot/index.html").status == 404);
  CHECK(svc.get("/uPlot.min.css").status == 404);
  // The API still answers under the page's mount.
  CHECK(svc.get("/api/v1/status").status == 200);
}

TEST_CASE("the default vendor folder is uPlot from the source tree's npm packages", "[service]") {
  // ./tbdev installs package-lock.json's packages before it builds and tests.
  ServiceProcess svc;
  const auto script = svc.get("/vendor/uplot/uPlot.iife.min.js");
  INFO("run ./tbdev deps (npm ci) so node_modules/uplot exists");
  CHECK(script.status == 200);
  CHECK(script.body.find("uPlot") != std::string::npos);
  CHECK(svc.get("/").body.find("vendor/uplot/uPlot.iife.min.js") != std::string::npos);
}
