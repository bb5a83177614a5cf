// The bodies of the engine's tasks: what one reading, a watch, a sweep, a calibration
// step and a part change do with the device. Runs on the engine's thread only.
#include <chrono>
#include <cmath>
#include <numbers>
#include <thread>

#include "dsp/part_spec.hpp"
#include "server/bench_procedure.hpp"
#include "server/calibration_data.hpp"
#include "server/engine.hpp"
#include "server/error.hpp"
#include "server/error_report.hpp"
#include "server/reading_json.hpp"
#include "server/simulated_card.hpp"

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

nlohmann::json error_json(const ErrorInfo& e) {
  return {{"id", e.id}, {"message", e.message}, {"hint", e.hint}};
}

}  // namespace

void Engine::rewire_bench(const Settings& s) {
  if (!bench_) return;
  dsp::JigSetup jig;
  jig.layout = *dsp::parse_layout(s.text("layout"));
  jig.rref_ohm = s.number("rref_ohm");
  bench_->reconnect(jig, dsp::parse_part(bench_part_).netlist);
}

nlohmann::json Engine::run_reading(const ReadingTask& t, const Settings& s, const char* origin,
                                   std::int64_t task_id) {
  rewire_bench(s);
  auto req = request_from(s, t.freq_hz, t.level_fs, t.duration_s);
  req.force_kind = t.force_kind;
  req.part_class = t.part_class.value_or(dsp::PartClass::general);
  // A capped class without a level of its own gets the automatic level, which keeps the
  // part under its voltage cap from the first tone on.
  if (dsp::part_voltage_cap_vrms(req.part_class) && !t.level_fs) req.level_fs = 0;
  req.cancel = &cancel_current_;
  Corrections corr;
  if (store_)
    corr =
        find_corrections(*store_, key_for(device_id(), req), req.freq_hz, kReconnectHalfWidthOhm);
  const auto result = measure_once(*device_, req, corr.match, corr.fixture);
  EngineEvent e{"reading", to_json(result, req)};
  e.data["origin"] = origin;
  e.data["task_id"] = task_id;
  e.data["device"] = device_id();
  e.data["corrections"] = corr.used;
  for (const auto& n : corr.missing)
    e.data["warnings"].push_back(to_json(n));
  if (t.part_id) e.data["part_id"] = *t.part_id;
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
  rewire_bench(s);
  const auto freqs = t.frequencies();
  info.total = static_cast<int>(freqs.size());
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

  std::string status = "complete";
  nlohmann::json end_error;
  for (std::size_t i = 0; i < freqs.size(); ++i) {
    auto req = request_from(s, freqs[i], t.level_fs, t.duration_s);
    req.cancel = &cancel_current_;
    EngineEvent point{"sweep.point", {{"sweep_id", sweep_id}, {"index", i}, {"freq_hz", freqs[i]}}};
    try {
      Corrections corr;
      if (store_)
        corr = find_corrections(*store_, key_for(device_id(), req), req.freq_hz,
                                kReconnectHalfWidthOhm);
      const auto result = measure_once(*device_, req, corr.match, corr.fixture);
      point.data["reading"] = to_json(result, req);
      point.data["reading"]["corrections"] = corr.used;
      for (const auto& n : corr.missing)
        point.data["reading"]["warnings"].push_back(to_json(n));
    } catch (...) {
      const ErrorInfo e = describe_current_error();
      const bool fatal = e.id == "task.cancelled" || e.id == "part.charged" ||
                         e.id.rfind("device.", 0) == 0 || e.id.rfind("capture.", 0) == 0;
      if (fatal) {
        bool stopping;
        {
          std::lock_guard lock(m_);
          stopping = stopping_;
        }
        if (e.id == "task.cancelled") {
          status = stopping ? "interrupted" : "cancelled";
          end_error = stopping ? nlohmann::json{{"id", "sweep.interrupted"},
                                                {"message",
                                                 "the service was stopped during "
                                                 "the sweep"},
                                                {"hint", "start the sweep again"}}
                               : nlohmann::json{{"id", "sweep.cancelled"},
                                                {"message", "the sweep was cancelled"},
                                                {"hint", ""}};
        } else {
          status = "failed";
          end_error = error_json(e);
        }
        break;
      }
      // This frequency alone could not be read (e.g. the part shorts the bridge there):
      // keep the point with its reason and go on.
      point.data["error"] = error_json(e);
    }
    publish(point);
    info.done = static_cast<int>(i) + 1;
    update_task(info);
  }
  EngineEvent end{"sweep.end",
                  {{"sweep_id", sweep_id},
                   {"status", status},
                   {"error", end_error},
                   {"points_saved", info.done}}};
  publish(end);
  if (status == "cancelled" || status == "interrupted") {
    throw Error("task.cancelled", "the sweep was cancelled", "");
  }
  if (status == "failed") {
    throw Error(end_error.value("id", "sweep.failed"), end_error.value("message", ""),
                end_error.value("hint", ""));
  }
  return info.result;
}

nlohmann::json Engine::run_calibration(const CalibrationTask& t, const Settings& s,
                                       TaskInfo& info) {
  info.total = static_cast<int>(t.freqs_hz.size());
  const auto part = bench_ ? dsp::parse_part(bench_part_).netlist : dsp::Netlist{};
  dsp::JigSetup jig;
  jig.layout = *dsp::parse_layout(s.text("layout"));
  jig.rref_ohm = s.number("rref_ohm");
  // The simulated bench makes the step's connection itself; on a real jig the user has
  // made it before asking for the step.
  if (bench_) {
    auto wiring = jig;
    wiring.inputs_on_node_a = t.kind == "channel_match";
    bench_->reconnect(wiring, t.kind == "open"    ? open_jig()
                              : t.kind == "short" ? shorted_jig()
                                                  : part);
  }
  nlohmann::json points = nlohmann::json::array();
  MeasureRequest key_req;
  try {
    for (double f : t.freqs_hz) {
      auto req = request_from(s, f, t.level_fs, t.duration_s);
      req.cancel = &cancel_current_;
      key_req = req;
      if (t.kind == "channel_match") {
        points.push_back(channel_match_point(f, measure_channel_match(*device_, req)));
      } else {
        Corrections corr;
        if (store_) corr = find_corrections(*store_, key_for(device_id(), req), f, 0);
        dsp::UncertainComplex z;
        try {
          z = measure_once(*device_, req, corr.match).reading.z;
        } catch (const dsp::AnalysisError& e) {
          // An open beyond what the bridge resolves is an ideal open: nothing to remove.
          if (t.kind != "open" || e.id() != "analysis.bridge_singular") throw;
          z.value = {1e18, 0};
        }
        points.push_back(impedance_point(f, z));
      }
      ++info.done;
      update_task(info);
    }
  } catch (...) {
    if (bench_) rewire_bench(s);
    throw;
  }
  if (bench_) rewire_bench(s);
  EngineEvent e{"calibration",
                {{"kind", t.kind},
                 {"device", device_id()},
                 {"sample_rate_hz", key_req.stream.sample_rate_hz},
                 {"layout", std::string(dsp::layout_name(key_req.layout))},
                 {"rref_ohm", key_req.rref_ohm},
                 {"points", points}}};
  publish(e);
  return {{"calibration_id", e.data.value("id", std::int64_t{0})}};
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
