// The job report: CSV quoting, HTML escaping of everything a user typed, and a part's
// original and replacement readings side by side.
#include "server/job_report.hpp"

#include <catch2/catch.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "server/export_format.hpp"

using nlohmann::json;
using tb::PartRole;

namespace {

json cap_reading(double cs_f, double esr_ohm) {
  return {{"freq_hz", 1000.0},
          {"kind", "C"},
          {"cs_f", cs_f},
          {"esr_ohm", esr_ohm},
          {"d", 0.25},
          {"q", 4.0},
          {"z_mag_ohm", 0.35},
          {"theta_deg", -76.0},
          {"uncertainty", {{"cs_f", 2e-6}, {"z_mag_ohm", 0.004}}}};
}

tb::ReadingRecord reading(std::int64_t id, const json& body, PartRole role) {
  return {id, "2026-12-02T10:0" + std::to_string(id) + ":00.000Z", "single", 1, body, role};
}

tb::JobReport sample_report() {
  tb::JobReport r;
  r.job = {7,
           "2026-12-01T08:00:00.000Z",
           "Quillon Audio",
           "QI-260 \"Mk II\", black",
           "LLA-26-131",
           "Hum at idle.\n<script>alert(1)</script> & more"};
  tb::PartHistory c41;
  c41.part = {1, 7, "C41", "470 µF, 35 V", "supply \"filter\"", ""};
  c41.readings = {reading(1, cap_reading(3.1e-4, 0.9), PartRole::original),
                  reading(2, cap_reading(4.72e-4, 0.08), PartRole::replacement)};
  c41.verdicts = {{11,
                   1,
                   "2026-12-02T10:05:00.000Z",
                   2,
                   std::nullopt,
                   {{"kind", "tolerance"},
                    {"outcome", "pass"},
                    {"role", "replacement"},
                    {"text", "within -10 % / +50 %"}}},
                  {10,
                   1,
                   "2026-12-02T10:04:00.000Z",
                   1,
                   std::nullopt,
                   {{"kind", "loss"},
                    {"outcome", "fail"},
                    {"role", "original"},
                    {"text", "ESR <0.5 ohm> expected"}}}};
  tb::PartHistory l2;
  l2.part = {2, 7, "L2", "0.56 mH", "", ""};
  tb::SweepRecord sw;
  sw.id = 5;
  sw.started_at = "2026-12-02T10:06:00.000Z";
  sw.status = tb::SweepStatus::complete;
  sw.label = "L2 new <coil>";
  sw.part_id = 2;
  sw.role = PartRole::replacement;
  sw.params = {{"start_hz", 100.0}, {"stop_hz", 10000.0}};
  sw.points_saved = sw.points_planned = 21;
  l2.sweeps = {sw};
  r.parts = {c41, l2};
  r.date = "2026-12-02";
  r.workshop = "Larkspur Lane Audio";
  return r;
}

std::vector<std::string> lines(const std::string& text, const std::string& end) {
  std::vector<std::string> out;
  std::size_t at = 0;
  while (at < text.size()) {
    const auto next = text.find(end, at);
    if (next == std::string::npos) {
      out.push_back(text.substr(at));
      break;
    }
    out.push_back(text.substr(at, next - at));
    at = next + end.size();
  }
  return out;
}

// Splits one RFC 4180 record (no line breaks inside, as here) into its fields.
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

bool has(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

}  // namespace

TEST_CASE("job_report: csv_field quotes only what RFC 4180 needs quoted", "[job_report]") {
  // RFC 4180 section 2, rules 5-7: fields with commas, quotes or line breaks are enclosed
  // in double quotes, and a quote inside is doubled.
  CHECK(tb::csv_field("C41") == "C41");
  CHECK(tb::csv_field("470 µF, 35 V") == "\"470 µF, 35 V\"");
  CHECK(tb::csv_field("4\" cone") == "\"4\"\" cone\"");
  CHECK(tb::csv_field("two\nlines") == "\"two\nlines\"");
  CHECK(tb::csv_field("cr\r") == "\"cr\r\"");
  CHECK(tb::csv_field("") == "");
}

TEST_CASE("job_report: csv_field keeps typed text from running as a spreadsheet formula",
          "[job_report]") {
  // OWASP "CSV Injection" (from memory): =, +, -, @, tab and CR start a formula.
  CHECK(tb::csv_field("=HYPERLINK(\"http://x\")") == "\"'=HYPERLINK(\"\"http://x\"\")\"");
  CHECK(tb::csv_field("+1") == "'+1");
  CHECK(tb::csv_field("-2") == "'-2");
  CHECK(tb::csv_field("@SUM(A1)") == "'@SUM(A1)");
  CHECK(tb::csv_field("\tx") == "'\tx");
  CHECK(tb::csv_field("C4=old") == "C4=old");  // only the first character counts
}

TEST_CASE("job_report: the CSV has a header row and one row per part and reading", "[job_report]") {
  const auto csv = tb::job_report_csv(sample_report());
  const auto rows = lines(csv, "\r\n");
  REQUIRE(rows.size() == 4);  // header, C41 x 2 readings, L2 without readings
  CHECK(rows[0].rfind("designator,marking,role,reading_id,taken_at,freq_hz,kind,", 0) == 0);
  const auto header = fields(rows[0]);
  CHECK(header.back() == "verdict");
  for (const auto& row : rows)
    CHECK(fields(row).size() == header.size());

  const auto original = fields(rows[1]);
  CHECK(original[0] == "C41");
  CHECK(original[1] == "470 µF, 35 V");
  CHECK(has(rows[1], "\"470 µF, 35 V\""));
  CHECK(original[2] == "original");
  CHECK(original[3] == "1");
  CHECK(original[6] == "C");
  CHECK(std::stod(original[7]) == Approx(3.1e-4));
  CHECK(original[8] == "F");
  CHECK(std::stod(original[9]) == Approx(2e-6));
  CHECK(std::stod(original[10]) == Approx(0.9));
  CHECK(original.back() == "fail");

  const auto replacement = fields(rows[2]);
  CHECK(replacement[2] == "replacement");
  CHECK(std::stod(replacement[7]) == Approx(4.72e-4));
  CHECK(replacement.back() == "pass");

  const auto coil = fields(rows[3]);
  CHECK(coil[0] == "L2");
  CHECK(coil[2].empty());
  CHECK(coil.back().empty());
}

TEST_CASE("job_report: a reading without its own verdict shows the part's newest in its role",
          "[job_report]") {
  auto report = sample_report();
  report.parts[0].verdicts[0].reading_id.reset();  // the pass, on the replacement
  report.parts[0].verdicts[1].reading_id.reset();  // the fail, on the original
  const auto rows = lines(tb::job_report_csv(report), "\r\n");
  CHECK(fields(rows[1]).back() == "fail");
  CHECK(fields(rows[2]).back() == "pass");
}

TEST_CASE("job_report: the HTML page escapes every text a user typed", "[job_report]") {
  auto report = sample_report();
  report.workshop = "Larkspur <b>Lane</b>";
  const auto html = tb::job_report_html(report);
  CHECK_FALSE(has(html, "<script"));
  CHECK(has(html, "&lt;script&gt;alert(1)&lt;/script&gt; &amp; more"));
  CHECK(has(html, "QI-260 &quot;Mk II&quot;, black"));
  CHECK(has(html, "supply &quot;filter&quot;"));
  CHECK(has(html, "ESR &lt;0.5 ohm&gt; expected"));
  CHECK(has(html, "L2 new &lt;coil&gt;"));
  CHECK(has(html, "Larkspur &lt;b&gt;Lane&lt;/b&gt;"));
  CHECK(tb::html_escape("a'b&c") == "a&#39;b&amp;c");
}

TEST_CASE("job_report: the HTML page is self-contained and printable", "[job_report]") {
  const auto html = tb::job_report_html(sample_report());
  CHECK(html.rfind("<!DOCTYPE html>", 0) == 0);
  CHECK(has(html, "@media print"));
  CHECK(has(html, "size: A4"));
  CHECK_FALSE(has(html, "src="));
  CHECK_FALSE(has(html, "href="));
  CHECK_FALSE(has(html, "<link"));
  CHECK_FALSE(has(html, "url("));
  CHECK(has(html, "2026-12-02"));
  CHECK(has(html, "LLA-26-131"));
  CHECK(has(html,
            "Readings taken with the unit unplugged and its supply capacitors "
            "discharged"));
}

TEST_CASE("job_report: original and replacement readings stand side by side", "[job_report]") {
  const auto html = tb::job_report_html(sample_report());
  // The C41 row: part, then the original cell, then the replacement cell, then verdicts.
  const auto row = html.substr(html.find("<tr><td><span class=\"part\">C41"));
  const auto cells = lines(row.substr(0, row.find("</tr>")), "</td><td>");
  REQUIRE(cells.size() == 4);
  CHECK(has(cells[1], "#1 "));
  CHECK(has(cells[1], "310.0 ± 2.0 µF"));
  CHECK_FALSE(has(cells[1], "#2 "));
  CHECK(has(cells[2], "#2 "));
  CHECK(has(cells[2], "472.0 ± 2.0 µF"));
  CHECK(has(cells[3], "fail"));
  CHECK(cells[3].find("pass") < cells[3].find("fail"));  // newest first
  // The coil has only a sweep of its replacement.
  const auto coil = html.substr(html.find("<tr><td><span class=\"part\">L2"));
  const auto coil_cells = lines(coil.substr(0, coil.find("</tr>")), "</td><td>");
  REQUIRE(coil_cells.size() == 4);
  CHECK(has(coil_cells[1], "—"));
  CHECK(has(coil_cells[2], "sweep #5"));
  CHECK(has(coil_cells[3], "none yet"));
}

TEST_CASE("job_report: a part's history groups readings and sweeps by role", "[job_report]") {
  const auto report = sample_report();
  const auto c41 = tb::part_history_json(report.parts[0]);
  REQUIRE(c41["readings"]["original"].size() == 1);
  REQUIRE(c41["readings"]["replacement"].size() == 1);
  const auto& found = c41["readings"]["original"][0];
  CHECK(found["id"] == 1);
  CHECK(found["primary"] == "cs_f");
  CHECK(found["unit"] == "F");
  CHECK(found["value"].get<double>() == 3.1e-4);
  CHECK(found["esr_ohm"].get<double>() == 0.9);
  CHECK(found["freq_hz"].get<double>() == 1000.0);
  CHECK(c41["verdicts"][0]["id"] == 11);
  CHECK(c41["verdicts"][0]["outcome"] == "pass");
  CHECK(c41["verdicts"][1]["reading_id"] == 1);
  const auto l2 = tb::part_history_json(report.parts[1]);
  CHECK(l2["sweeps"]["replacement"][0]["start_hz"].get<double>() == 100.0);
  CHECK(l2["sweeps"]["original"].empty());
}

TEST_CASE("job_report: the primary value follows the part kind", "[job_report]") {
  const auto l =
      tb::primary_value({{"kind", "L"}, {"ls_h", 5.6e-4}, {"uncertainty", {{"ls_h", 3e-6}}}});
  CHECK(l.quantity == "ls_h");
  CHECK(l.unit == "H");
  CHECK(l.expanded_u.get<double>() == 3e-6);
  const auto r =
      tb::primary_value({{"kind", "R"}, {"rs_ohm", 4.7}, {"uncertainty", {{"z_real_ohm", 0.01}}}});
  CHECK(r.quantity == "rs_ohm");
  CHECK(r.unit == "ohm");
  CHECK(r.expanded_u.get<double>() == 0.01);
  CHECK(tb::primary_value(json::object()).quantity.empty());
}
