#include "server/calibration_guide.hpp"

#include <algorithm>
#include <cmath>

namespace tb {

const std::vector<CalibrationStep>& calibration_steps() {
  static const std::vector<CalibrationStep> steps = {
      {"level", "Test level",
       "Take the part out of the jig. Play the test tone (POST /api/v1/tone, or `tonebridge "
       "calibrate` plays it for you), read node A with an AC multimeter on its volts range, "
       "and enter that reading.",
       "turns full scale into volts: every reading then states its test voltage and "
       "current, and the part-voltage caps (electrolytics, in-circuit) can be kept",
       "img/calibration-level.svg", true},
      {"channel_match", "Channel match",
       "Connect both inputs to node A (the card-output side of the reference resistor). The "
       "part may stay in the jig.",
       "divides out the difference between the two inputs' gain and phase",
       "img/calibration-channel-match.svg", false},
      {"open", "Open",
       "Take the part out. Leave the clips or probes apart, in the position the part "
       "holds them, so their capacitance is what it will be in use.",
       "removes the jig's and the card's shunt admittance (leads, input B's loading)",
       "img/calibration-open.svg", false},
      {"short", "Short",
       "Clip the two leads together, or bridge the part's terminals with a short, thick "
       "copper strap.",
       "removes the leads' and contacts' series resistance and inductance",
       "img/calibration-short.svg", false},
      {"load", "Load",
       "Put a resistor of known value in the jig, near the reference resistor's value, "
       "known better than the accuracy you want (for example 0.01 % from a calibrated "
       "meter), and enter its value and tolerance.",
       "takes the absolute scale from that resistor instead of the reference resistor's "
       "tolerance, and removes what open and short leave (crosstalk, the reference's own "
       "error)",
       "img/calibration-load.svg", true},
  };
  return steps;
}

const CalibrationStep* find_calibration_step(std::string_view kind) {
  for (const auto& s : calibration_steps())
    if (s.kind == kind) return &s;
  return nullptr;
}

std::vector<double> calibration_grid_hz(double sample_rate_hz) {
  const double top = std::min(20000.0, 0.4 * sample_rate_hz);
  std::vector<double> g = {100, 120, 1000, 10000};
  for (int i = 0;; ++i) {
    const double f = std::round(20 * std::pow(10.0, i / 3.0) / 10) * 10;
    if (f > top + 1e-9) break;
    g.push_back(f);
  }
  if (g.back() < top) g.push_back(std::floor(top / 100) * 100);
  std::sort(g.begin(), g.end());
  g.erase(std::unique(g.begin(), g.end()), g.end());
  g.erase(std::remove_if(g.begin(), g.end(), [&](double f) { return f > top + 1e-9; }), g.end());
  return g;
}

nlohmann::json calibration_guide(const Store& store, const CalibrationKey& key, double max_age_h,
                                 const std::string& now_iso) {
  const auto grid = calibration_grid_hz(key.sample_rate_hz);
  nlohmann::json steps = nlohmann::json::array();
  nlohmann::json next = nullptr;
  for (const auto& step : calibration_steps()) {
    const bool level = step.kind == "level";
    const auto c =
        store.latest_calibration(step.kind, key.device, key.sample_rate_hz,
                                 level ? kAnyLayout : key.layout, level ? 0 : key.rref_ohm);
    nlohmann::json j = {
        {"kind", step.kind},   {"title", step.title},       {"connect", step.connect},
        {"why", step.why},     {"drawing", step.drawing},   {"optional", step.optional},
        {"status", "missing"}, {"calibration_id", nullptr}, {"taken_at", nullptr},
        {"age_h", nullptr},    {"freq_range_hz", nullptr}};
    if (c) {
      double lo = HUGE_VAL, hi = 0;
      for (const auto& p : c->body.value("points", nlohmann::json::array())) {
        lo = std::min(lo, p.value("freq_hz", HUGE_VAL));
        hi = std::max(hi, p.value("freq_hz", 0.0));
      }
      const double age = hours_between(c->taken_at, now_iso);
      j["calibration_id"] = c->id;
      j["taken_at"] = c->taken_at;
      j["age_h"] = std::isfinite(age) ? nlohmann::json(age) : nlohmann::json();
      if (hi > 0) j["freq_range_hz"] = {lo, hi};
      // A level step is one frequency by nature; the others should span the grid.
      const bool spans = level || (lo <= grid.front() * 1.001 && hi >= grid.back() * 0.999);
      j["status"] = std::isfinite(age) && age > max_age_h ? "stale" : spans ? "current" : "partial";
    }
    if (next.is_null() && !step.optional && j["status"] != "current") next = step.kind;
    steps.push_back(j);
  }
  return {{"setup",
           {{"device", key.device},
            {"sample_rate_hz", key.sample_rate_hz},
            {"layout", key.layout},
            {"rref_ohm", key.rref_ohm}}},
          {"grid_hz", grid},
          {"steps", steps},
          {"next", next},
          {"safety",
           "Discharge every capacitor through a bleeder resistor and confirm near 0 V with a "
           "meter before it goes in the jig; never connect the jig to powered equipment."}};
}

}  // namespace tb
