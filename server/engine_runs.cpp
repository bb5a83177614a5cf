// The bodies of the engine's tasks: what one reading, a watch, a sweep, a calibration
// step and a part change do with the device. Runs on the engine's thread only.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <complex>
#include <map>
#include <numbers>
#include <thread>
#include <tuple>

#include "dsp/part_spec.hpp"
#include "dsp/sweep_refine.hpp"
#include "server/bench_procedure.hpp"
#include "server/calibration_data.hpp"
#include "server/capture.hpp"
#include "server/engine.hpp"
#include "server/error.hpp"
#include "server/error_report.hpp"
#include "server/multisine_sweep.hpp"
#include "server/reading_budget.hpp"
#include "server/reading_json.hpp"
#include "server/simulated_card.hpp"
#include "server/swap_average.hpp"

namespace tb {

namespace {

// Repeatability of the two contacts when a part is reconnected after the short, ohm,
// half-width (common practice for clip leads, no source; see bench_procedure.hpp).
constexpr double kReconnectHalfWidthOhm = 0.002;

MeasureRequest request_from(const Settings& s, std::optional<double> freq_hz,
                            std::optional<double> level_fs, std::optional<double> duration_s) {
  MeasureRequest r;
  r.freq_hz = freq_hz.value_or(s.number("freq_hz"));
  r.level_fs = level_fs.value_or(s.number("level_fs"));
  r.duration_s = duration_s.value_or(s.number("duration_s"));
  r.stream.sample_rate_hz = s.number("sample_rate_hz");
  r.stream.period_frames = static_cast<std::size_t>(s.integer("period_frames"));
  r.layout = *dsp::parse_layout(s.text("layout"));
  r.rref_ohm = s.number("rref_ohm");
  r.rref_tolerance_rel = s.number("rref_tolerance_pct") / 100;
  r.rref_set_ohm = s.numbers("rref_set_ohm");
  r.volts_per_fs = s.number("full_scale_vrms") * std::numbers::sqrt2;
  // The volts come from a setting; no level calibration exists yet to mark them measured.
  r.level_calibrated = false;
  r.level_cap_fs = s.number("level_cap_fs");
  r.mains_hz = s.number("mains_hz");
  r.rref_tempco_ppm_per_k = s.number("rref_tempco_ppm_per_k");
  r.rref_temp_span_k = s.number("rref_temp_span_k");
  r.rref_inductance_h = s.number("rref_inductance_h");
  return r;
}

CalibrationKey key_for(const std::string& device, const MeasureRequest& r) {
  return {device, r.stream.sample_rate_hz, std::string(dsp::layout_name(r.layout)), r.rref_ohm};
}

// The stored corrections for one reading; a level calibration replaces the
// full_scale_vrms setting.
Corrections corrections_for(const Store* store, const std::string& device, MeasureRequest& req,
                            const Settings& s, double reconnect_half_width_ohm) {
  if (!store) return {};
  Corrections c = find_corrections(*store, key_for(device, req), req.freq_hz,
                                   {.reconnect_half_width_ohm = reconnect_half_width_ohm,
                                    .max_age_h = s.number("calibration_max_age_h"),
                                    .now_iso = utc_now_iso()});
  if (c.volts_per_fs) {
    req.volts_per_fs = *c.volts_per_fs;
    req.level_calibrated = true;
  }
  return c;
}

// The reading's JSON with what the stored corrections add: which were used, which are
// missing or old, whether the card's level moved since, and where its volts come from.
nlohmann::json reading_json(MeasureResult& result, const MeasureRequest& req,
                            const Corrections& corr, const Settings& s) {
  double match_age_h = 0;
  if (corr.used.contains("channel_match"))
    match_age_h = hours_between(corr.used["channel_match"].value("taken_at", ""), utc_now_iso());
  add_correction_terms(result, req, corr, std::isfinite(match_age_h) ? match_age_h : 0,
                       {.channel_drift_db_per_h = s.number("channel_drift_db_per_h")});
  check_level_drift(corr, result, req, result.notices);
  auto j = to_json(result, req);
  j["corrections"] = corr.used;
  j["load_compensated"] = result.fixture_compensated && corr.fixture && corr.fixture->load;
  for (const auto& n : corr.missing)
    j["warnings"].push_back(to_json(n));
  j["level_source"] = corr.volts_per_fs      ? "calibration"
                      : req.volts_per_fs > 0 ? "setting"
                                             : "unknown";
  return j;
}

nlohmann::json error_json(const ErrorInfo& e) {
  return {{"id", e.id}, {"message", e.message}, {"hint", e.hint}};
}

}  // namespace

void Engine::rewire_bench(const Settings& s, bool inputs_swapped) {
  if (!bench_) return;
  dsp::JigSetup jig;
  jig.layout = *dsp::parse_layout(s.text("layout"));
  jig.rref_ohm = s.number("rref_ohm");
  jig.inputs_swapped = inputs_swapped;
  bench_->reconnect(jig, dsp::parse_part(bench_part_).netlist);
}

void Engine::connect_inputs(const Settings& s, TaskInfo* info, bool swapped) {
  const bool ask = !bench_ || s.boolean("sim_prompts");
  if (ask && info) {
    await_user(*info, swapped ? "swap the two input leads: input 1 onto node B and input 2 "
                                "onto node A, then continue"
                              : "put the input leads back: input 1 onto node A and input 2 "
                                "onto node B, then continue");
  } else if (ask) {
    throw Error("request.bad_value", "this reading needs the technician to swap the inputs",
                "take it as a single reading, which can ask");
  }
  rewire_bench(s, swapped);
}

nlohmann::json Engine::run_reading(const ReadingTask& t, const Settings& s, const char* origin,
                                   std::int64_t task_id, TaskInfo* info) {
  rewire_bench(s);
  auto req = request_from(s, t.freq_hz, t.level_fs, t.duration_s);
  req.force_kind = t.force_kind;
  req.part_class = t.part_class.value_or(dsp::PartClass::general);
  // A capped class without a level of its own gets the automatic level, which keeps the
  // part under its voltage cap from the first tone on.
  if (dsp::part_voltage_cap_vrms(req.part_class) && !t.level_fs) req.level_fs = 0;
  req.cancel = &cancel_current_;
  Corrections corr = corrections_for(store_, device_id(), req, s, kReconnectHalfWidthOhm);
  MeasureResult result;
  if (t.swap_average) {
    // The inputs start as wired; the first call makes no change.
    bool swapped = false;
    auto connect = [&](bool want) {
      if (want != swapped) connect_inputs(s, info, want);
      swapped = want;
    };
    try {
      result = measure_swap_averaged(*device_, req, corr.fixture, connect);
    } catch (...) {
      if (bench_) rewire_bench(s);
      throw;
    }
    connect(false);
    // The mismatch cancels here: a missing channel match is no loss.
    corr.match.reset();
    corr.used.erase("channel_match");
    std::erase_if(corr.missing,
                  [](const ReadingNotice& n) { return n.id == "calibration.no_channel_match"; });
  } else {
    result = measure_once(*device_, req, corr.match, corr.fixture);
  }
  EngineEvent e{"reading", reading_json(result, req, corr, s)};
  e.data["origin"] = origin;
  e.data["task_id"] = task_id;
  e.data["device"] = device_id();
  if (t.part_id) e.data["part_id"] = *t.part_id;
  if (t.part_id) e.data["role"] = t.role;
  if (bench_) e.data["bench_part"] = bench_part_;
  e.data["taken_at"] = utc_now_iso();
  publish(e);
  {
    std::lock_guard lock(m_);
    latest_ = std::make_shared<const nlohmann::json>(e.data);
  }
  return {{"reading_id", e.data.value("id", std::int64_t{0})}};
}

nlohmann::json Engine::run_watch(const WatchTask& t, const Settings& s, TaskInfo& info) {
  using clock = std::chrono::steady_clock;
  const auto period = std::chrono::duration<double>(1.0 / t.per_s);
  while (!cancel_current_) {
    const auto start = clock::now();
    try {
      run_reading(t.each, s, "watch", info.id);
      ++info.done;
      update_task(info);
    } catch (...) {
      const ErrorInfo e = describe_current_error();
      // Stop on what needs the technician's hands (a charged part, a lost card, a full
      // disk); a reading the signal spoiled is reported and the next one is taken.
      if (e.id == "task.cancelled" || e.id == "part.charged" || e.id.rfind("device.", 0) == 0 ||
          e.id.rfind("store.", 0) == 0)
        throw;
      EngineEvent ev{"reading.error", {{"task_id", info.id}, {"error", error_json(e)}}};
      publish(ev);
    }
    while (!cancel_current_ && clock::now() - start < period)
      std::this_thread::sleep_for(std::chrono::milliseconds(5));
  }
  throw Error("task.cancelled", "watching stopped", "");
}

nlohmann::json Engine::run_sweep(const SweepTask& t, const Settings& s, TaskInfo& info) {
  if (t.method == "multisine") return run_multisine_sweep(t, s, info);
  rewire_bench(s);
  const auto planned = t.frequencies();
  const std::int64_t sweep_id = begin_sweep(t, info, static_cast<int>(planned.size()));

  // What was measured so far, by frequency, for settling and refinement.
  std::map<double, std::complex<double>> measured;
  const bool part_high = *dsp::parse_layout(s.text("layout")) == dsp::Layout::part_high;
  auto settle_for = [&](double f, const MeasureRequest& req) {
    dsp::SettleInputs in{.freq_hz = f};
    // The nearest measured neighbours below (a sweep runs upwards; refinement fills gaps).
    auto above = measured.lower_bound(f);
    if (above != measured.begin()) {
      auto below = std::prev(above);
      in.circuit_tau_s = dsp::circuit_time_constant_s(below->first, below->second, req.rref_ohm);
      if (below != measured.begin()) {
        auto lower = std::prev(below);
        in.group_delay_s = dsp::divider_group_delay_s(lower->first, lower->second, below->first,
                                                      below->second, req.rref_ohm, part_high);
      }
    }
    return dsp::settle_time_s(in);
  };

  int index = 0;
  auto take_point = [&](double f) {
    auto req = request_from(s, f, t.level_fs, t.duration_s);
    req.cancel = &cancel_current_;
    req.settle_s = settle_for(f, req);
    EngineEvent point{"sweep.point", {{"sweep_id", sweep_id}, {"index", index}, {"freq_hz", f}}};
    try {
      const Corrections corr = corrections_for(store_, device_id(), req, s, kReconnectHalfWidthOhm);
      auto result = measure_once(*device_, req, corr.match, corr.fixture);
      // Integration from a target: a noisy point is taken again, longer.
      if (t.target_u_pct && result.reading.ratio_u_rel > *t.target_u_pct / 100) {
        req.duration_s = dsp::duration_for_target_s(req.duration_s, result.reading.ratio_u_rel,
                                                    *t.target_u_pct / 100, 0.1, 30);
        result = measure_once(*device_, req, corr.match, corr.fixture);
      }
      auto j = reading_json(result, req, corr, s);
      j["settle_s"] = req.settle_s;
      point.data["reading"] = j;
      measured[result.reading.freq_hz] = result.reading.z.value;
    } catch (...) {
      const ErrorInfo e = describe_current_error();
      const bool fatal = e.id == "task.cancelled" || e.id == "part.charged" ||
                         e.id.rfind("device.", 0) == 0 || e.id.rfind("capture.", 0) == 0 ||
                         // The generator is gone or unsteady: no later point can be read.
                         e.id == "signal.lost" || e.id == "signal.level_changed";
      if (fatal) throw;
      // This frequency alone could not be read (e.g. the part shorts the bridge there):
      // keep the point with its reason and go on.
      point.data["error"] = error_json(e);
    }
    publish(point);
    ++index;
    info.done = index;
    update_task(info);
  };

  std::string status = "complete";
  nlohmann::json end_error;
  try {
    for (double f : planned)
      take_point(f);
    // Sharp features (a resonance between two points) get points of their own.
    int added = 0;
    while (t.refine) {
      std::vector<double> f;
      std::vector<std::complex<double>> z;
      for (const auto& [freq, value] : measured) {
        f.push_back(freq);
        z.push_back(value);
      }
      // A midpoint that lands on a bin already measured (low tones snap to their block's
      // bins) adds nothing: only new bins are taken.
      std::vector<double> todo;
      for (double x : dsp::refine_frequencies(f, z, {}, added)) {
        const double played = played_frequency_hz(request_from(s, x, t.level_fs, t.duration_s));
        auto near = measured.lower_bound(played * 0.995);
        const bool known = near != measured.end() && near->first <= played * 1.005;
        const bool twice = !todo.empty() && std::abs(todo.back() / played - 1) < 0.005;
        if (!known && !twice) todo.push_back(played);
      }
      if (todo.empty()) break;
      added += static_cast<int>(todo.size());
      info.total += static_cast<int>(todo.size());
      EngineEvent replanned{"sweep.replanned",
                            {{"sweep_id", sweep_id}, {"points_planned", info.total}}};
      publish(replanned);
      update_task(info);
      for (double x : todo)
        take_point(x);
    }
  } catch (...) {
    std::tie(status, end_error) = sweep_stop(describe_current_error());
  }
  end_sweep(sweep_id, status, end_error, info.done);
  return info.result;
}

std::int64_t Engine::begin_sweep(const SweepTask& t, TaskInfo& info, int points) {
  info.total = points;
  EngineEvent begin{"sweep.begin",
                    {{"task_id", info.id},
                     {"params", to_json(TaskRequest{t})},
                     {"points_planned", info.total},
                     {"label", t.label}}};
  if (t.part_id) begin.data["part_id"] = *t.part_id;
  publish(begin);
  const std::int64_t sweep_id = begin.data.value("sweep_id", std::int64_t{0});
  info.result = {{"sweep_id", sweep_id}};
  update_task(info);
  return sweep_id;
}

std::pair<std::string, nlohmann::json> Engine::sweep_stop(const ErrorInfo& e) {
  if (e.id != "task.cancelled") return {"failed", error_json(e)};
  bool stopping;
  {
    std::lock_guard lock(m_);
    stopping = stopping_;
  }
  if (stopping) {
    return {"interrupted",
            {{"id", "sweep.interrupted"},
             {"message", "the service was stopped during the sweep"},
             {"hint", "start the sweep again"}}};
  }
  return {"cancelled",
          {{"id", "sweep.cancelled"}, {"message", "the sweep was cancelled"}, {"hint", ""}}};
}

nlohmann::json Engine::run_multisine_sweep(const SweepTask& t, const Settings& s, TaskInfo& info) {
  rewire_bench(s);
  auto base = request_from(s, std::nullopt, t.level_fs, std::nullopt);
  base.cancel = &cancel_current_;
  const auto design =
      plan_multisine(base, t.frequencies(),
                     t.grid == "odd_odd" ? dsp::MultisineGrid::odd_odd : dsp::MultisineGrid::log);
  const std::size_t k = design.tones.size();
  const double period_s = static_cast<double>(design.period_len) / base.stream.sample_rate_hz;
  const auto periods = static_cast<std::size_t>(
      t.periods
          ? *t.periods
          : std::clamp<long>(std::lround(t.duration_s.value_or(s.number("duration_s")) / period_s),
                             2, 256));
  // Each tone's own corrections, taken at its frequency (a level calibration sets the volts
  // for all of them alike).
  std::vector<Corrections> corr(k);
  std::vector<MeasureRequest> reqs(k, base);
  std::vector<std::optional<ChannelMatch>> matches(k);
  std::vector<std::optional<dsp::FixtureStandards>> fixtures(k);
  for (std::size_t i = 0; i < k; ++i) {
    reqs[i].freq_hz = design.tones[i].freq_hz;
    corr[i] = corrections_for(store_, device_id(), reqs[i], s, kReconnectHalfWidthOhm);
    matches[i] = corr[i].match;
    fixtures[i] = corr[i].fixture;
  }
  base.volts_per_fs = reqs.front().volts_per_fs;
  base.level_calibrated = reqs.front().level_calibrated;

  const std::int64_t sweep_id = begin_sweep(t, info, static_cast<int>(k));

  // One capture: a cancel or a lost device during it leaves nothing to save, so the sweep
  // is kept with no points; once it is in, every point is saved.
  MultisineSweep sweep;
  try {
    sweep = measure_multisine(*device_, base, design, periods, matches, fixtures);
  } catch (...) {
    const auto [status, error] = sweep_stop(describe_current_error());
    end_sweep(sweep_id, status, error, 0);  // throws for every status sweep_stop gives
    return info.result;
  }
  nlohmann::json regions = nlohmann::json::array();
  for (const auto& g : sweep.analysis.regions) {
    regions.push_back({{"f_lo_hz", g.f_lo_hz},
                       {"f_hi_hz", g.f_hi_hz},
                       {"tones", g.tones},
                       {"odd_db", g.odd_db_b},
                       {"even_db", g.even_db_b},
                       {"noise_db", g.noise_db_b},
                       {"odd_db_node_a", g.odd_db_a},
                       {"even_db_node_a", g.even_db_a}});
  }
  const nlohmann::json summary = {
      {"crest_factor", sweep.design.crest_factor},
      {"schroeder_crest_factor", sweep.design.schroeder_crest_factor},
      {"peak_level_fs", sweep.level_fs},
      {"period_s", period_s},
      {"periods", periods},
      {"settle_periods", multisine_settle_periods(sweep.design)},
      {"audio_s", sweep.audio_s},
      {"noise_floor_fs",
       {{"node_a", sweep.analysis.noise_floor_a_fs}, {"node_b", sweep.analysis.noise_floor_b_fs}}},
      {"nonlinearity_db", sweep.analysis.nonlinearity_db},
      {"regions", regions}};
  for (std::size_t i = 0; i < k; ++i) {
    const double f = design.tones[i].freq_hz;
    EngineEvent point{"sweep.point", {{"sweep_id", sweep_id}, {"index", i}, {"freq_hz", f}}};
    if (sweep.errors[i]) {
      point.data["error"] = to_json(*sweep.errors[i]);
    } else {
      auto j = reading_json(sweep.points[i], reqs[i], corr[i], s);
      j["tone_level_fs"] = sweep.design.tones[i].amplitude_fs;
      point.data["reading"] = j;
    }
    if (i == 0) point.data["multisine"] = summary;
    publish(point);
    info.done = static_cast<int>(i) + 1;
  }
  update_task(info);
  info.result["multisine"] = summary;
  EngineEvent end{"sweep.end",
                  {{"sweep_id", sweep_id},
                   {"status", "complete"},
                   {"error", nullptr},
                   {"points_saved", info.done},
                   {"multisine", summary}}};
  publish(end);
  return info.result;
}

void Engine::end_sweep(std::int64_t sweep_id, const std::string& status,
                       const nlohmann::json& error, int points_saved) {
  EngineEvent end{"sweep.end",
                  {{"sweep_id", sweep_id},
                   {"status", status},
                   {"error", error},
                   {"points_saved", points_saved}}};
  publish(end);
  if (status == "cancelled" || status == "interrupted") {
    throw Error("task.cancelled", "the sweep was cancelled", "");
  }
  if (status == "failed") {
    throw Error(error.value("id", "sweep.failed"), error.value("message", ""),
                error.value("hint", ""));
  }
}

nlohmann::json Engine::run_calibration(const CalibrationTask& t, const Settings& s,
                                       TaskInfo& info) {
  info.total = static_cast<int>(t.freqs_hz.size());
  const auto part = bench_ ? dsp::parse_part(bench_part_).netlist : dsp::Netlist{};
  dsp::JigSetup jig;
  jig.layout = *dsp::parse_layout(s.text("layout"));
  jig.rref_ohm = s.number("rref_ohm");
  // The simulated bench makes the step's connection itself; on a real jig the user has
  // made it before asking for the step (calibration_guide.hpp says what to connect).
  if (bench_) {
    auto wiring = jig;
    wiring.inputs_on_node_a = t.kind == "channel_match";
    const dsp::Netlist load = {
        {{dsp::ElementKind::resistor, "load", "p", "n", t.load_ohm.value_or(1000)}}};
    bench_->reconnect(wiring, t.kind == "open" || t.kind == "level" ? open_jig()
                              : t.kind == "short"                   ? shorted_jig()
                              : t.kind == "load"                    ? load
                                                                    : part);
  }
  nlohmann::json points = nlohmann::json::array();
  MeasureRequest key_req;
  try {
    for (double f : t.freqs_hz) {
      auto req = request_from(s, f, t.level_fs, t.duration_s);
      req.cancel = &cancel_current_;
      key_req = req;
      if (t.kind == "channel_match" || t.kind == "level") {
        // Both read the plain channel ratio; the level step wants only node A's level
        // (with the jig open node B follows node A, so the ratio is harmless).
        const auto m = measure_channel_match(*device_, req);
        auto p = t.kind == "level" ? nlohmann::json{{"freq_hz", f}, {"level_a_fs", m.level_a_fs}}
                                   : channel_match_point(f, m);
        p["a_per_fs"] = m.level_a_fs / m.level_fs;
        points.push_back(p);
      } else {
        Corrections corr;
        if (store_) corr = find_corrections(*store_, key_for(device_id(), req), f, {});
        dsp::UncertainComplex z;
        double a = 0;
        try {
          const auto r = measure_once(*device_, req, corr.match);
          z = r.reading.z;
          a = r.reading.level_a / r.level_fs;
        } catch (const dsp::AnalysisError& e) {
          // An open beyond what the bridge resolves is an ideal open: nothing to remove.
          if (t.kind != "open" || e.id() != "analysis.bridge_singular") throw;
          z.value = {1e18, 0};
        }
        auto p = impedance_point(f, z);
        if (a > 0) p["a_per_fs"] = a;
        points.push_back(p);
      }
      ++info.done;
      update_task(info);
    }
  } catch (...) {
    if (bench_) rewire_bench(s);
    throw;
  }
  if (bench_) rewire_bench(s);
  const bool level = t.kind == "level";
  EngineEvent e{
      "calibration",
      {{"kind", t.kind},
       {"device", device_id()},
       {"sample_rate_hz", key_req.stream.sample_rate_hz},
       {"layout", level ? std::string(kAnyLayout) : std::string(dsp::layout_name(key_req.layout))},
       {"rref_ohm", level ? 0.0 : key_req.rref_ohm},
       {"level_fs", key_req.level_fs},
       {"points", points}}};
  if (t.kind == "load") {
    e.data["load_ohm"] = *t.load_ohm;
    e.data["load_tolerance_rel"] = t.load_tolerance_pct.value_or(0.1) / 100;
  }
  if (level) {
    // The meter reads rms at node A; the inputs' full scale in peak volts follows from
    // the level node A showed in full-scale units.
    const double a = points.at(0).at("level_a_fs").get<double>();
    if (!(a > 1e-4)) {
      throw Error(
          "calibration.no_signal",
          "node A showed no tone during the level step (" + std::to_string(a) + " of full scale)",
          "check that the output drives node A and input 1 reads it, then repeat");
    }
    e.data["meter_vrms"] = *t.meter_vrms;
    e.data["volts_per_fs"] = *t.meter_vrms * std::numbers::sqrt2 / a;
  }
  publish(e);
  return {{"calibration_id", e.data.value("id", std::int64_t{0})}};
}

nlohmann::json Engine::run_tone(const ToneTask& t, const Settings& s, TaskInfo& info) {
  auto req = request_from(s, t.freq_hz, t.level_fs, std::nullopt);
  const double fs = req.stream.sample_rate_hz;
  // Whole periods per chunk (the frequency on a 1 Hz grid, 1 s chunks), so the tone runs
  // on across chunks without a click; fades only at the very start and end.
  const double f = std::max(1.0, std::round(req.freq_hz));
  const auto chunk = static_cast<std::size_t>(fs);
  const int chunks = static_cast<int>(std::ceil(t.seconds));
  const auto fade = static_cast<std::size_t>(0.02 * fs);
  info.total = chunks;
  for (int c = 0; c < chunks; ++c) {
    std::vector<double> x(chunk);
    for (std::size_t i = 0; i < chunk; ++i) {
      double g = req.level_fs;
      if (c == 0 && i < fade) g *= static_cast<double>(i) / static_cast<double>(fade);
      if (c == chunks - 1 && chunk - i <= fade)
        g *= static_cast<double>(chunk - i) / static_cast<double>(fade);
      x[i] = g * std::sin(2 * std::numbers::pi * f * static_cast<double>(i) / fs);
    }
    play_and_capture(*device_, req.stream, x, 0, &cancel_current_);
    info.done = c + 1;
    update_task(info);
  }
  return {{"freq_hz", f}, {"level_fs", req.level_fs}, {"seconds", chunks}};
}

nlohmann::json Engine::run_bench_part(const BenchPartTask& t) {
  if (!bench_) {
    throw Error("request.not_simulated", "the part can only be changed on the simulated bench",
                "on a real jig, change the part by hand");
  }
  const auto spec = dsp::parse_part(t.part);
  bench_part_ = t.part;
  rewire_bench(settings_.get());
  EngineEvent e{"bench.part", {{"part", t.part}, {"description", spec.description}}};
  publish(e);
  return {{"part", t.part}};
}

}  // namespace tb
