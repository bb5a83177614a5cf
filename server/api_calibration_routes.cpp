// Routes for calibrations: take a step, list, fetch, delete.
#include <httplib.h>

#include "server/api_request.hpp"
#include "server/api_routes.hpp"
#include "server/calibration_guide.hpp"
#include "server/engine.hpp"
#include "server/error.hpp"
#include "server/store.hpp"

namespace tb {

namespace {

std::string what_to_connect(const std::string& kind) {
  const auto* step = find_calibration_step(kind);
  return step ? step->connect : "";
}

CalibrationKey present_key(ApiContext& ctx) {
  const Settings s = ctx.settings.get();
  return {s.text("device"), s.number("sample_rate_hz"), s.text("layout"), s.number("rref_ohm")};
}

// The record's key, then its body (points, and the step's own values: the load's
// nominal value and tolerance, the level's meter reading and volts per full scale).
nlohmann::json to_json(const CalibrationRecord& c) {
  nlohmann::json j = c.body.is_object() ? c.body : nlohmann::json::object();
  j["id"] = c.id;
  j["taken_at"] = c.taken_at;
  j["kind"] = c.kind;
  j["device"] = c.device;
  j["sample_rate_hz"] = c.sample_rate_hz;
  j["layout"] = c.layout;
  j["rref_ohm"] = c.rref_ohm;
  if (!j.contains("points")) j["points"] = nlohmann::json::array();
  return j;
}

}  // namespace

void add_calibration_routes(std::vector<Route>& r) {
  r.push_back({"GET", "/api/v1/calibrations/guide", Access::read,
               "the calibration steps for the present set-up: what to connect, and which are "
               "missing, partial or stale",
               [](ApiContext& ctx, const httplib::Request&) {
                 return ApiReply{
                     200, calibration_guide(ctx.store, present_key(ctx),
                                            ctx.settings.get().number("calibration_max_age_h"),
                                            utc_now_iso())};
               }});
  r.push_back({"POST", "/api/v1/tone", Access::change,
               "play a steady test tone (for the multimeter of the level step)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto b = api::parse_body(req.body, {"freq_hz", "level_fs", "seconds"});
                 ToneTask t;
                 t.freq_hz = api::opt_number(b, "freq_hz");
                 t.level_fs = api::opt_number(b, "level_fs");
                 t.seconds = api::opt_number(b, "seconds").value_or(60);
                 return task_reply(ctx.engine, ctx.engine.submit(t), false, 0, nullptr);
               }});
  r.push_back({"POST", "/api/v1/calibrations", Access::change,
               "take one calibration step (channel_match, open, short) at a list of frequencies",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto b = api::parse_body(
                     req.body, {"kind", "freqs_hz", "level_fs", "duration_s", "load_ohm",
                                "load_tolerance_pct", "meter_vrms", "wait"});
                 CalibrationTask t;
                 t.kind = api::need_text(b, "kind");
                 // Default: the guide's grid (one frequency, the settings' freq_hz, for the level).
                 const Settings s = ctx.settings.get();
                 t.freqs_hz = api::opt_numbers(b, "freqs_hz")
                                  .value_or(t.kind == "level"
                                                ? std::vector<double>{s.number("freq_hz")}
                                                : calibration_grid_hz(s.number("sample_rate_hz")));
                 t.level_fs = api::opt_number(b, "level_fs");
                 t.duration_s = api::opt_number(b, "duration_s");
                 t.load_ohm = api::opt_number(b, "load_ohm");
                 t.load_tolerance_pct = api::opt_number(b, "load_tolerance_pct");
                 t.meter_vrms = api::opt_number(b, "meter_vrms");
                 const auto queued = ctx.engine.submit(t);
                 auto reply = task_reply(
                     ctx.engine, queued, api::opt_bool(b, "wait").value_or(false), 300,
                     [&ctx](const TaskInfo& done) {
                       const auto id = done.result.value("calibration_id", std::int64_t{0});
                       const auto c = ctx.store.calibration(id);
                       if (!c) not_found("calibration", id);
                       return ApiReply{201, to_json(*c)};
                     });
                 if (reply.status == 202) reply.body["connect"] = what_to_connect(t.kind);
                 return reply;
               }});
  r.push_back({"GET", "/api/v1/calibrations", Access::read, "saved calibrations, newest first",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const int limit =
                     api::query_int(req.get_param_value("limit"), "limit", 100, 1, 1000);
                 nlohmann::json out = nlohmann::json::array();
                 for (const auto& c : ctx.store.calibrations(limit))
                   out.push_back(to_json(c));
                 return ApiReply{200, {{"calibrations", out}}};
               }});
  r.push_back({"GET", "/api/v1/calibrations/{id}", Access::read, "one calibration and its points",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 const auto c = ctx.store.calibration(id);
                 if (!c) not_found("calibration", id);
                 return ApiReply{200, to_json(*c)};
               }});
  r.push_back({"DELETE", "/api/v1/calibrations/{id}", Access::change,
               "delete a calibration (readings stop using it)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 if (!ctx.store.delete_calibration(id)) not_found("calibration", id);
                 return ApiReply{204, nullptr};
               }});
}

}  // namespace tb
