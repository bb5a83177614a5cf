// Routes for sweeps: start, progress, cancel, fetch, list, delete, export.
#include <httplib.h>

#include "server/api_request.hpp"
#include "server/api_routes.hpp"
#include "server/engine.hpp"
#include "server/error.hpp"
#include "server/export_format.hpp"
#include "server/store.hpp"

namespace tb {

namespace {

// The id of the task running this sweep, if one is.
std::optional<std::int64_t> running_task(const Engine& engine, std::int64_t sweep_id) {
  const auto st = engine.status();
  if (st.task && st.task->kind == "sweep" &&
      st.task->result.value("sweep_id", std::int64_t{0}) == sweep_id)
    return st.task->id;
  return std::nullopt;
}

SweepRecord need_sweep(const Store& store, std::int64_t id) {
  auto s = store.sweep(id);
  if (!s) not_found("sweep", id);
  return *s;
}

}  // namespace

void add_sweep_routes(std::vector<Route>& r) {
  r.push_back(
      {"POST", "/api/v1/sweeps", Access::change,
       "start a sweep (stepped or multisine); points are saved as they are measured",
       [](ApiContext& ctx, const httplib::Request& req) {
         const auto b =
             api::parse_body(req.body, {"start_hz", "stop_hz", "points_per_decade", "level_fs",
                                        "duration_s", "refine", "target_u_pct", "label", "part_id",
                                        "role", "wait", "method", "periods", "grid"});
         SweepTask t;
         t.start_hz = api::opt_number(b, "start_hz").value_or(t.start_hz);
         t.stop_hz = api::opt_number(b, "stop_hz").value_or(t.stop_hz);
         if (auto p = api::opt_number(b, "points_per_decade")) {
           if (*p != std::floor(*p)) {
             throw Error("request.bad_type", "field 'points_per_decade' must be a whole number",
                         "e.g. 10");
           }
           t.points_per_decade = static_cast<int>(std::clamp(*p, -1.0, 1e6));
         }
         t.level_fs = api::opt_number(b, "level_fs");
         t.duration_s = api::opt_number(b, "duration_s");
         t.refine = api::opt_bool(b, "refine").value_or(true);
         t.target_u_pct = api::opt_number(b, "target_u_pct");
         t.method = api::opt_text(b, "method").value_or(t.method);
         t.grid = api::opt_text(b, "grid").value_or(t.grid);
         if (auto p = api::opt_number(b, "periods")) {
           if (*p != std::floor(*p)) {
             throw Error("request.bad_type", "field 'periods' must be a whole number", "e.g. 6");
           }
           t.periods = static_cast<int>(std::clamp(*p, -1.0, 1e6));
         }
         t.label = api::opt_text(b, "label").value_or("");
         if (t.label.size() > 200) {
           throw Error("request.out_of_range", "label is longer than 200 characters", "shorten it");
         }
         t.part_id = api::opt_id(b, "part_id");
         t.role = part_role_field(b, t.part_id);
         if (t.part_id && !ctx.store.part(*t.part_id)) not_found("part", *t.part_id);
         const auto queued = ctx.engine.submit(t);
         return task_reply(ctx.engine, queued, api::opt_bool(b, "wait").value_or(false), 600,
                           [&ctx](const TaskInfo& done) {
                             const auto id = done.result.value("sweep_id", std::int64_t{0});
                             return ApiReply{201, to_json(need_sweep(ctx.store, id))};
                           });
       }});
  r.push_back({"GET", "/api/v1/sweeps", Access::read,
               "saved sweeps, newest first, without their points (?limit=50&before=ID)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const int limit =
                     api::query_int(req.get_param_value("limit"), "limit", 50, 1, 1000);
                 const std::string before = req.get_param_value("before");
                 nlohmann::json out = nlohmann::json::array();
                 for (const auto& s :
                      ctx.store.sweeps(limit, before.empty() ? 0 : api::parse_id(before, "before")))
                   out.push_back(to_json(s));
                 return ApiReply{200, {{"sweeps", out}}};
               }});
  r.push_back({"GET", "/api/v1/sweeps/{id}", Access::read,
               "one sweep: its state, progress and its points as columns",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 auto j = to_json(need_sweep(ctx.store, id));
                 j["columns"] = sweep_columns(ctx.store.sweep_points(id));
                 return ApiReply{200, j};
               }});
  r.push_back({"POST", "/api/v1/sweeps/{id}/cancel", Access::change,
               "stop a running sweep; the points so far are kept",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 const auto sweep = need_sweep(ctx.store, id);
                 const auto task = running_task(ctx.engine, id);
                 if (!task || sweep.status != SweepStatus::running) {
                   throw Error("sweep.conflict",
                               "sweep " + std::to_string(id) + " is not running (" +
                                   to_string(sweep.status) + ")",
                               "only a running sweep can be cancelled");
                 }
                 ctx.engine.cancel(*task);
                 return ApiReply{202, {{"cancelling", id}, {"task_id", *task}}};
               }});
  r.push_back({"PUT", "/api/v1/sweeps/{id}", Access::change,
               "file a sweep under a part and role, or unfile it",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 const auto b = api::parse_body(req.body, {"part_id", "role"});
                 const auto s = need_sweep(ctx.store, id);
                 const auto [part_id, role] = filing_from(b, s.part_id, s.role);
                 if (part_id && !ctx.store.part(*part_id)) not_found("part", *part_id);
                 ctx.store.file_sweep(id, part_id, role);
                 return ApiReply{200, to_json(need_sweep(ctx.store, id))};
               }});
  r.push_back({"DELETE", "/api/v1/sweeps/{id}", Access::change, "delete a sweep and its points",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 need_sweep(ctx.store, id);
                 if (running_task(ctx.engine, id)) {
                   throw Error(
                       "sweep.busy", "sweep " + std::to_string(id) + " is running",
                       "cancel it first: POST /api/v1/sweeps/" + std::to_string(id) + "/cancel");
                 }
                 ctx.store.delete_sweep(id);
                 return ApiReply{204, nullptr};
               }});
  r.push_back({"GET", "/api/v1/sweeps/{id}/export", Access::read,
               "a sweep as CSV or JSON (?format=csv)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 const auto s = need_sweep(ctx.store, id);
                 const auto points = ctx.store.sweep_points(id);
                 const auto f = export_format(req);
                 const std::string name = "sweep-" + std::to_string(id);
                 if (f == "csv")
                   return ApiReply::file(sweep_csv(s, points), "text/csv", name + ".csv");
                 auto j = to_json(s);
                 j["columns"] = sweep_columns(points);
                 nlohmann::json pts = nlohmann::json::array();
                 for (const auto& p : points)
                   pts.push_back(p.body);
                 j["points"] = pts;
                 return ApiReply{200, j, name + ".json"};
               }});
}

}  // namespace tb
