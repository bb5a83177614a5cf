// Routes for calibrations: take a step, list, fetch, delete.
#include <httplib.h>

#include "server/api_request.hpp"
#include "server/api_routes.hpp"
#include "server/engine.hpp"
#include "server/error.hpp"
#include "server/store.hpp"

namespace tb {

namespace {

std::string what_to_connect(const std::string& kind) {
  if (kind == "channel_match")
    return "connect both inputs to node A (the output side of the reference resistor)";
  if (kind == "open") return "take the part out; leave the clips apart where the part sits";
  if (kind == "short")
    return "clip the two leads together, or bridge them with a short copper strap, where the "
           "part sits";
  return "";
}

nlohmann::json to_json(const CalibrationRecord& c) {
  return {{"id", c.id},
          {"taken_at", c.taken_at},
          {"kind", c.kind},
          {"device", c.device},
          {"sample_rate_hz", c.sample_rate_hz},
          {"layout", c.layout},
          {"rref_ohm", c.rref_ohm},
          {"points", c.body.value("points", nlohmann::json::array())}};
}

}  // namespace

void add_calibration_routes(std::vector<Route>& r) {
  r.push_back(
      {"POST", "/api/v1/calibrations", Access::change,
       "take one calibration step (channel_match, open, short) at a list of frequencies",
       [](ApiContext& ctx, const httplib::Request& req) {
         const auto b =
             api::parse_body(req.body, {"kind", "freqs_hz", "level_fs", "duration_s", "wait"});
         CalibrationTask t;
         t.kind = api::need_text(b, "kind");
         t.freqs_hz = api::opt_numbers(b, "freqs_hz")
                          .value_or(std::vector<double>{ctx.settings.get().number("freq_hz")});
         t.level_fs = api::opt_number(b, "level_fs");
         t.duration_s = api::opt_number(b, "duration_s");
         const auto queued = ctx.engine.submit(t);
         auto reply = task_reply(ctx.engine, queued, api::opt_bool(b, "wait").value_or(false), 300,
                                 [&ctx](const TaskInfo& done) {
                                   const auto id =
                                       done.result.value("calibration_id", std::int64_t{0});
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
