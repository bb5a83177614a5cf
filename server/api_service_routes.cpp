// Routes about the service itself: status, devices, settings, tasks, the simulated bench.
#include <httplib.h>

#include "server/api_request.hpp"
#include "server/api_routes.hpp"
#include "server/demo_scenario.hpp"
#include "server/device_registry.hpp"
#include "server/engine.hpp"
#include "server/event_bus.hpp"
#include "server/live_settings.hpp"
#include "server/store.hpp"

namespace tb {

namespace {

constexpr const char* kSafety =
    "Discharge every capacitor through a bleeder resistor and confirm near 0 V with a meter "
    "before connecting it; tube and power-amplifier supplies can hold lethal voltage. Never "
    "connect the jig to powered equipment or mains. A charged part can destroy the sound "
    "card's inputs. Follow local codes and licensed practice.";

}  // namespace

void add_service_routes(std::vector<Route>& r) {
  r.push_back({"GET", "/api/v1/status", Access::read, "the service, the engine and the store",
               [](ApiContext& ctx, const httplib::Request&) {
                 nlohmann::json j = ctx.service;
                 j["engine"] = to_json(ctx.engine.status());
                 j["store"] = {{"path", ctx.store.path().string()},
                               {"schema_version", ctx.store.schema_version()},
                               {"sweeps_interrupted_at_start", ctx.store.interrupted_at_open()}};
                 j["event_clients"] = ctx.events.clients();
                 j["safety"] = kSafety;
                 return ApiReply{200, j};
               }});
  r.push_back({"GET", "/api/v1/devices", Access::read, "audio devices that can be used",
               [](ApiContext& ctx, const httplib::Request&) {
                 nlohmann::json list = nlohmann::json::array();
                 for (const auto& d : list_devices(ctx.settings.get())) {
                   nlohmann::json j = {{"id", d.id},
                                       {"name", d.name},
                                       {"inputs", d.inputs},
                                       {"outputs", d.outputs},
                                       {"sample_rates_hz", d.sample_rates_hz},
                                       {"simulated", d.simulated}};
                   if (!d.simulated) {
                     j["index"] = d.index;
                     j["host_api"] = d.host_api;
                   }
                   list.push_back(j);
                 }
                 return ApiReply{200, {{"devices", list}, {"in_use", ctx.engine.status().device}}};
               }});
  r.push_back(
      {"GET", "/api/v1/settings", Access::read, "every setting's value and its limits",
       [](ApiContext& ctx, const httplib::Request&) {
         return ApiReply{
             200, {{"values", ctx.settings.get().to_json()}, {"schema", settings_schema_json()}}};
       }});
  r.push_back({"PUT", "/api/v1/settings", Access::change,
               "change live settings (all or nothing) until the service restarts",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto now = ctx.settings.apply(api::parse_object(req.body));
                 ctx.events.publish("settings", now.to_json());
                 return ApiReply{200, {{"values", now.to_json()}}};
               }});
  r.push_back({"GET", "/api/v1/tasks", Access::read, "queued, running and recently ended tasks",
               [](ApiContext& ctx, const httplib::Request&) {
                 nlohmann::json list = nlohmann::json::array();
                 for (const auto& t : ctx.engine.tasks())
                   list.push_back(to_json(t));
                 return ApiReply{200, {{"tasks", list}}};
               }});
  r.push_back({"GET", "/api/v1/tasks/{id}", Access::read, "one task and its progress",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 const auto t = ctx.engine.task(id);
                 if (!t) not_found("task", id);
                 return ApiReply{200, to_json(*t)};
               }});
  r.push_back({"DELETE", "/api/v1/tasks/{id}", Access::change, "cancel a queued or running task",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 if (!ctx.engine.cancel(id)) {
                   if (!ctx.engine.task(id)) not_found("task", id);
                   return ApiReply{
                       409,
                       {{"error",
                         {{"id", "task.ended"},
                          {"message", "task " + std::to_string(id) + " has already ended"},
                          {"hint", "nothing to cancel"}}}}};
                 }
                 return ApiReply{202, {{"cancelling", id}}};
               }});
  r.push_back({"POST", "/api/v1/tasks/{id}/continue", Access::change,
               "confirm that what the running task asked for (its prompt) is done",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto id = path_id(req);
                 if (!ctx.engine.resume(id)) {
                   if (!ctx.engine.task(id)) not_found("task", id);
                   return ApiReply{
                       409,
                       {{"error",
                         {{"id", "task.not_waiting"},
                          {"message", "task " + std::to_string(id) + " is not waiting for you"},
                          {"hint", "continue a task only while its prompt is shown"}}}}};
                 }
                 return ApiReply{202, {{"continuing", id}}};
               }});
  r.push_back({"GET", "/api/v1/bench", Access::read,
               "the simulated bench: the part on the jig and the demo tray",
               [](ApiContext& ctx, const httplib::Request&) {
                 const auto st = ctx.engine.status();
                 return ApiReply{200,
                                 {{"simulated", !st.bench_part.empty()},
                                  {"part", st.bench_part},
                                  {"tray", tray_json()}}};
               }});
  r.push_back({"PUT", "/api/v1/bench/part", Access::change,
               "simulated bench: put another part on the jig",
               [](ApiContext& ctx, const httplib::Request& req) {
                 const auto body = api::parse_body(req.body, {"part"});
                 const auto t = ctx.engine.submit(BenchPartTask{api::need_text(body, "part")});
                 return ApiReply{202, {{"task", to_json(t)}}};
               }});
}

}  // namespace tb
