// Routes for readings: one now, continuous watching, the saved list, export.
#include <httplib.h>

#include "server/api_request.hpp"
#include "server/api_routes.hpp"
#include "server/engine.hpp"
#include "server/error.hpp"
#include "server/export_format.hpp"
#include "server/store.hpp"

namespace tb {

namespace {

ReadingTask reading_task(const nlohmann::json& b) {
  ReadingTask t;
  t.freq_hz = api::opt_number(b, "freq_hz");
  t.level_fs = api::opt_number(b, "level_fs");
  t.duration_s = api::opt_number(b, "duration_s");
  t.part_id = api::opt_id(b, "part_id");
  t.role = part_role_field(b, t.part_id);
  t.swap_average = api::opt_bool(b, "swap_average").value_or(false);
  if (auto k = api::opt_text(b, "kind")) {
    t.force_kind = dsp::parse_part_kind(*k);
    if (!t.force_kind) {
      throw Error("request.bad_value", "kind must be C, L or R, got '" + *k + "'",
                  "leave it out to let the reading decide");
    }
  }
  if (auto c = api::opt_text(b, "part_class")) {
    t.part_class = dsp::parse_part_class(*c);
    if (!t.part_class) {
      throw Error("request.bad_value",
                  "part_class must be general, electrolytic or in_circuit, got '" + *c + "'",
                  "electrolytic caps the part at 0.5 V rms, in_circuit at 100 mV peak; leave it "
                  "out for a general part");
    }
  }
  return t;
}

void check_part(const Store& store, const std::optional<std::int64_t>& part_id) {
  if (part_id && !store.part(*part_id)) not_found("part", *part_id);
}

}  // namespace

void add_reading_routes(std::vector<Route>& r) {
  r.push_back({"POST", "/api/v1/readings", Access::change,
               "take one reading (\"wait\": true answers with the reading)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto b = api::parse_body(
                     req.body, {"freq_hz", "level_fs", "duration_s", "kind", "part_class",
                                "part_id", "role", "swap_average", "wait"});
                 const auto task = reading_task(b);
                 check_part(ctx.store, task.part_id);
                 const auto queued = ctx.engine.submit(task);
                 return task_reply(ctx.engine, queued, api::opt_bool(b, "wait").value_or(false),
                                   120, [&ctx](const TaskInfo& t) {
                                     const auto id = t.result.value("reading_id", std::int64_t{0});
                                     const auto rec = ctx.store.reading(id);
                                     if (!rec) not_found("reading", id);
                                     return ApiReply{201, to_json(*rec)};
                                   });
               }});
  r.push_back({"GET", "/api/v1/readings", Access::read,
               "saved readings, newest first (?limit=50&before=ID)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const int limit =
                     api::query_int(req.get_param_value("limit"), "limit", 50, 1, 1000);
                 const std::string before = req.get_param_value("before");
                 const auto list = ctx.store.readings(
                     limit, before.empty() ? 0 : api::parse_id(before, "before"));
                 nlohmann::json out = nlohmann::json::array();
                 for (const auto& rec : list)
                   out.push_back(to_json(rec));
                 return ApiReply{200, {{"readings", out}}};
               }});
  r.push_back({"GET", "/api/v1/readings/latest", Access::read, "the newest reading",
               [](ApiContext& ctx, const httplib::Request&) {
                 if (const auto latest = ctx.engine.latest_reading()) return ApiReply{200, *latest};
                 const auto rec = ctx.store.latest_reading();
                 if (!rec) {
                   throw Error("reading.not_found", "no reading has been taken yet",
                               "take one with POST /api/v1/readings");
                 }
                 return ApiReply{200, to_json(*rec)};
               }});
  r.push_back({"GET", "/api/v1/readings/export", Access::read,
               "saved readings as CSV or JSON (?format=csv&limit=1000)",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto format = export_format(req);
                 const int limit =
                     api::query_int(req.get_param_value("limit"), "limit", 1000, 1, 100000);
                 const auto list = ctx.store.readings(limit);
                 if (format == "csv")
                   return ApiReply::file(readings_csv(list), "text/csv", "readings.csv");
                 nlohmann::json out = nlohmann::json::array();
                 for (const auto& rec : list)
                   out.push_back(to_json(rec));
                 return ApiReply{200, {{"readings", out}}, "readings.json"};
               }});
  r.push_back({"GET", "/api/v1/readings/{id}", Access::read, "one saved reading",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 const auto rec = ctx.store.reading(id);
                 if (!rec) not_found("reading", id);
                 return ApiReply{200, to_json(*rec)};
               }});
  r.push_back({"PUT", "/api/v1/readings/{id}", Access::change,
               "file a saved reading under a part and role, or unfile it",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 const auto b = api::parse_body(req.body, {"part_id", "role"});
                 const auto rec = ctx.store.reading(id);
                 if (!rec) not_found("reading", id);
                 const auto [part_id, role] = filing_from(b, rec->part_id, rec->role);
                 check_part(ctx.store, part_id);
                 ctx.store.file_reading(id, part_id, role);
                 return ApiReply{200, to_json(*ctx.store.reading(id))};
               }});
  r.push_back({"DELETE", "/api/v1/readings/{id}", Access::change, "delete a saved reading",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 if (!ctx.store.delete_reading(id)) not_found("reading", id);
                 return ApiReply{204, nullptr};
               }});
  r.push_back({"POST", "/api/v1/watch", Access::change,
               "take readings continuously (per_s a second) until stopped",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto b = api::parse_body(
                     req.body, {"per_s", "freq_hz", "level_fs", "duration_s", "kind", "part_class",
                                "part_id", "role", "swap_average"});
                 WatchTask w;
                 w.each = reading_task(b);
                 w.per_s = api::opt_number(b, "per_s").value_or(1.0);
                 check_part(ctx.store, w.each.part_id);
                 return ApiReply{202, {{"task", to_json(ctx.engine.submit(w))}}};
               }});
  r.push_back({"DELETE", "/api/v1/watch", Access::change, "stop continuous readings",
               [](ApiContext& ctx, const httplib::Request&) {
                 const auto id = ctx.engine.cancel_kind("watch");
                 if (!id) {
                   throw Error("watch.not_found", "no continuous readings are running",
                               "start them with POST /api/v1/watch");
                 }
                 return ApiReply{202, {{"cancelling", *id}}};
               }});
}

}  // namespace tb
