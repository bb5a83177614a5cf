// A repair job on the simulated bench, as a technician works it: the part as found and its
// replacement read and filed by role, a reading filed afterwards, then the job's report
// as CSV and as a printable page.
#include <catch2/catch.hpp>
#include <string>
#include <vector>

#include "tests/support/service_process.hpp"

using nlohmann::json;
using tb::test::ServiceProcess;

namespace {

json reading_now(const ServiceProcess& svc, json body) {
  body["wait"] = true;
  const auto r = svc.post("/api/v1/readings", body);
  INFO(r.body);
  REQUIRE(r.status == 201);
  return r.json();
}

void put_on_jig(const ServiceProcess& svc, const std::string& part) {
  const auto r = svc.request("PUT", "/api/v1/bench/part", json{{"part", part}}.dump());
  INFO(r.body);
  REQUIRE(r.status == 202);
}

// One RFC 4180 record without line breaks inside, split into fields.
std::vector<std::string> fields(const std::string& record) {
  std::vector<std::string> out{""};
  bool quoted = false;
  for (std::size_t i = 0; i < record.size(); ++i) {
    const char c = record[i];
    if (quoted && c == '"' && i + 1 < record.size() && record[i + 1] == '"') {
      out.back() += '"';
      ++i;
    } else if (c == '"') {
      quoted = !quoted;
    } else if (c == ',' && !quoted) {
      out.emplace_back();
    } else {
      out.back() += c;
    }
  }
  return out;
}

std::vector<std::string> records(const std::string& csv) {
  std::vector<std::string> out;
  std::size_t at = 0;
  for (auto end = csv.find("\r\n"); end != std::string::npos; end = csv.find("\r\n", at)) {
    out.push_back(csv.substr(at, end - at));
    at = end + 2;
  }
  return out;
}

}  // namespace

TEST_CASE("a job's part is read as found and replaced, and the report shows both", "[service]") {
  ServiceProcess svc({"--duration-s", "0.2"});
  const auto job = svc.post("/api/v1/jobs", {{"make", "Quillon Audio"},
                                             {"model", "QI-260 \"Mk II\""},
                                             {"serial", "LLA-26-150"},
                                             {"notes", "<script>alert('hum')</script> at idle"}});
  REQUIRE(job.status == 201);
  const auto job_id = std::to_string(job.json().at("id").get<int>());
  const auto part =
      svc.post("/api/v1/jobs/" + job_id + "/parts",
               {{"designator", "C41"}, {"marking", "470 µF, 35 V"}, {"notes", "supply filter"}});
  REQUIRE(part.status == 201);
  const auto part_id = part.json().at("id").get<std::int64_t>();
  const auto part_path = "/api/v1/parts/" + std::to_string(part_id);

  // A role needs a part, and is one of two words.
  const auto no_part = svc.post("/api/v1/readings", {{"role", "replacement"}, {"wait", true}});
  CHECK(no_part.status == 400);
  CHECK(no_part.json().at("error").at("id") == "request.missing_field");
  const auto bad_role =
      svc.post("/api/v1/readings", {{"part_id", part_id}, {"role", "new"}, {"wait", true}});
  CHECK(bad_role.status == 400);
  CHECK(bad_role.json().at("error").at("id") == "request.bad_value");

  // The dried-out capacitor as found; the role defaults to original.
  put_on_jig(svc, "cap 470u esr 0.9");
  const auto found = reading_now(svc, {{"freq_hz", 100}, {"part_id", part_id}});
  CHECK(found.at("role") == "original");
  CHECK(found.at("part_id") == part_id);
  // The new one, read as a replacement, and once more before the technician chose the part.
  put_on_jig(svc, "cap 470u esr 0.08");
  const auto fitted =
      reading_now(svc, {{"freq_hz", 100}, {"part_id", part_id}, {"role", "replacement"}});
  CHECK(fitted.at("role") == "replacement");
  const auto loose = reading_now(svc, {{"freq_hz", 100}});
  CHECK(loose.at("part_id").is_null());
  CHECK(loose.at("role").is_null());
  const auto loose_path = "/api/v1/readings/" + std::to_string(loose.at("id").get<int>());
  const auto filed =
      svc.request("PUT", loose_path, json{{"part_id", part_id}, {"role", "replacement"}}.dump());
  INFO(filed.body);
  REQUIRE(filed.status == 200);
  CHECK(filed.json().at("part_id") == part_id);
  CHECK(filed.json().at("role") == "replacement");
  CHECK(svc.request("PUT", loose_path, R"({"part_id": 999})").status == 404);

  // A short sweep of the replacement, filed as original by mistake and corrected.
  const auto sweep = svc.post("/api/v1/sweeps", {{"start_hz", 100},
                                                 {"stop_hz", 1000},
                                                 {"points_per_decade", 1},
                                                 {"part_id", part_id},
                                                 {"wait", true}});
  INFO(sweep.body);
  REQUIRE(sweep.status == 201);
  CHECK(sweep.json().at("role") == "original");
  const auto sweep_path = "/api/v1/sweeps/" + std::to_string(sweep.json().at("id").get<int>());
  const auto refiled = svc.request("PUT", sweep_path, R"({"role": "replacement"})");
  REQUIRE(refiled.status == 200);
  CHECK(refiled.json().at("role") == "replacement");
  CHECK(refiled.json().at("part_id") == part_id);

  const auto detail = svc.get(part_path);
  REQUIRE(detail.status == 200);
  const auto d = detail.json();
  CHECK(d.at("designator") == "C41");
  REQUIRE(d.at("readings").at("original").size() == 1);
  REQUIRE(d.at("readings").at("replacement").size() == 2);
  CHECK(d.at("readings").at("original")[0].at("unit") == "F");
  CHECK(d.at("sweeps").at("original").empty());
  CHECK(d.at("sweeps").at("replacement").size() == 1);
  CHECK(d.at("verdicts").empty());
  const auto verdicts = svc.get(part_path + "/verdicts");
  REQUIRE(verdicts.status == 200);
  CHECK(verdicts.json().at("verdicts").empty());
  CHECK(svc.get("/api/v1/parts/999/verdicts").status == 404);

  const auto csv = svc.get("/api/v1/jobs/" + job_id + "/report?format=csv");
  REQUIRE(csv.status == 200);
  CHECK(csv.headers.at("Content-Type").find("text/csv") == 0);
  const auto rows = records(csv.body);
  REQUIRE(rows.size() == 4);  // header, one original, two replacement readings
  const auto header = fields(rows[0]);
  CHECK(header[0] == "designator");
  std::vector<std::string> roles;
  for (std::size_t i = 1; i < rows.size(); ++i) {
    const auto row = fields(rows[i]);
    REQUIRE(row.size() == header.size());
    CHECK(row[0] == "C41");
    CHECK(row[1] == "470 µF, 35 V");
    CHECK(row[6] == "C");
    CHECK(row[8] == "F");
    // The simulated part is 470 µF (the bench's own description); a 10 % band holds an
    // uncalibrated simulated card (common practice, no source).
    CHECK(std::stod(row[7]) == Approx(470e-6).epsilon(0.10));
    roles.push_back(row[2]);
  }
  CHECK(roles == std::vector<std::string>{"original", "replacement", "replacement"});
  CHECK(std::stod(fields(rows[1])[10]) > std::stod(fields(rows[2])[10]));  // ESR fell

  const auto html = svc.get("/api/v1/jobs/" + job_id + "/report?format=html");
  REQUIRE(html.status == 200);
  CHECK(html.headers.at("Content-Type").find("text/html") == 0);
  CHECK(html.body.find("<script") == std::string::npos);
  CHECK(html.body.find("&lt;script&gt;alert(&#39;hum&#39;)&lt;/script&gt; at idle") !=
        std::string::npos);
  CHECK(html.body.find("QI-260 &quot;Mk II&quot;") != std::string::npos);
  CHECK(html.body.find("LLA-26-150") != std::string::npos);
  CHECK(html.body.find("Replacement (fitted)") != std::string::npos);
  CHECK(html.body.find("#" + std::to_string(fitted.at("id").get<int>()) + " ") !=
        std::string::npos);
  CHECK(html.body.find("supply capacitors discharged") != std::string::npos);

  const auto bad = svc.get("/api/v1/jobs/" + job_id + "/report?format=pdf");
  CHECK(bad.status == 400);
  CHECK(bad.json().at("error").at("id") == "request.bad_value");
  CHECK(svc.get("/api/v1/jobs/999/report").status == 404);

  // Deleting the part keeps its readings, unfiled.
  CHECK(svc.request("DELETE", part_path).status == 204);
  CHECK(svc.get(loose_path).json().at("part_id").is_null());
}
