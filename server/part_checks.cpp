#include "server/part_checks.hpp"

#include <cmath>
#include <complex>
#include <numbers>
#include <sstream>

#include "server/error.hpp"

namespace tb {

namespace {

constexpr double kDeg = std::numbers::pi / 180;

double number_at(const nlohmann::json& j, const char* key) {
  const auto it = j.find(key);
  return it != j.end() && it->is_number() ? it->get<double>() : std::nan("");
}

// Terms every reading on one set-up has in common: the reference resistor and the stored
// calibrations (their own Type A, hum and interpolation included). The rest (Type A, the
// reading's hum, reconnection, uncorrected leads) differs from part to part.
bool shared_term(const std::string& name) {
  for (const char* p : {"rref_", "channel_match", "interpolation", "open", "short", "load",
                        "calibration", "card_input", "swap_input"})
    if (name.rfind(p, 0) == 0) return true;
  return false;
}

struct Split {
  double shared_rel2 = 0, independent_rel2 = 0;
};

// Relative contribution of each budget term to the kind's primary value: C and L follow X,
// R follows the real part.
Split split_budget(const nlohmann::json& reading, dsp::PartKind kind) {
  Split s;
  const double re = number_at(reading, "z_real_ohm"), im = number_at(reading, "z_imag_ohm");
  const double scale = kind == dsp::PartKind::resistor ? std::abs(re) : std::abs(im);
  if (!(scale > 0)) return s;
  const auto budget = reading.value("uncertainty", nlohmann::json::object())
                          .value("budget", nlohmann::json::array());
  for (const auto& t : budget) {
    const double u =
        kind == dsp::PartKind::resistor ? number_at(t, "u_real_ohm") : number_at(t, "u_imag_ohm");
    if (!std::isfinite(u)) continue;
    const double rel2 = (u / scale) * (u / scale);
    if (shared_term(t.value("name", ""))) {
      s.shared_rel2 += rel2;
    } else {
      s.independent_rel2 += rel2;
    }
  }
  return s;
}

dsp::PartKind reading_kind(const nlohmann::json& reading) {
  const std::string k = reading.value("kind", "");
  if (k == "C") return dsp::PartKind::capacitor;
  if (k == "L") return dsp::PartKind::inductor;
  return dsp::PartKind::resistor;
}

std::string kind_word(dsp::PartKind k) {
  return k == dsp::PartKind::capacitor  ? "capacitor"
         : k == dsp::PartKind::inductor ? "inductor"
                                        : "resistor";
}

bool same_setup(const nlohmann::json& a, const nlohmann::json& b) {
  const double fa = number_at(a, "freq_hz"), fb = number_at(b, "freq_hz");
  return number_at(a, "rref_ohm") == number_at(b, "rref_ohm") &&
         a.value("layout", "") == b.value("layout", "") && std::abs(fa / fb - 1) < 1e-3;
}

void refuse_indicative(const nlohmann::json& reading) {
  if (reading.value("indicative", false)) {
    throw Error("check.indicative",
                "the reading was taken in circuit: other parts in parallel change it, so it "
                "cannot be judged",
                "lift one leg of the part out of the circuit and measure it again");
  }
}

nlohmann::json measured_json(const PrimaryValue& p, const nlohmann::json& reading) {
  return {{"name", p.name},
          {"unit", p.unit},
          {"value", p.value},
          {"expanded_u", p.expanded_u},
          {"freq_hz", number_at(reading, "freq_hz")},
          {"text", dsp::format_si(p.value, p.unit) + " ± " + dsp::format_si(p.expanded_u, p.unit) +
                       " at " + dsp::format_si(number_at(reading, "freq_hz"), "Hz")}};
}

// Verdict functions take std::invalid_argument for impossible inputs; the API reports them
// as a bad check.
template <class F>
auto checked(F&& f) {
  try {
    return f();
  } catch (const std::invalid_argument& e) {
    throw Error("check.bad_input", e.what(), "check the readings and values given");
  }
}

}  // namespace

std::optional<dsp::PartKind> parse_kind(const std::string& text) {
  if (text.empty() || text == "auto") return std::nullopt;
  if (text == "C" || text == "capacitor") return dsp::PartKind::capacitor;
  if (text == "L" || text == "inductor") return dsp::PartKind::inductor;
  if (text == "R" || text == "resistor") return dsp::PartKind::resistor;
  throw Error("request.bad_value", "no part kind '" + text + "'",
              "use capacitor, inductor or resistor (or C, L, R)");
}

PrimaryValue primary_value(const nlohmann::json& reading, dsp::PartKind kind) {
  PrimaryValue p;
  p.kind = kind;
  const auto u = reading.value("uncertainty", nlohmann::json::object());
  const char* key = kind == dsp::PartKind::capacitor  ? "cs_f"
                    : kind == dsp::PartKind::inductor ? "ls_h"
                                                      : "rs_ohm";
  p.name = kind == dsp::PartKind::capacitor ? "Cs" : kind == dsp::PartKind::inductor ? "Ls" : "Rs";
  p.unit = kind == dsp::PartKind::capacitor ? "F" : kind == dsp::PartKind::inductor ? "H" : "Ω";
  p.value = number_at(reading, key);
  p.expanded_u = number_at(u, kind == dsp::PartKind::resistor ? "z_real_ohm" : key);
  if (!(p.value > 0) || !std::isfinite(p.expanded_u)) {
    throw Error("check.not_measured",
                "the reading has no " + kind_word(kind) + " value (" + p.name + ") to judge",
                "measure the part again; a reading of another kind cannot be judged as a " +
                    kind_word(kind));
  }
  const auto s = split_budget(reading, kind);
  p.u_shared = p.value * std::sqrt(s.shared_rel2);
  p.u_independent = p.value * std::sqrt(s.independent_rel2);
  return p;
}

nlohmann::json to_json(const dsp::PartMarking& m) {
  return {{"kind", kind_word(m.kind)},
          {"nominal", m.nominal},
          {"unit", m.kind == dsp::PartKind::capacitor  ? "F"
                   : m.kind == dsp::PartKind::inductor ? "H"
                                                       : "Ω"},
          {"lower", m.lower},
          {"upper", m.upper},
          {"tolerance_minus_pct", m.tol_minus_rel * 100},
          {"tolerance_plus_pct", m.tol_plus_rel * 100},
          {"has_tolerance", m.has_tolerance},
          {"tolerance_absolute", m.tolerance_absolute},
          {"rated_voltage_v",
           m.rated_voltage_v ? nlohmann::json(*m.rated_voltage_v) : nlohmann::json()},
          {"canonical", m.canonical},
          {"read_as", m.read_as}};
}

nlohmann::json to_json(const dsp::LimitCheck& c) {
  auto lim = [](double v) { return std::isfinite(v) ? nlohmann::json(v) : nlohmann::json(); };
  return {{"outcome", std::string(dsp::verdict_name(c.verdict))},
          {"value", c.value},
          {"expanded_u", c.expanded_u},
          {"lower_limit", lim(c.lower_limit)},
          {"upper_limit", lim(c.upper_limit)},
          {"accept_low", lim(c.accept_low)},
          {"accept_high", lim(c.accept_high)},
          {"reject_low", lim(c.reject_low)},
          {"reject_high", lim(c.reject_high)},
          {"margin_pct", c.margin_pct},
          {"sentence", c.sentence},
          {"rule", "ISO 14253-1, guard band = U (k = 2)"}};
}

nlohmann::json marking_json(const std::string& text, std::optional<dsp::PartKind> kind) {
  const auto m = dsp::parse_marking(text, kind);
  auto j = to_json(m);
  nlohmann::json nearest = nlohmann::json::array();
  for (auto s : {dsp::ESeries::E6, dsp::ESeries::E12, dsp::ESeries::E24, dsp::ESeries::E48,
                 dsp::ESeries::E96}) {
    const auto p = dsp::nearest_preferred(m.nominal, s);
    nearest.push_back({{"series", std::string(dsp::series_name(s))},
                       {"value", p.value},
                       {"deviation_pct", p.deviation_pct}});
  }
  j["nearest_preferred"] = nearest;
  const auto member = dsp::smallest_series_of(m.nominal);
  j["series"] = member ? nlohmann::json(std::string(dsp::series_name(*member))) : nlohmann::json();
  return j;
}

nlohmann::json tolerance_verdict(const nlohmann::json& reading, const std::string& marking,
                                 std::optional<dsp::PartKind> kind) {
  refuse_indicative(reading);
  const auto measured_kind = reading_kind(reading);
  const auto m = dsp::parse_marking(marking, kind ? kind : std::optional(measured_kind));
  if (m.kind != measured_kind && !reading.value("kind_forced", false)) {
    throw Error("check.kind_mismatch",
                "the marking '" + marking + "' is a " + kind_word(m.kind) +
                    "'s, but the reading shows a " + kind_word(measured_kind),
                "check that the right part is on the jig, or take the reading again with the "
                "kind forced to " +
                    kind_word(m.kind));
  }
  if (!m.has_tolerance) {
    throw Error("check.no_tolerance", "the marking '" + marking + "' gives no tolerance",
                "add the tolerance letter (J = ±5 %, K = ±10 %) or a tolerance such as 5%");
  }
  const auto p = primary_value(reading, m.kind);
  const auto c = checked([&] {
    return dsp::check_limits(p.value, p.expanded_u, m.lower, m.upper, m.nominal, p.unit);
  });
  nlohmann::json notes = nlohmann::json::array();
  const double f = number_at(reading, "freq_hz");
  if (m.kind == dsp::PartKind::capacitor) {
    const bool low = std::abs(f - 100) < 2 || std::abs(f - 120) < 2;
    const bool kilo = std::abs(f - 1000) < 10;
    if (m.nominal > 10e-6 && !low) {
      notes.push_back(
          "capacitors above 10 µF are specified at 100 or 120 Hz (IEC 60384-4); "
          "this reading is at " +
          dsp::format_si(f, "Hz"));
    } else if (m.nominal <= 10e-6 && !kilo) {
      notes.push_back(
          "film and ceramic capacitors are specified at 1 kHz (IEC 60384-1); this "
          "reading is at " +
          dsp::format_si(f, "Hz"));
    }
  }
  return {{"kind", "tolerance"},   {"outcome", std::string(dsp::verdict_name(c.verdict))},
          {"text", c.sentence},    {"check", to_json(c)},
          {"marking", to_json(m)}, {"measured", measured_json(p, reading)},
          {"notes", notes}};
}

nlohmann::json loss_verdict(const nlohmann::json& reading, const std::string& marking,
                            std::optional<double> rated_voltage_v) {
  refuse_indicative(reading);
  std::optional<dsp::PartMarking> m;
  if (!marking.empty()) m = dsp::parse_marking(marking, dsp::PartKind::capacitor);
  const double volts = rated_voltage_v.value_or(m && m->rated_voltage_v ? *m->rated_voltage_v : 0);
  if (!(volts > 0)) {
    throw Error("check.no_rated_voltage", "the loss limit depends on the rated voltage",
                "give rated_voltage_v, or a marking with the voltage, e.g. \"2200µF 25V\"");
  }
  if (reading_kind(reading) != dsp::PartKind::capacitor) {
    throw Error("check.kind_mismatch", "the reading does not show a capacitor",
                "check that the electrolytic is on the jig");
  }
  const double f = number_at(reading, "freq_hz");
  const double test_f = std::abs(f - 120) <= 1 ? 120 : std::abs(f - 100) <= 1 ? 100 : 0;
  if (test_f == 0) {
    throw Error("check.wrong_frequency",
                "the loss limit of electrolytics holds at 100 or 120 Hz; this reading is at " +
                    dsp::format_si(f, "Hz"),
                "measure at 120 Hz (50 Hz mains) or 100 Hz (60 Hz mains)");
  }
  const auto p = primary_value(reading, dsp::PartKind::capacitor);
  const double c_f = m ? m->nominal : p.value;
  const auto limit = checked([&] { return dsp::electrolytic_loss_limit(c_f, volts, test_f); });
  const double d = number_at(reading, "d");
  const double u_d = number_at(reading.value("uncertainty", nlohmann::json::object()), "d");
  if (!std::isfinite(d) || !std::isfinite(u_d)) {
    throw Error("check.not_measured", "the reading has no dissipation factor D",
                "measure the capacitor again");
  }
  const auto c = checked([&] { return dsp::check_electrolytic_loss(d, u_d, limit); });
  return {{"kind", "loss"},
          {"outcome", std::string(dsp::verdict_name(c.verdict))},
          {"text", c.sentence},
          {"check", to_json(c)},
          {"limit",
           {{"tan_delta_max", limit.tan_delta_max},
            {"freq_hz", limit.freq_hz},
            {"reactance_ohm", limit.reactance_ohm},
            {"esr_max_ohm", limit.esr_max_ohm},
            {"rated_voltage_v", volts},
            {"source",
             "usual maximum tan δ of general-purpose aluminium electrolytics by rated voltage: "
             "common datasheet practice, not a standard"}}},
          {"measured",
           {{"d", d},
            {"expanded_u_d", u_d},
            {"esr_ohm", number_at(reading, "esr_ohm")},
            {"freq_hz", f}}}};
}

namespace {

std::vector<dsp::PartReading> part_readings(const std::vector<nlohmann::json>& readings,
                                            bool& shared_used, dsp::PartKind& kind,
                                            std::string& unit) {
  if (readings.size() < 2) {
    throw Error("check.too_few", "matching needs at least two readings",
                "give two or more reading ids");
  }
  kind = reading_kind(readings.front());
  shared_used = true;
  for (const auto& r : readings) {
    refuse_indicative(r);
    if (reading_kind(r) != kind) {
      throw Error("check.mixed_kinds", "the readings are not all of one kind of part",
                  "match capacitors with capacitors, inductors with inductors");
    }
    if (!same_setup(readings.front(), r)) shared_used = false;
  }
  std::vector<dsp::PartReading> out;
  for (const auto& r : readings) {
    const auto p = primary_value(r, kind);
    unit = p.unit;
    if (shared_used) {
      out.push_back({p.value, p.u_independent, p.u_shared});
    } else {
      out.push_back({p.value, std::hypot(p.u_independent, p.u_shared), 0});
    }
  }
  return out;
}

nlohmann::json spread_json(const dsp::Spread& s) {
  return {{"spread_pct", s.spread_pct}, {"u_pct", s.u_pct}, {"expanded_pct", s.expanded_pct}};
}

std::string setup_note(bool shared_used) {
  return shared_used ? "same set-up: the reference resistor and calibration terms are common to "
                       "all readings and cancel in the spread"
                     : "the readings were taken on different set-ups (Rref, layout or "
                       "frequency): every uncertainty term counts in the spread";
}

}  // namespace

nlohmann::json match_json(const std::vector<nlohmann::json>& readings,
                          const std::vector<std::int64_t>& ids,
                          std::optional<double> max_spread_pct) {
  bool shared = true;
  dsp::PartKind kind{};
  std::string unit;
  const auto parts = part_readings(readings, shared, kind, unit);
  const auto s = checked([&] { return dsp::set_spread(parts); });
  nlohmann::json j = {
      {"kind", "match"},           {"part_kind", kind_word(kind)}, {"reading_ids", ids},
      {"spread", spread_json(s)},  {"lowest_id", ids.at(s.low)},   {"highest_id", ids.at(s.high)},
      {"note", setup_note(shared)}};
  if (max_spread_pct) {
    const auto c = checked([&] { return dsp::check_match(s, *max_spread_pct); });
    j["outcome"] = std::string(dsp::verdict_name(c.verdict));
    j["text"] = c.sentence;
    j["check"] = to_json(c);
  }
  return j;
}

nlohmann::json pairs_json(const std::vector<nlohmann::json>& readings,
                          const std::vector<std::int64_t>& ids) {
  bool shared = true;
  dsp::PartKind kind{};
  std::string unit;
  const auto parts = part_readings(readings, shared, kind, unit);
  const auto bag = checked([&] { return dsp::sort_into_pairs(parts); });
  nlohmann::json pairs = nlohmann::json::array();
  for (const auto& p : bag.pairs) {
    pairs.push_back({{"reading_ids", {ids.at(p.first), ids.at(p.second)}},
                     {"values", {parts[p.first].value, parts[p.second].value}},
                     {"unit", unit},
                     {"spread", spread_json(p.spread)}});
  }
  return {{"kind", "pairs"},
          {"part_kind", kind_word(kind)},
          {"pairs", pairs},
          {"left_out_id", bag.left_out ? nlohmann::json(ids.at(*bag.left_out)) : nlohmann::json()},
          {"worst_spread_pct", bag.worst_spread_pct},
          {"total_spread_pct", bag.total_spread_pct},
          {"note", setup_note(shared)}};
}

namespace {

std::vector<dsp::SweepPoint> curve_points(const std::vector<nlohmann::json>& bodies) {
  std::vector<dsp::SweepPoint> out;
  for (const auto& b : bodies) {
    const auto r = b.value("reading", nlohmann::json());
    if (!r.is_object()) continue;
    const std::complex<double> z(number_at(r, "z_real_ohm"), number_at(r, "z_imag_ohm"));
    const double mag = std::abs(z);
    if (!std::isfinite(mag) || !(mag > 0)) continue;
    // Only the terms that differ from sweep to sweep: Type A and the like (see above).
    double ur2 = 0, ui2 = 0;
    const auto budget =
        r.value("uncertainty", nlohmann::json::object()).value("budget", nlohmann::json::array());
    for (const auto& t : budget) {
      if (shared_term(t.value("name", ""))) continue;
      const double a = number_at(t, "u_real_ohm"), c = number_at(t, "u_imag_ohm");
      if (std::isfinite(a)) ur2 += a * a;
      if (std::isfinite(c)) ui2 += c * c;
    }
    const double th = std::arg(z), cs = std::cos(th), sn = std::sin(th);
    const double u_mag = std::sqrt(cs * cs * ur2 + sn * sn * ui2);
    const double u_ph = std::sqrt(sn * sn * ur2 + cs * cs * ui2) / mag / kDeg;
    out.push_back({number_at(r, "freq_hz"), z, u_mag, u_ph});
  }
  std::sort(out.begin(), out.end(),
            [](const auto& a, const auto& b) { return a.freq_hz < b.freq_hz; });
  // Two points on one frequency (a refined sweep can repeat a bin): keep the first.
  out.erase(std::unique(out.begin(), out.end(),
                        [](const auto& a, const auto& b) { return a.freq_hz >= b.freq_hz; }),
            out.end());
  return out;
}

}  // namespace

nlohmann::json compare_json(const std::vector<nlohmann::json>& first,
                            const std::vector<nlohmann::json>& second) {
  const auto a = curve_points(first), b = curve_points(second);
  if (a.empty() || b.empty()) {
    throw Error("check.not_measured", "a sweep to compare has no measured points",
                "compare two sweeps that completed at least part of their range");
  }
  const auto c = checked([&] { return dsp::compare_curves(a, b); });
  nlohmann::json cols = {
      {"freq_hz", nlohmann::json::array()},     {"mag_diff_pct", nlohmann::json::array()},
      {"mag_u_pct", nlohmann::json::array()},   {"phase_diff_deg", nlohmann::json::array()},
      {"phase_u_deg", nlohmann::json::array()}, {"agrees", nlohmann::json::array()}};
  for (const auto& p : c.points) {
    cols["freq_hz"].push_back(p.freq_hz);
    cols["mag_diff_pct"].push_back(p.mag_diff_pct);
    cols["mag_u_pct"].push_back(p.mag_u_pct);
    cols["phase_diff_deg"].push_back(p.phase_diff_deg);
    cols["phase_u_deg"].push_back(p.phase_u_deg);
    cols["agrees"].push_back(p.agrees);
  }
  std::ostringstream text;
  text << "largest |Z| difference " << c.largest_mag_diff_pct << " % at "
       << dsp::format_si(c.largest_mag_freq_hz, "Hz") << ", largest phase difference "
       << c.largest_phase_diff_deg << "° at " << dsp::format_si(c.largest_phase_freq_hz, "Hz")
       << (c.agree_everywhere ? ": the curves agree within their uncertainty"
                              : ": the curves differ by more than their uncertainty");
  return {{"kind", "compare"},
          {"agree_everywhere", c.agree_everywhere},
          {"largest_mag_diff_pct", c.largest_mag_diff_pct},
          {"largest_mag_freq_hz", c.largest_mag_freq_hz},
          {"largest_phase_diff_deg", c.largest_phase_diff_deg},
          {"largest_phase_freq_hz", c.largest_phase_freq_hz},
          {"points_skipped", c.skipped},
          {"columns", cols},
          {"text", text.str()},
          {"note",
           "uncertainties hold the terms that differ between sweeps (Type A, hum, "
           "reconnection); a shared reference resistor and calibration cancel"}};
}

}  // namespace tb
