#include "server/engine_tasks.hpp"

#include <cmath>
#include <sstream>

#include "dsp/part_spec.hpp"
#include "server/error.hpp"

namespace tb {

namespace {

std::string num(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}

void in_range(const std::string& field, double v, double lo, double hi, const std::string& hint) {
  if (!(v >= lo && v <= hi)) {
    throw Error("request.out_of_range",
                field + " must be between " + num(lo) + " and " + num(hi) + ", got " + num(v),
                hint);
  }
}

struct Limits {
  double f_lo = 10, f_hi = 0, level_cap = 0;
  explicit Limits(const Settings& s)
      : f_hi(0.45 * s.number("sample_rate_hz")), level_cap(s.number("level_cap_fs")) {}
  void freq(const std::string& field, double f) const {
    in_range(field, f, f_lo, f_hi,
             "the sound card reaches 10 Hz to 0.45 of its sample rate; raise sample_rate_hz for "
             "higher frequencies");
  }
  void level(const std::optional<double>& l) const {
    if (!l) return;
    if (*l > level_cap && *l <= 1) {
      throw Error("request.level_above_cap",
                  "level_fs " + num(*l) + " is above the configured cap of " + num(level_cap),
                  "ask for at most " + num(level_cap) +
                      "; only the config file or --level-cap-fs can raise the cap");
    }
    in_range("level_fs", *l, 1e-4, level_cap, "a fraction of full scale");
  }
  static void duration(const std::optional<double>& d) {
    if (d) in_range("duration_s", *d, 0.1, 30, "seconds of analysed tone per reading");
  }
  void reading(const ReadingTask& r) const {
    if (r.freq_hz) freq("freq_hz", *r.freq_hz);
    level(r.level_fs);
    duration(r.duration_s);
  }
};

}  // namespace

int SweepTask::points() const {
  const double decades = std::log10(stop_hz / start_hz);
  return static_cast<int>(std::ceil(decades * points_per_decade - 1e-9)) + 1;
}

std::vector<double> SweepTask::frequencies() const {
  const int n = points();
  std::vector<double> f(static_cast<std::size_t>(n));
  for (int i = 0; i < n; ++i) {
    f[static_cast<std::size_t>(i)] =
        n == 1 ? start_hz : start_hz * std::pow(stop_hz / start_hz, double(i) / (n - 1));
  }
  return f;
}

std::string task_kind(const TaskRequest& t) {
  static const char* names[] = {"reading", "watch", "sweep", "calibration", "bench_part", "tone"};
  return names[t.index()];
}

void validate(const TaskRequest& t, const Settings& s) {
  const Limits lim(s);
  if (const auto* r = std::get_if<ReadingTask>(&t)) lim.reading(*r);
  if (const auto* w = std::get_if<WatchTask>(&t)) {
    lim.reading(w->each);
    if (w->each.swap_average) {
      throw Error("request.bad_value", "continuous readings cannot swap-and-average",
                  "take single readings with swap_average, or watch without it");
    }
    in_range("per_s", w->per_s, 0.01, s.number("readings_per_s_max"),
             "readings per second; readings_per_s_max caps it");
  }
  if (const auto* sw = std::get_if<SweepTask>(&t)) {
    lim.freq("start_hz", sw->start_hz);
    lim.freq("stop_hz", sw->stop_hz);
    if (!(sw->stop_hz > sw->start_hz)) {
      throw Error(
          "request.bad_value",
          "stop_hz (" + num(sw->stop_hz) + ") must be above start_hz (" + num(sw->start_hz) + ")",
          "sweeps run upwards: give the lower frequency as start_hz");
    }
    in_range("points_per_decade", sw->points_per_decade, 1, 100, "e.g. 10");
    in_range("points", sw->points(), 2, 400, "use fewer points per decade or a narrower range");
    lim.level(sw->level_fs);
    lim.duration(sw->duration_s);
    if (sw->target_u_pct)
      in_range("target_u_pct", *sw->target_u_pct, 0.001, 10, "e.g. 0.05 for 0.05 %");
    if (sw->method != "stepped" && sw->method != "multisine") {
      throw Error("request.bad_value", "no sweep method named '" + sw->method + "'",
                  "use stepped (one tone after another) or multisine (all at once)");
    }
    if (sw->periods) {
      if (sw->method != "multisine") {
        throw Error("request.bad_value", "periods applies to multisine sweeps only",
                    "leave out periods, or give method multisine");
      }
      in_range("periods", *sw->periods, 2, 256, "analysed multisine periods, e.g. 6");
    }
    if (sw->grid != "log" && sw->grid != "odd_odd") {
      throw Error("request.bad_value", "no multisine grid named '" + sw->grid + "'",
                  "use log (the default) or odd_odd");
    }
    if (sw->grid != "log" && sw->method != "multisine") {
      throw Error("request.bad_value", "grid applies to multisine sweeps only",
                  "leave out grid, or give method multisine");
    }
  }
  if (const auto* c = std::get_if<CalibrationTask>(&t)) {
    if (c->kind != "channel_match" && c->kind != "open" && c->kind != "short" &&
        c->kind != "load" && c->kind != "level") {
      throw Error("request.bad_value", "no calibration step named '" + c->kind + "'",
                  "use level, channel_match, open, short or load");
    }
    if (c->kind == "load") {
      if (!c->load_ohm) {
        throw Error("request.missing_field", "the load step needs load_ohm",
                    "give the known resistor's value in ohm (and load_tolerance_pct)");
      }
      in_range("load_ohm", *c->load_ohm, 0.01, 10e6, "a resistor from 10 mohm to 10 Mohm");
      in_range("load_tolerance_pct", c->load_tolerance_pct.value_or(0.1), 0.001, 5,
               "the resistor's tolerance, e.g. 0.1 for 0.1 %");
    }
    if (c->kind == "level") {
      if (!c->meter_vrms) {
        throw Error("request.missing_field", "the level step needs meter_vrms",
                    "play the test tone (POST /api/v1/tone), read node A with an AC "
                    "multimeter, and give that reading in volts rms");
      }
      in_range("meter_vrms", *c->meter_vrms, 1e-3, 20, "the multimeter's AC reading in volts");
      in_range("number of freqs_hz", static_cast<double>(c->freqs_hz.size()), 1, 1,
               "the level step takes one frequency: the tone the meter read");
    }
    in_range("number of freqs_hz", static_cast<double>(c->freqs_hz.size()), 1, 64,
             "list the frequencies you will measure at");
    for (double f : c->freqs_hz)
      lim.freq("freqs_hz", f);
    lim.level(c->level_fs);
    lim.duration(c->duration_s);
  }
  if (const auto* tone = std::get_if<ToneTask>(&t)) {
    if (tone->freq_hz) lim.freq("freq_hz", *tone->freq_hz);
    lim.level(tone->level_fs);
    in_range("seconds", tone->seconds, 1, 600, "how long to play the tone, 1 to 600 s");
  }
  if (const auto* b = std::get_if<BenchPartTask>(&t)) {
    if (s.text("device") != "simulated") {
      throw Error("request.not_simulated", "the part can only be changed on the simulated bench",
                  "on a real jig, change the part by hand");
    }
    dsp::parse_part(b->part);  // throws part.* naming the column
  }
}

namespace {

void put(nlohmann::json& j, const char* key, const std::optional<double>& v) {
  if (v) j[key] = *v;
}

nlohmann::json reading_json(const ReadingTask& r) {
  nlohmann::json j = nlohmann::json::object();
  put(j, "freq_hz", r.freq_hz);
  put(j, "level_fs", r.level_fs);
  put(j, "duration_s", r.duration_s);
  if (r.force_kind) j["kind"] = std::string(dsp::part_kind_name(*r.force_kind));
  if (r.part_class) j["part_class"] = std::string(dsp::part_class_name(*r.part_class));
  if (r.swap_average) j["swap_average"] = true;
  if (r.part_id) j["part_id"] = *r.part_id;
  if (r.part_id) j["role"] = r.role;
  return j;
}

}  // namespace

nlohmann::json to_json(const TaskRequest& t) {
  nlohmann::json j;
  if (const auto* r = std::get_if<ReadingTask>(&t)) j = reading_json(*r);
  if (const auto* w = std::get_if<WatchTask>(&t)) {
    j = reading_json(w->each);
    j["per_s"] = w->per_s;
  }
  if (const auto* sw = std::get_if<SweepTask>(&t)) {
    j = {{"start_hz", sw->start_hz},
         {"stop_hz", sw->stop_hz},
         {"points_per_decade", sw->points_per_decade},
         {"label", sw->label}};
    put(j, "level_fs", sw->level_fs);
    put(j, "duration_s", sw->duration_s);
    j["refine"] = sw->refine;
    put(j, "target_u_pct", sw->target_u_pct);
    j["method"] = sw->method;
    if (sw->periods) j["periods"] = *sw->periods;
    if (sw->method == "multisine") j["grid"] = sw->grid;
    if (sw->part_id) j["part_id"] = *sw->part_id;
    if (sw->part_id) j["role"] = sw->role;
  }
  if (const auto* c = std::get_if<CalibrationTask>(&t)) {
    j = {{"kind", c->kind}, {"freqs_hz", c->freqs_hz}};
    put(j, "level_fs", c->level_fs);
    put(j, "duration_s", c->duration_s);
    put(j, "load_ohm", c->load_ohm);
    put(j, "load_tolerance_pct", c->load_tolerance_pct);
    put(j, "meter_vrms", c->meter_vrms);
  }
  if (const auto* b = std::get_if<BenchPartTask>(&t)) j = {{"part", b->part}};
  if (const auto* tone = std::get_if<ToneTask>(&t)) {
    j = {{"seconds", tone->seconds}};
    put(j, "freq_hz", tone->freq_hz);
    put(j, "level_fs", tone->level_fs);
  }
  return j;
}

}  // namespace tb
