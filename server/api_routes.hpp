// The HTTP API's routes, one table: method, path (as docs/api.md writes it, "{id}" for a
// numeric id), who may call it, a one-line summary, and the handler. The table is what
// the server registers and what `tonebridged --list-routes` prints, so a test can hold
// docs/api.md to it.
#pragma once

#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include "server/store.hpp"

namespace httplib {
struct Request;
}

namespace tb {

class Engine;
class EventBus;
class LiveSettings;

struct ApiReply {
  ApiReply() = default;
  /// A JSON reply; a `download_name` makes browsers save it as that file.
  ApiReply(int status_code, nlohmann::json json_body, std::string download_name = "")
      : status(status_code), body(std::move(json_body)), filename(std::move(download_name)) {}
  /// A file that is not JSON (CSV), for download.
  static ApiReply file(std::string text, std::string type, std::string name) {
    ApiReply r(200, nullptr, std::move(name));
    r.text = std::move(text);
    r.content_type = std::move(type);
    return r;
  }

  int status = 200;
  nlohmann::json body;       ///< sent as JSON unless `content_type` is set
  std::string filename;      ///< sets Content-Disposition: attachment
  std::string text;          ///< a non-JSON body (CSV)
  std::string content_type;  ///< for `text`
};

enum class Access { read, change };  ///< change needs a control token on the LAN

struct Route {
  std::string method;  ///< GET POST PUT DELETE
  std::string path;    ///< "/api/v1/sweeps/{id}"
  Access access = Access::read;
  std::string summary;
  std::function<ApiReply(struct ApiContext&, const httplib::Request&)> handler;  ///< null: events
};

struct ApiContext {
  Engine& engine;
  Store& store;
  LiveSettings& settings;
  EventBus& events;
  nlohmann::json service;  ///< version, started_at, listen, lan, db path: for /status
};

/// Every route of the API, in the order docs/api.md lists them.
std::vector<Route> api_routes();

// The route groups, one file each.
void add_service_routes(std::vector<Route>& r);      // api_service_routes.cpp
void add_reading_routes(std::vector<Route>& r);      // api_reading_routes.cpp
void add_sweep_routes(std::vector<Route>& r);        // api_sweep_routes.cpp
void add_calibration_routes(std::vector<Route>& r);  // api_calibration_routes.cpp
void add_job_routes(std::vector<Route>& r);          // api_job_routes.cpp
void add_check_routes(std::vector<Route>& r);        // api_check_routes.cpp

/// Path parameter i (1-based) of a matched route, as an id. Throws request.bad_value.
std::int64_t path_id(const httplib::Request& req, int i = 1);

/// The reply to a queued task: 202 with the task, or with `wait` the outcome once it
/// ended (on_done's reply when done; the task's error with its status when it failed;
/// 409 task.cancelled) — 202 again if it is still running after `wait_s`.
ApiReply task_reply(Engine& engine, const struct TaskInfo& queued, bool wait, double wait_s,
                    const std::function<ApiReply(const struct TaskInfo&)>& on_done);

/// The ?format= of an export: "json" (the default) or "csv"; throws request.bad_value.
std::string export_format(const httplib::Request& req);

/// The `role` of a request that files its reading or sweep under `part_id`: "original"
/// (the default) or "replacement". Throws request.bad_value for another value and
/// request.missing_field for a role without a part_id.
std::string part_role_field(const nlohmann::json& body, const std::optional<std::int64_t>& part_id);

/// PUT /readings/{id} and /sweeps/{id}: the part and role a record is filed under after
/// the body {"part_id": ID or null, "role": ...}; fields left out keep `part_id` and
/// `role`. Throws request.* as part_role_field.
std::pair<std::optional<std::int64_t>, PartRole> filing_from(const nlohmann::json& body,
                                                             std::optional<std::int64_t> part_id,
                                                             PartRole role);

/// A 404 with id `what`.not_found, e.g. not_found("sweep", 7).
[[noreturn]] void not_found(const std::string& what, std::int64_t id);

}  // namespace tb
