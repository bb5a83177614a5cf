#include "server/store_sink.hpp"

namespace tb {

namespace {

std::optional<std::int64_t> part_of(const nlohmann::json& j) {
  const auto it = j.find("part_id");
  if (it == j.end() || !it->is_number_integer()) return std::nullopt;
  return it->get<std::int64_t>();
}

// The role a reading's event or a sweep's params carry with a part_id; original if none.
PartRole role_of(const nlohmann::json& j) {
  return parse_part_role(j.value("role", "original")).value_or(PartRole::original);
}

SweepStatus sweep_status(const std::string& s) {
  if (s == "complete") return SweepStatus::complete;
  if (s == "cancelled") return SweepStatus::cancelled;
  if (s == "interrupted") return SweepStatus::interrupted;
  return SweepStatus::failed;
}

}  // namespace

void StoreSink::deliver(EngineEvent& e) {
  auto& d = e.data;
  if (e.type == "reading") {
    d["id"] = store_.add_reading(d.value("origin", "single"), d, part_of(d), role_of(d));
  } else if (e.type == "sweep.begin") {
    d["sweep_id"] = store_.begin_sweep(d.at("params"), d.value("points_planned", 0),
                                       d.value("label", ""), part_of(d), role_of(d.at("params")));
  } else if (e.type == "sweep.point") {
    SweepPoint p;
    p.index = d.at("index").get<int>();
    p.freq_hz = d.at("freq_hz").get<double>();
    p.body = d;
    store_.add_sweep_point(d.at("sweep_id").get<std::int64_t>(), p);
  } else if (e.type == "sweep.replanned") {
    store_.set_points_planned(d.at("sweep_id").get<std::int64_t>(),
                              d.at("points_planned").get<int>());
  } else if (e.type == "sweep.end") {
    store_.end_sweep(d.at("sweep_id").get<std::int64_t>(),
                     sweep_status(d.value("status", "failed")), d.at("error"));
  } else if (e.type == "calibration") {
    CalibrationRecord c;
    c.kind = d.at("kind").get<std::string>();
    c.device = d.at("device").get<std::string>();
    c.sample_rate_hz = d.at("sample_rate_hz").get<double>();
    c.layout = d.at("layout").get<std::string>();
    c.rref_ohm = d.at("rref_ohm").get<double>();
    // Everything but the key is the record's body (points, and a step's own values such
    // as the load's nominal value or the level's meter reading).
    c.body = d;
    for (const char* k : {"kind", "device", "sample_rate_hz", "layout", "rref_ohm"})
      c.body.erase(k);
    d["id"] = store_.add_calibration(c);
  }
}

}  // namespace tb
