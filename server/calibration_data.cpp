#include "server/calibration_data.hpp"

#include <cmath>

#include "server/error.hpp"

namespace tb {

namespace {

const nlohmann::json* point_at(const CalibrationRecord& c, double freq_hz) {
  const auto it = c.body.find("points");
  if (it == c.body.end() || !it->is_array()) return nullptr;
  for (const auto& p : *it) {
    const double f = p.value("freq_hz", 0.0);
    if (f > 0 && std::abs(f - freq_hz) <= 1e-3 * freq_hz) return &p;
  }
  return nullptr;
}

nlohmann::json used(const CalibrationRecord& c) {
  return {{"id", c.id}, {"taken_at", c.taken_at}};
}

}  // namespace

nlohmann::json to_json(const dsp::UncertainComplex& z) {
  nlohmann::json b = nlohmann::json::array();
  for (const auto& t : z.type_b) {
    b.push_back({{"name", t.name},
                 {"s_re", t.sensitivity.real()},
                 {"s_im", t.sensitivity.imag()},
                 {"u", t.u},
                 {"dof", t.dof}});
  }
  return {{"re", z.value.real()},
          {"im", z.value.imag()},
          {"cov_rr", z.type_a.rr},
          {"cov_ri", z.type_a.ri},
          {"cov_ii", z.type_a.ii},
          {"dof_a", z.dof_a},
          {"type_b", b}};
}

dsp::UncertainComplex uncertain_complex_from_json(const nlohmann::json& j) {
  try {
    dsp::UncertainComplex z;
    z.value = {j.at("re").get<double>(), j.at("im").get<double>()};
    z.type_a = {j.at("cov_rr").get<double>(), j.at("cov_ri").get<double>(),
                j.at("cov_ii").get<double>()};
    z.dof_a = j.at("dof_a").get<double>();
    for (const auto& t : j.at("type_b")) {
      z.type_b.push_back({t.at("name").get<std::string>(),
                          {t.at("s_re").get<double>(), t.at("s_im").get<double>()},
                          t.at("u").get<double>(),
                          t.at("dof").get<double>()});
    }
    return z;
  } catch (const nlohmann::json::exception& e) {
    throw Error("store.bad_record", std::string("a stored calibration is malformed: ") + e.what(),
                "delete that calibration and take it again");
  }
}

nlohmann::json channel_match_point(double freq_hz, const ChannelMatch& m) {
  return {{"freq_hz", freq_hz},
          {"h_re", m.h.real()},
          {"h_im", m.h.imag()},
          {"u_gain_rel", m.u_gain_rel},
          {"u_phase_rad", m.u_phase_rad}};
}

nlohmann::json impedance_point(double freq_hz, const dsp::UncertainComplex& z) {
  return {{"freq_hz", freq_hz}, {"z", to_json(z)}};
}

Corrections find_corrections(const Store& store, const CalibrationKey& key, double freq_hz,
                             double reconnect_half_width_ohm) {
  Corrections out;
  auto latest = [&](const char* kind) {
    return store.latest_calibration(kind, key.device, key.sample_rate_hz, key.layout, key.rref_ohm);
  };
  if (const auto cm = latest("channel_match"); cm && point_at(*cm, freq_hz)) {
    const auto& p = *point_at(*cm, freq_hz);
    ChannelMatch m;
    m.h = {p.value("h_re", 1.0), p.value("h_im", 0.0)};
    m.u_gain_rel = p.value("u_gain_rel", 0.0);
    m.u_phase_rad = p.value("u_phase_rad", 0.0);
    out.match = m;
    out.used["channel_match"] = used(*cm);
  } else {
    out.missing.push_back({"calibration.no_channel_match",
                           "no channel match at this frequency, layout and Rref: the two "
                           "inputs' mismatch is not divided out",
                           "take the channel-match calibration"});
  }
  const auto open = latest("open");
  const auto shorted = latest("short");
  const auto* po = open ? point_at(*open, freq_hz) : nullptr;
  const auto* ps = shorted ? point_at(*shorted, freq_hz) : nullptr;
  if (po && ps) {
    dsp::FixtureStandards s;
    s.open = uncertain_complex_from_json(po->at("z"));
    s.short_ = uncertain_complex_from_json(ps->at("z"));
    s.reconnect_half_width_ohm = reconnect_half_width_ohm;
    out.fixture = s;
    out.used["open"] = used(*open);
    out.used["short"] = used(*shorted);
  } else {
    out.missing.push_back({"calibration.no_open_short",
                           "no open/short compensation at this frequency, layout and Rref: the "
                           "leads and the card's input loading are not corrected",
                           "take the open and short calibrations"});
  }
  return out;
}

}  // namespace tb
