#include "server/calibration_data.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <ctime>
#include <limits>
#include <sstream>

#include "dsp/calibration_curve.hpp"
#include "server/error.hpp"

namespace tb {

namespace {

const nlohmann::json& points_of(const CalibrationRecord& c) {
  static const nlohmann::json none = nlohmann::json::array();
  const auto it = c.body.find("points");
  return it != c.body.end() && it->is_array() ? *it : none;
}

// A step's points in ascending frequency (a step is taken on a sorted grid, but a record
// written by hand or an older version need not be).
std::vector<nlohmann::json> sorted_points(const CalibrationRecord& c) {
  std::vector<nlohmann::json> p(points_of(c).begin(), points_of(c).end());
  std::sort(p.begin(), p.end(), [](const auto& x, const auto& y) {
    return x.value("freq_hz", 0.0) < y.value("freq_hz", 0.0);
  });
  return p;
}

std::vector<dsp::MatchPoint> match_points(const CalibrationRecord& c) {
  std::vector<dsp::MatchPoint> out;
  for (const auto& p : sorted_points(c)) {
    out.push_back({p.value("freq_hz", 0.0),
                   {p.value("h_re", 1.0), p.value("h_im", 0.0)},
                   p.value("u_gain_rel", 0.0),
                   p.value("u_phase_rad", 0.0)});
  }
  return out;
}

std::vector<dsp::ImpedancePoint> impedance_points(const CalibrationRecord& c) {
  std::vector<dsp::ImpedancePoint> out;
  for (const auto& p : sorted_points(c))
    out.push_back({p.value("freq_hz", 0.0), uncertain_complex_from_json(p.at("z"))});
  return out;
}

// Node A's level per unit of output at freq_hz, linear in log f between the step's points
// (it changes slowly: the card's output impedance); 0 when the step did not record it or
// freq_hz is outside its points.
double a_per_fs_at(const CalibrationRecord& c, double freq_hz) {
  const auto p = sorted_points(c);
  for (std::size_t i = 0; i < p.size(); ++i) {
    const double f1 = p[i].value("freq_hz", 0.0), a1 = p[i].value("a_per_fs", 0.0);
    if (std::abs(f1 - freq_hz) <= 1e-3 * freq_hz) return a1;
    if (i + 1 == p.size() || !(f1 < freq_hz)) continue;
    const double f2 = p[i + 1].value("freq_hz", 0.0), a2 = p[i + 1].value("a_per_fs", 0.0);
    if (!(freq_hz < f2) || !(a1 > 0) || !(a2 > 0)) continue;
    const double t = std::log(freq_hz / f1) / std::log(f2 / f1);
    return a1 + t * (a2 - a1);
  }
  return 0;
}

std::string range_of(const CalibrationRecord& c) {
  const auto p = sorted_points(c);
  if (p.empty()) return "no frequencies";
  std::ostringstream o;
  o << p.front().value("freq_hz", 0.0) << " Hz to " << p.back().value("freq_hz", 0.0) << " Hz";
  return o.str();
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

double hours_between(const std::string& earlier, const std::string& later) {
  auto parse = [](const std::string& t) {
    std::tm tm{};
    int ms = 0;
    if (std::sscanf(t.c_str(), "%d-%d-%dT%d:%d:%d.%dZ", &tm.tm_year, &tm.tm_mon, &tm.tm_mday,
                    &tm.tm_hour, &tm.tm_min, &tm.tm_sec, &ms) < 6)
      return std::numeric_limits<double>::quiet_NaN();
    tm.tm_year -= 1900;
    tm.tm_mon -= 1;
    return static_cast<double>(timegm(&tm)) + ms / 1000.0;
  };
  return (parse(later) - parse(earlier)) / 3600;
}

namespace {

std::string describe_key(const CalibrationRecord& c) {
  std::ostringstream o;
  o << c.device << ", " << c.sample_rate_hz / 1000 << " kHz";
  if (c.layout != kAnyLayout) o << ", " << c.layout << ", Rref " << c.rref_ohm << " ohm";
  return o.str();
}

// The newest record of `kind` for this device whose set-up differs from `key`, if any:
// it is not applied, and the reading says so (a calibration of another rate, layout or
// Rref would correct the wrong thing).
std::optional<CalibrationRecord> other_setup(const std::vector<CalibrationRecord>& recent,
                                             const std::string& kind, const CalibrationKey& key) {
  for (const auto& c : recent) {
    if (c.kind != kind) continue;
    const bool same =
        c.device == key.device && c.sample_rate_hz == key.sample_rate_hz &&
        (c.layout == kAnyLayout || (c.layout == key.layout && c.rref_ohm == key.rref_ohm));
    if (!same) return c;
    return std::nullopt;  // the newest of this kind matches: nothing to report
  }
  return std::nullopt;
}

}  // namespace

Corrections find_corrections(const Store& store, const CalibrationKey& key, double freq_hz,
                             const CorrectionPolicy& policy) {
  Corrections out;
  // Read only when a correction is missing (not on every reading of a calibrated jig).
  std::optional<std::vector<CalibrationRecord>> recent;
  auto latest = [&](const char* kind) {
    return store.latest_calibration(kind, key.device, key.sample_rate_hz, key.layout, key.rref_ohm);
  };
  auto note_use = [&](const char* kind, const CalibrationRecord& c) {
    out.used[kind] = used(c);
    const double age_h = hours_between(c.taken_at, policy.now_iso);
    if (std::isfinite(age_h) && age_h > policy.max_age_h) {
      out.missing.push_back({"calibration.stale",
                             std::string("the ") + kind + " calibration is " +
                                 std::to_string(static_cast<int>(age_h)) + " hours old (limit " +
                                 std::to_string(static_cast<int>(policy.max_age_h)) + " h)",
                             std::string("take the ") + kind +
                                 " calibration again (calibration_max_age_h sets the limit)"});
    }
  };
  auto note_missing = [&](const char* kind, ReadingNotice notice) {
    if (!recent) recent = store.calibrations(200);
    if (const auto other = other_setup(*recent, kind, key)) {
      notice.message += "; the newest " + std::string(kind) + " calibration (" + other->taken_at +
                        ") was taken for " + describe_key(*other) + " and is not applied here";
    }
    out.missing.push_back(std::move(notice));
  };

  const auto cm = latest("channel_match");
  const auto est = cm ? dsp::interpolate_match(match_points(*cm), freq_hz) : std::nullopt;
  if (est) {
    ChannelMatch m;
    m.h = est->h;
    m.u_gain_rel = est->u_gain_rel;
    m.u_phase_rad = est->u_phase_rad;
    m.interp_gain_u_rel = dsp::rectangular_u(est->interp_gain_half_rel);
    m.interp_phase_u_rad = dsp::rectangular_u(est->interp_phase_half_rad);
    out.match = m;
    note_use("channel_match", *cm);
  } else if (cm) {
    note_missing("channel_match",
                 {"calibration.no_channel_match",
                  "the channel match covers " + range_of(*cm) + ", not " +
                      std::to_string(static_cast<int>(std::lround(freq_hz))) +
                      " Hz: the two inputs' mismatch is not divided out",
                  "take the channel-match calibration on the default grid, or at this "
                  "frequency"});
  } else {
    note_missing("channel_match",
                 {"calibration.no_channel_match",
                  "no channel match at this frequency, layout and Rref: the two inputs' "
                  "mismatch is not divided out",
                  "take the channel-match calibration"});
  }
  const auto open = latest("open");
  const auto shorted = latest("short");
  const auto zo = open ? dsp::interpolate_open(impedance_points(*open), freq_hz) : std::nullopt;
  const auto zs =
      shorted ? dsp::interpolate_short(impedance_points(*shorted), freq_hz) : std::nullopt;
  if (zo && zs) {
    dsp::FixtureStandards s;
    s.open = *zo;
    s.short_ = *zs;
    s.reconnect_half_width_ohm = policy.reconnect_half_width_ohm;
    note_use("open", *open);
    note_use("short", *shorted);
    // The load, when taken for this set-up, sets the absolute scale (open/short/load).
    if (const auto load = latest("load")) {
      const double known = load->body.value("load_ohm", 0.0);
      if (const auto zl = dsp::interpolate_load(impedance_points(*load), freq_hz);
          zl && known > 0) {
        s.load = dsp::LoadStandard{*zl, known, load->body.value("load_tolerance_rel", 0.0)};
        note_use("load", *load);
      }
    }
    out.fixture = s;
    const double ao = a_per_fs_at(*open, freq_hz), as = a_per_fs_at(*shorted, freq_hz);
    if (ao > 0 && as > 0)
      out.source = dsp::SourceReference{ao, as, 1.0 / (key.rref_ohm + s.short_.value)};
  } else {
    const char* lacking = zo ? "short" : "open";
    note_missing(lacking,
                 {"calibration.no_open_short",
                  std::string("no ") + lacking +
                      " calibration covering this frequency, layout and Rref: the leads and "
                      "the card's input loading are not corrected",
                  "take the open and short calibrations (on the default grid they cover "
                  "20 Hz to 0.4 of the sample rate)"});
  }
  if (const auto level =
          store.latest_calibration("level", key.device, key.sample_rate_hz, kAnyLayout, 0)) {
    const double v = level->body.value("volts_per_fs", 0.0);
    if (v > 0) {
      out.volts_per_fs = v;
      note_use("level", *level);
    }
  }
  return out;
}

void check_level_drift(const Corrections& corrections, const MeasureResult& result,
                       const MeasureRequest& request, std::vector<ReadingNotice>& notices) {
  if (!corrections.source || !(result.level_fs > 0)) return;
  const auto y = 1.0 / (request.rref_ohm + result.reading.z.value);
  const auto c =
      dsp::check_source_drift(*corrections.source, result.reading.level_a / result.level_fs, y);
  if (!c.drifted) return;
  std::ostringstream m;
  m.precision(2);
  m << std::fixed << "the level at node A is " << 20 * std::log10(1 + c.change_rel)
    << " dB from the open step's, more than the jig's loading explains: a gain or volume "
       "control was moved since the calibration";
  notices.push_back({"calibration.drifted", m.str(),
                     "put the control back, or take the calibrations again (or use "
                     "swap-and-average readings, which need no channel match)"});
}

}  // namespace tb
