#include "server/api_routes.hpp"

#include <httplib.h>

#include "server/api_request.hpp"
#include "server/engine.hpp"
#include "server/error.hpp"
#include "server/http_service.hpp"

namespace tb {

std::vector<Route> api_routes() {
  std::vector<Route> r;
  add_service_routes(r);
  add_reading_routes(r);
  add_sweep_routes(r);
  add_calibration_routes(r);
  add_job_routes(r);
  add_check_routes(r);
  return r;
}

std::int64_t path_id(const httplib::Request& req, int i) {
  return api::parse_id(req.matches[static_cast<std::size_t>(i)].str(), "the id in the path");
}

ApiReply task_reply(Engine& engine, const TaskInfo& queued, bool wait, double wait_s,
                    const std::function<ApiReply(const TaskInfo&)>& on_done) {
  if (!wait) return ApiReply{202, {{"task", to_json(queued)}}};
  const auto t = engine.wait(queued.id, wait_s);
  if (!t || t->ended_at.empty()) return ApiReply{202, {{"task", to_json(t ? *t : queued)}}};
  if (t->status == "done") return on_done(*t);
  if (t->status == "cancelled") {
    auto body =
        error_body("task.cancelled", "the task was cancelled before it finished", "start it again");
    body["task"] = to_json(*t);
    return ApiReply{409, body};
  }
  const auto& e = t->error;
  auto body = error_body(e.value("id", "internal"), e.value("message", ""), e.value("hint", ""));
  body["task"] = to_json(*t);
  return ApiReply{status_for(e.value("id", "internal")), body};
}

std::string export_format(const httplib::Request& req) {
  const auto f = req.has_param("format") ? req.get_param_value("format") : "json";
  if (f != "json" && f != "csv") {
    throw Error("request.bad_value", "format must be csv or json, got '" + f + "'",
                "add ?format=csv or ?format=json");
  }
  return f;
}

std::string part_role_field(const nlohmann::json& body,
                            const std::optional<std::int64_t>& part_id) {
  const auto role = api::opt_text(body, "role");
  if (!role) return "original";
  if (!parse_part_role(*role)) {
    throw Error("request.bad_value", "role must be original or replacement, got '" + *role + "'",
                "original: the part as found in the unit; replacement: the part fitted instead");
  }
  if (!part_id) {
    throw Error(
        "request.missing_field", "a role needs a part_id",
        "give the part the reading is of, e.g. {\"part_id\": 4, \"role\": \"" + *role + "\"}");
  }
  return *role;
}

std::pair<std::optional<std::int64_t>, PartRole> filing_from(const nlohmann::json& body,
                                                             std::optional<std::int64_t> part_id,
                                                             PartRole role) {
  if (body.contains("part_id"))
    part_id = body["part_id"].is_null() ? std::nullopt : api::opt_id(body, "part_id");
  if (body.contains("role")) role = *parse_part_role(part_role_field(body, part_id));
  return {part_id, part_id ? role : PartRole::original};
}

void not_found(const std::string& what, std::int64_t id) {
  throw Error(what + ".not_found", "no " + what + " with id " + std::to_string(id),
              "list them with GET /api/v1/" + what + "s");
}

}  // namespace tb
