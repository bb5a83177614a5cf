#include "server/export_format.hpp"

#include <algorithm>
#include <sstream>
#include <string_view>

namespace tb {

namespace {

// Column value from a reading body: the quantity, or its expanded uncertainty for "u_*".
nlohmann::json value_of(const nlohmann::json& reading, const std::string& name) {
  if (reading.is_null()) return nullptr;
  if (name.rfind("u_", 0) == 0) {
    const auto u = reading.find("uncertainty");
    if (u == reading.end()) return nullptr;
    return u->value(name.substr(2), nlohmann::json());
  }
  return reading.value(name, nlohmann::json());
}

std::string cell(const nlohmann::json& v) {
  if (v.is_null()) return "";
  if (v.is_string()) return csv_field(v.get<std::string>());
  if (v.is_number_float()) {
    std::ostringstream o;
    o.precision(10);
    o << v.get<double>();
    return o.str();
  }
  return v.dump();
}

const std::vector<std::string>& columns_with_u() {
  static const std::vector<std::string> c = [] {
    auto v = export_quantities();
    v.push_back("u_z_mag_ohm");
    v.push_back("u_theta_deg");
    return v;
  }();
  return c;
}

}  // namespace

const std::vector<std::string>& export_quantities() {
  static const std::vector<std::string> q{"z_real_ohm", "z_imag_ohm", "z_mag_ohm", "theta_deg",
                                          "esr_ohm",    "cs_f",       "ls_h",      "d",
                                          "q",          "kind"};
  return q;
}

nlohmann::json sweep_columns(const std::vector<SweepPoint>& stored) {
  // Points added by refinement come after the planned ones; plots and files want them in
  // frequency order.
  std::vector<SweepPoint> points = stored;
  std::stable_sort(points.begin(), points.end(),
                   [](const SweepPoint& a, const SweepPoint& b) { return a.freq_hz < b.freq_hz; });
  nlohmann::json cols = nlohmann::json::object();
  cols["index"] = nlohmann::json::array();
  cols["freq_hz"] = nlohmann::json::array();
  for (const auto& c : columns_with_u())
    cols[c] = nlohmann::json::array();
  cols["error"] = nlohmann::json::array();
  for (const auto& p : points) {
    const auto reading = p.body.value("reading", nlohmann::json());
    cols["index"].push_back(p.index);
    cols["freq_hz"].push_back(reading.is_null() ? p.freq_hz : reading.value("freq_hz", p.freq_hz));
    for (const auto& c : columns_with_u())
      cols[c].push_back(value_of(reading, c));
    const auto err = p.body.find("error");
    cols["error"].push_back(err == p.body.end() ? nlohmann::json()
                                                : nlohmann::json(err->value("id", "")));
  }
  return cols;
}

std::string csv_field(const std::string& text) {
  const std::string guarded =
      !text.empty() && std::string_view("=+-@\t\r").find(text[0]) != std::string_view::npos
          ? "'" + text
          : text;
  if (guarded.find_first_of(",\"\r\n") == std::string::npos) return guarded;
  std::string q = "\"";
  for (char c : guarded)
    q += c == '"' ? std::string("\"\"") : std::string(1, c);
  return q + "\"";
}

std::string sweep_csv(const SweepRecord& sweep, const std::vector<SweepPoint>& points) {
  std::ostringstream out;
  out << "# tonebridge sweep " << sweep.id << ", " << to_string(sweep.status) << ", started "
      << sweep.started_at << "\n";
  const auto cols = sweep_columns(points);
  std::vector<std::string> names{"index", "freq_hz"};
  names.insert(names.end(), columns_with_u().begin(), columns_with_u().end());
  names.push_back("error");
  for (std::size_t i = 0; i < names.size(); ++i)
    out << (i ? "," : "") << names[i];
  out << "\n";
  for (std::size_t row = 0; row < points.size(); ++row) {
    for (std::size_t i = 0; i < names.size(); ++i)
      out << (i ? "," : "") << cell(cols[names[i]][row]);
    out << "\n";
  }
  return out.str();
}

std::string readings_csv(const std::vector<ReadingRecord>& readings) {
  std::ostringstream out;
  std::vector<std::string> names{"freq_hz"};
  names.insert(names.end(), columns_with_u().begin(), columns_with_u().end());
  names.insert(names.end(), {"layout", "rref_ohm", "test_voltage_vrms"});
  out << "id,taken_at,origin,part_id";
  for (const auto& n : names)
    out << "," << n;
  out << "\n";
  for (const auto& r : readings) {
    out << r.id << "," << r.taken_at << "," << cell(r.origin) << ","
        << (r.part_id ? std::to_string(*r.part_id) : "");
    for (const auto& n : names)
      out << "," << cell(value_of(r.body, n));
    out << "\n";
  }
  return out.str();
}

nlohmann::json to_json(const SweepRecord& s) {
  return {{"id", s.id},
          {"started_at", s.started_at},
          {"ended_at", s.ended_at.empty() ? nlohmann::json() : nlohmann::json(s.ended_at)},
          {"status", to_string(s.status)},
          {"partial", s.status != SweepStatus::complete && s.status != SweepStatus::running},
          {"label", s.label},
          {"part_id", s.part_id ? nlohmann::json(*s.part_id) : nlohmann::json()},
          {"role", s.part_id ? nlohmann::json(to_string(s.role)) : nlohmann::json()},
          {"params", s.params},
          {"end", s.end},
          {"points_saved", s.points_saved},
          {"points_planned", s.points_planned}};
}

nlohmann::json to_json(const ReadingRecord& r) {
  nlohmann::json j = r.body;
  j["id"] = r.id;
  j["taken_at"] = r.taken_at;
  j["origin"] = r.origin;
  j["part_id"] = r.part_id ? nlohmann::json(*r.part_id) : nlohmann::json();
  j["role"] = r.part_id ? nlohmann::json(to_string(r.role)) : nlohmann::json();
  return j;
}

}  // namespace tb
