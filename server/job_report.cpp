#include "server/job_report.hpp"

#include <cmath>
#include <sstream>

#include "server/export_format.hpp"
#include "server/reading_text.hpp"

namespace tb {

namespace {

using nlohmann::json;

json field(const json& body, const char* name) {
  if (!body.is_object()) return nullptr;
  const auto it = body.find(name);
  return it == body.end() ? json() : *it;
}

json u_of(const json& body, const char* name) {
  const auto u = field(body, "uncertainty");
  return u.is_object() ? field(u, name) : json();
}

std::string number_cell(const json& v) {
  if (v.is_number_float()) {
    std::ostringstream o;
    o.precision(10);
    o << v.get<double>();
    return o.str();
  }
  if (v.is_number() || v.is_boolean()) return v.dump();
  if (v.is_string()) return csv_field(v.get<std::string>());
  return "";
}

double num(const json& v) {
  return v.is_number() ? v.get<double>() : std::nan("");
}

// "2026-12-02T10:04:31.118Z" -> "2026-12-02 10:04 UTC", as a technician reads it.
std::string when(const std::string& iso) {
  if (iso.size() < 16 || iso[10] != 'T') return iso;
  return iso.substr(0, 10) + " " + iso.substr(11, 5) + " UTC";
}

// A dimensionless value (D, Q) with 3 significant digits, without an SI prefix.
std::string plain(double v) {
  std::ostringstream o;
  o.precision(3);
  o << v;
  return o.str();
}

// The verdict outcome shown beside a reading (job_report_csv's contract).
std::string verdict_for(const PartHistory& h, const ReadingRecord* r, PartRole role) {
  for (const auto& v : h.verdicts) {
    if (r && v.reading_id == r->id) return v.body.value("outcome", "");
  }
  for (const auto& v : h.verdicts) {
    if (v.body.is_object() && v.body.value("role", "original") == to_string(role))
      return v.body.value("outcome", "");
  }
  return "";
}

const char* kCss = R"css(
@page { size: A4; margin: 18mm 15mm 20mm 15mm; }
body { font: 10pt/1.35 "DejaVu Sans", Arial, sans-serif; color: #000; margin: 0; }
@media screen { body { max-width: 190mm; margin: 1.5em auto; padding: 0 1em; } }
h1 { font-size: 15pt; margin: 0 0 2mm 0; }
h2 { font-size: 11pt; margin: 5mm 0 2mm 0; }
.unit { border-collapse: collapse; margin-bottom: 3mm; }
.unit th { text-align: left; padding: 0.5mm 4mm 0.5mm 0; font-weight: 600; vertical-align: top; }
.unit td { padding: 0.5mm 0; white-space: pre-wrap; }
table.parts { border-collapse: collapse; width: 100%; }
table.parts th, table.parts td { border: 0.3mm solid #777; padding: 1mm 1.5mm;
  vertical-align: top; text-align: left; }
table.parts th { background: #eee; }
.part { font-weight: 600; }
.small { font-size: 8.5pt; color: #333; white-space: pre-wrap; }
.rec { margin-bottom: 1.5mm; }
.none { color: #666; }
.pass { font-weight: 600; }
.fail { font-weight: 600; text-decoration: underline; }
footer { margin-top: 6mm; border-top: 0.3mm solid #777; padding-top: 2mm; font-size: 8.5pt; }
@media print {
  body { font-size: 9.5pt; }
  table.parts th { background: none; }
  tr { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
}
)css";

std::string html_value(const json& value, const json& u, const std::string& unit) {
  if (!value.is_number()) return "";
  if (u.is_number() && num(u) > 0) return html_escape(format_measured(num(value), num(u), unit));
  return html_escape(format_si(num(value), unit));
}

std::string html_reading(const ReadingRecord& r, const std::string& verdict) {
  const auto& b = r.body;
  const auto p = primary_value(b);
  std::ostringstream o;
  o << "<div class=\"rec\">#" << r.id << " " << html_escape(when(r.taken_at)) << "<br>";
  if (field(b, "freq_hz").is_number()) o << html_escape(format_si(num(b["freq_hz"]), "Hz", 4));
  if (!p.quantity.empty()) {
    const std::string unit = p.unit == "ohm" ? "Ω" : p.unit;
    o << " · " << html_escape(b.value("kind", "")) << " "
      << html_value(p.value, p.expanded_u, unit);
  }
  std::string extra;
  if (field(b, "esr_ohm").is_number()) extra += "ESR " + format_si(num(b["esr_ohm"]), "Ω", 3);
  if (field(b, "d").is_number()) extra += (extra.empty() ? "" : ", ") + ("D " + plain(num(b["d"])));
  if (field(b, "q").is_number()) extra += (extra.empty() ? "" : ", ") + ("Q " + plain(num(b["q"])));
  if (field(b, "z_mag_ohm").is_number())
    extra += (extra.empty() ? "" : ", ") + ("|Z| " + format_si(num(b["z_mag_ohm"]), "Ω", 4));
  if (field(b, "theta_deg").is_number()) {
    std::ostringstream t;
    t.setf(std::ios::fixed);
    t.precision(2);
    t << num(b["theta_deg"]);
    extra += (extra.empty() ? "" : ", ") + ("θ " + t.str() + "°");
  }
  if (!extra.empty()) o << "<br><span class=\"small\">" << html_escape(extra) << "</span>";
  if (b.value("indicative", false)) o << "<br><span class=\"small\">indicative (in circuit)</span>";
  if (!verdict.empty()) o << "<br>verdict: " << html_escape(verdict);
  o << "</div>";
  return o.str();
}

std::string html_sweep(const SweepRecord& s) {
  std::ostringstream o;
  o << "<div class=\"rec\">sweep #" << s.id << " " << html_escape(when(s.started_at));
  const double f1 = num(field(s.params, "start_hz")), f2 = num(field(s.params, "stop_hz"));
  if (std::isfinite(f1) && std::isfinite(f2)) {
    o << "<br>" << html_escape(format_si(f1, "Hz", 3)) << " – "
      << html_escape(format_si(f2, "Hz", 3));
  }
  o << ", " << s.points_saved << "/" << s.points_planned << " points, "
    << html_escape(to_string(s.status));
  if (!s.label.empty()) o << "<br><span class=\"small\">" << html_escape(s.label) << "</span>";
  o << "</div>";
  return o.str();
}

std::string html_role_cell(const PartHistory& h, PartRole role) {
  std::string out;
  for (const auto& r : h.readings) {
    if (r.role == role) out += html_reading(r, verdict_for(h, &r, role));
  }
  for (const auto& s : h.sweeps) {
    if (s.role == role) out += html_sweep(s);
  }
  return out.empty() ? "<span class=\"none\">—</span>" : out;
}

std::string html_verdicts(const PartHistory& h) {
  if (h.verdicts.empty()) return "<span class=\"none\">none yet</span>";
  std::ostringstream o;
  for (const auto& v : h.verdicts) {
    const std::string outcome = v.body.is_object() ? v.body.value("outcome", "") : "";
    const std::string cls = outcome == "pass" ? "pass" : outcome == "fail" ? "fail" : "";
    o << "<div class=\"rec\">" << html_escape(when(v.taken_at)) << " <span class=\"" << cls << "\">"
      << html_escape(outcome) << "</span>";
    if (v.body.is_object()) {
      const std::string kind = v.body.value("kind", ""), role = v.body.value("role", "");
      if (!kind.empty() || !role.empty()) {
        o << " (" << html_escape(kind) << (kind.empty() || role.empty() ? "" : ", ")
          << html_escape(role) << ")";
      }
      const std::string text = v.body.value("text", "");
      if (!text.empty()) o << "<br><span class=\"small\">" << html_escape(text) << "</span>";
    }
    o << "</div>";
  }
  return o.str();
}

}  // namespace

std::string html_escape(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

PrimaryValue primary_value(const json& b) {
  const std::string kind = b.is_object() ? b.value("kind", "") : "";
  PrimaryValue p;
  if (kind == "C") p = {"cs_f", "F", field(b, "cs_f"), u_of(b, "cs_f")};
  if (kind == "L") p = {"ls_h", "H", field(b, "ls_h"), u_of(b, "ls_h")};
  // The series resistance's uncertainty is that of Re(Z), which it is.
  if (kind == "R") p = {"rs_ohm", "ohm", field(b, "rs_ohm"), u_of(b, "z_real_ohm")};
  return p;
}

json reading_summary(const ReadingRecord& r) {
  const auto& b = r.body;
  const auto p = primary_value(b);
  return {{"id", r.id},
          {"taken_at", r.taken_at},
          {"role", to_string(r.role)},
          {"freq_hz", field(b, "freq_hz")},
          {"kind", field(b, "kind")},
          {"primary", p.quantity.empty() ? json() : json(p.quantity)},
          {"value", p.value},
          {"unit", p.quantity.empty() ? json() : json(p.unit)},
          {"u_value", p.expanded_u},
          {"esr_ohm", field(b, "esr_ohm")},
          {"d", field(b, "d")},
          {"q", field(b, "q")},
          {"z_mag_ohm", field(b, "z_mag_ohm")},
          {"theta_deg", field(b, "theta_deg")},
          {"indicative", b.is_object() ? b.value("indicative", false) : false}};
}

json sweep_summary(const SweepRecord& s) {
  return {{"id", s.id},
          {"started_at", s.started_at},
          {"status", to_string(s.status)},
          {"label", s.label},
          {"role", to_string(s.role)},
          {"start_hz", field(s.params, "start_hz")},
          {"stop_hz", field(s.params, "stop_hz")},
          {"points_saved", s.points_saved},
          {"points_planned", s.points_planned}};
}

json verdict_json(const VerdictRecord& v) {
  json j = v.body.is_object() ? v.body : json{{"body", v.body}};
  j["id"] = v.id;
  j["part_id"] = v.part_id;
  j["taken_at"] = v.taken_at;
  j["reading_id"] = v.reading_id ? json(*v.reading_id) : json();
  j["sweep_id"] = v.sweep_id ? json(*v.sweep_id) : json();
  return j;
}

json part_history_json(const PartHistory& h) {
  json readings = {{"original", json::array()}, {"replacement", json::array()}};
  json sweeps = readings;
  for (const auto& r : h.readings)
    readings[to_string(r.role)].push_back(reading_summary(r));
  for (const auto& s : h.sweeps)
    sweeps[to_string(s.role)].push_back(sweep_summary(s));
  json verdicts = json::array();
  for (const auto& v : h.verdicts)
    verdicts.push_back(verdict_json(v));
  return {{"readings", readings}, {"sweeps", sweeps}, {"verdicts", verdicts}};
}

std::string job_report_csv(const JobReport& report) {
  std::ostringstream out;
  out << "designator,marking,role,reading_id,taken_at,freq_hz,kind,primary_value,primary_unit,"
         "u_primary,esr_ohm,d,q,z_mag_ohm,theta_deg,verdict\r\n";
  for (const auto& h : report.parts) {
    const std::string part = csv_field(h.part.designator) + "," + csv_field(h.part.marking);
    if (h.readings.empty()) {
      out << part << ",,,,,,,,,,,,,," << csv_field(verdict_for(h, nullptr, PartRole::original))
          << "\r\n";
      continue;
    }
    for (const auto& r : h.readings) {
      const auto p = primary_value(r.body);
      out << part << "," << to_string(r.role) << "," << r.id << "," << csv_field(r.taken_at) << ","
          << number_cell(field(r.body, "freq_hz")) << "," << number_cell(field(r.body, "kind"))
          << "," << number_cell(p.value) << "," << (p.quantity.empty() ? "" : p.unit) << ","
          << number_cell(p.expanded_u);
      for (const char* q : {"esr_ohm", "d", "q", "z_mag_ohm", "theta_deg"})
        out << "," << number_cell(field(r.body, q));
      out << "," << csv_field(verdict_for(h, &r, r.role)) << "\r\n";
    }
  }
  return out.str();
}

std::string job_report_html(const JobReport& report) {
  const auto& j = report.job;
  const std::string unit = j.make + (j.make.empty() || j.model.empty() ? "" : " ") + j.model;
  std::ostringstream o;
  o << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
    << "<title>Repair report " << html_escape(j.serial.empty() ? unit : j.serial)
    << "</title>\n<style>" << kCss << "</style>\n</head>\n<body>\n<header>\n";
  if (!report.workshop.empty()) o << "<div>" << html_escape(report.workshop) << "</div>\n";
  o << "<h1>Repair report: " << html_escape(unit) << "</h1>\n<table class=\"unit\">\n"
    << "<tr><th>Make</th><td>" << html_escape(j.make) << "</td></tr>\n"
    << "<tr><th>Model</th><td>" << html_escape(j.model) << "</td></tr>\n"
    << "<tr><th>Serial</th><td>" << html_escape(j.serial) << "</td></tr>\n"
    << "<tr><th>Notes</th><td>" << html_escape(j.notes) << "</td></tr>\n"
    << "<tr><th>Job</th><td>" << j.id << ", opened " << html_escape(j.created_at.substr(0, 10))
    << "</td></tr>\n"
    << "<tr><th>Date</th><td>" << html_escape(report.date) << "</td></tr>\n</table>\n</header>\n";
  o << "<h2>Parts</h2>\n";
  if (report.parts.empty()) {
    o << "<p class=\"none\">No parts recorded.</p>\n";
  } else {
    o << "<table class=\"parts\">\n<thead><tr><th>Part</th><th>Original (as found)</th>"
      << "<th>Replacement (fitted)</th><th>Verdicts, newest first</th></tr></thead>\n<tbody>\n";
    for (const auto& h : report.parts) {
      o << "<tr><td><span class=\"part\">" << html_escape(h.part.designator) << "</span>";
      if (!h.part.marking.empty()) o << "<br>" << html_escape(h.part.marking);
      if (!h.part.notes.empty())
        o << "<br><span class=\"small\">" << html_escape(h.part.notes) << "</span>";
      o << "</td><td>" << html_role_cell(h, PartRole::original) << "</td><td>"
        << html_role_cell(h, PartRole::replacement) << "</td><td>" << html_verdicts(h)
        << "</td></tr>\n";
    }
    o << "</tbody>\n</table>\n";
  }
  o << "<footer>\n<p>Readings taken with the unit unplugged and its supply capacitors "
       "discharged; they are small-signal impedance readings at the stated frequency, not "
       "tests at working voltage or ripple current. Values carry their expanded uncertainty "
       "(k ≈ 2, about 95 %).</p>\n<p>Report of "
    << html_escape(report.date) << ", made by tonebridge.</p>\n</footer>\n</body>\n</html>\n";
  return o.str();
}

}  // namespace tb
