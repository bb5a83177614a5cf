#include "server/http_service.hpp"

#include <httplib.h>

#include <regex>

#include "server/engine.hpp"
#include "server/error.hpp"
#include "server/error_report.hpp"
#include "server/event_bus.hpp"

namespace tb {

namespace {

bool starts(const std::string& s, const char* prefix) {
  return s.rfind(prefix, 0) == 0;
}
bool ends(const std::string& s, const std::string& suffix) {
  return s.size() >= suffix.size() &&
         s.compare(s.size() - suffix.size(), suffix.size(), suffix) == 0;
}

// "/api/v1/sweeps/{id}" -> "/api/v1/sweeps/([^/]+)": any text reaches the handler, which
// answers a non-number with a clear 400 instead of a bare 404.
std::string to_regex(const std::string& path) {
  return std::regex_replace(path, std::regex(R"(\{[a-z_]+\})"), "([^/]+)");
}

void send(httplib::Response& res, const ApiReply& r) {
  res.status = r.status;
  if (!r.filename.empty())
    res.set_header("Content-Disposition", "attachment; filename=\"" + r.filename + "\"");
  if (!r.content_type.empty()) {
    res.set_content(r.text, r.content_type.c_str());
  } else if (r.status != 204) {
    res.set_content(r.body.dump(2, ' ', false, nlohmann::json::error_handler_t::replace) + "\n",
                    "application/json");
  }
}

void send_error(httplib::Response& res, int status, const std::string& id,
                const std::string& message, const std::string& hint) {
  res.status = status;
  res.set_content(error_body(id, message, hint).dump(2) + "\n", "application/json");
}

std::string token_of(const httplib::Request& req) {
  const auto auth = req.get_header_value("Authorization");
  if (starts(auth, "Bearer ")) return auth.substr(7);
  if (req.has_param("token")) return req.get_param_value("token");
  const auto cookie = req.get_header_value("Cookie");
  const auto at = cookie.find("tb_token=");
  if (at != std::string::npos) {
    const auto end = cookie.find(';', at);
    return cookie.substr(at + 9, end == std::string::npos ? std::string::npos : end - at - 9);
  }
  return "";
}

}  // namespace

nlohmann::json error_body(const std::string& id, const std::string& message,
                          const std::string& hint) {
  return {{"error", {{"id", id}, {"message", message}, {"hint", hint}}}};
}

int status_for(const std::string& id) {
  if (ends(id, ".not_found")) return 404;
  if (ends(id, ".conflict") || ends(id, ".busy")) return 409;
  // A task the technician cancelled, or a prompt nobody answered in time.
  if (id == "task.cancelled") return 409;
  if (id == "task.no_answer") return 408;
  if (id == "request.too_large") return 413;
  if (id == "engine.queue_full" || id == "events.too_many_clients") return 429;
  // The bench, not the request: the card, its samples or the generator signal failed.
  if (id == "engine.stopping" || starts(id, "device.") || starts(id, "capture.") ||
      id == "signal.lost" || id == "signal.level_changed")
    return 503;
  // The request was fine but the signal could not be read (clipping, no tone, not settled):
  // the technician's to fix at the jig, not a bug of the service.
  if (starts(id, "analysis.") || starts(id, "recording.") || starts(id, "signal.") ||
      starts(id, "calibration."))
    return 422;
  if (starts(id, "request.") || starts(id, "config.") || starts(id, "part.") ||
      starts(id, "file.bad") || id == "file.empty" || id == "file.mono" || starts(id, "measure.") ||
      starts(id, "circuit.") || starts(id, "check.") || starts(id, "marking.") ||
      starts(id, "fit."))
    return 400;
  return 500;
}

HttpService::HttpService(ApiContext& ctx, const AccessControl& access, const HttpOptions& options)
    : ctx_(ctx), access_(access), options_(options), server_(std::make_unique<httplib::Server>()) {
  // Each open event stream holds a pool thread: room for all of them plus the API.
  const auto threads = static_cast<std::size_t>(options_.max_event_clients + 8);
  server_->new_task_queue = [threads] { return new httplib::ThreadPool(threads); };
  // httplib's default also sets SO_REUSEPORT, which would let a second tonebridged bind
  // the same port and take half the requests; SO_REUSEADDR alone allows a quick restart.
  server_->set_socket_options([](socket_t sock) {
    int yes = 1;
    setsockopt(sock, SOL_SOCKET, SO_REUSEADDR, &yes, sizeof yes);
  });
  // Replies go out as headers then body: without TCP_NODELAY the body waits for the
  // client's delayed ACK (40 ms on Linux) on every keep-alive request.
  server_->set_tcp_nodelay(true);
  server_->set_payload_max_length(options_.max_body_bytes);
  server_->set_read_timeout(10, 0);
  server_->set_write_timeout(10, 0);
  server_->set_keep_alive_max_count(1000);
  install_routes();
  install_events();
  if (!options_.vendor_dir.empty()) server_->set_mount_point("/vendor/uplot/", options_.vendor_dir);
  if (!options_.web_dir.empty()) server_->set_mount_point("/", options_.web_dir);
  port_ = options_.port == 0
              ? server_->bind_to_any_port(options_.listen)
              : (server_->bind_to_port(options_.listen, options_.port) ? options_.port : -1);
  if (port_ <= 0) {
    throw Error("http.bind_failed",
                "cannot serve on " + options_.listen + ":" + std::to_string(options_.port) + ": " +
                    std::strerror(errno),
                "another program (or another tonebridged) may use the port: pick another "
                "with --port, or stop the other one");
  }
}

HttpService::~HttpService() {
  stop();
}

void HttpService::serve() {
  server_->listen_after_bind();
}

void HttpService::stop() {
  stopping_ = true;
  ctx_.events.close_all();
  server_->stop();
}

void HttpService::install_routes() {
  server_->set_pre_routing_handler([this](const httplib::Request& req, httplib::Response& res) {
    const bool changes = req.method != "GET" && req.method != "HEAD" && req.method != "OPTIONS";
    const auto d = access_.check(req.remote_addr, req.get_header_value("Host"),
                                 req.get_header_value("Origin"), token_of(req), changes);
    if (d.status == 0) {
      // A tablet opens the URL with ?token=...; the page's own requests then carry it as a
      // cookie that scripts cannot read and other sites cannot send.
      if (access_.lan() && req.has_param("token") && !is_loopback_address(req.remote_addr)) {
        res.set_header("Set-Cookie", "tb_token=" + req.get_param_value("token") +
                                         "; Path=/; HttpOnly; SameSite=Strict");
      }
      return httplib::Server::HandlerResponse::Unhandled;
    }
    send_error(res, d.status, d.id, d.message, d.hint);
    return httplib::Server::HandlerResponse::Handled;
  });
  server_->set_error_handler(httplib::Server::HandlerWithResponse(
      [this](const httplib::Request& req, httplib::Response& res) {
        if (!res.body.empty()) return httplib::Server::HandlerResponse::Unhandled;
        if (res.status == 413) {
          send_error(res, 413, "request.too_large",
                     "the request body is larger than " + std::to_string(options_.max_body_bytes) +
                         " bytes",
                     "send less; max_body_bytes sets the limit");
        } else if (res.status == 404) {
          send_error(res, 404, "request.no_route", "no route " + req.method + " " + req.path,
                     "docs/api.md lists the routes; GET /api/v1/routes lists them too");
        } else if (res.status == 400) {
          send_error(res, 400, "request.malformed", "the request could not be read",
                     "send a well-formed HTTP request with Content-Length for a body");
        } else {
          send_error(res, res.status, "request.failed",
                     "the request failed with HTTP " + std::to_string(res.status),
                     "docs/api.md describes each route");
        }
        return httplib::Server::HandlerResponse::Handled;
      }));
  server_->set_exception_handler(
      [](const httplib::Request&, httplib::Response& res, std::exception_ptr ep) {
        try {
          std::rethrow_exception(ep);
        } catch (...) {
          const auto e = describe_current_error();
          send_error(res, status_for(e.id), e.id, e.message, e.hint);
        }
      });

  routes_ = api_routes();
  routes_.push_back({"GET", "/api/v1/routes", Access::read, "this list of routes",
                     [this](ApiContext&, const httplib::Request&) {
                       nlohmann::json list = nlohmann::json::array();
                       for (const auto& r : routes_) {
                         list.push_back({{"method", r.method},
                                         {"path", r.path},
                                         {"changes", r.access == Access::change},
                                         {"summary", r.summary}});
                       }
                       return ApiReply{200, {{"routes", list}}};
                     }});
  for (const auto& route : routes_) {
    if (!route.handler) continue;
    auto handler = [this, h = route.handler](const httplib::Request& req, httplib::Response& res) {
      try {
        send(res, h(ctx_, req));
      } catch (...) {
        const auto e = describe_current_error();
        send_error(res, status_for(e.id), e.id, e.message, e.hint);
      }
    };
    const std::string pattern = to_regex(route.path);
    if (route.method == "GET") server_->Get(pattern, handler);
    if (route.method == "POST") server_->Post(pattern, handler);
    if (route.method == "PUT") server_->Put(pattern, handler);
    if (route.method == "DELETE") server_->Delete(pattern, handler);
  }
}

void HttpService::install_events() {
  routes_.push_back({"GET", "/api/v1/events", Access::read,
                     "live events (Server-Sent Events): state, task, reading, sweep.*, ...",
                     nullptr});
  server_->Get("/api/v1/events", [this](const httplib::Request&, httplib::Response& res) {
    std::shared_ptr<EventStream> stream;
    try {
      stream = ctx_.events.subscribe();
    } catch (...) {
      const auto e = describe_current_error();
      send_error(res, status_for(e.id), e.id, e.message, e.hint);
      return;
    }
    res.set_header("Cache-Control", "no-store");
    // The first event tells a new client where things stand.
    const std::string hello =
        "retry: 2000\nevent: hello\ndata: " + to_json(ctx_.engine.status()).dump() + "\n\n";
    res.set_chunked_content_provider(
        "text/event-stream",
        [this, stream, hello, sent_hello = false, idle_ms = 0](std::size_t,
                                                               httplib::DataSink& sink) mutable {
          if (!sent_hello) {
            sent_hello = true;
            return sink.write(hello.data(), hello.size());
          }
          if (stopping_ || stream->closed() || !sink.is_writable()) {
            sink.done();
            return true;
          }
          std::string msg;
          if (stream->next(msg, 500)) {
            idle_ms = 0;
            return sink.write(msg.data(), msg.size());
          }
          // A comment every 15 s keeps proxies from closing the stream and finds clients
          // that went away without saying so.
          if ((idle_ms += 500) >= 15000) {
            idle_ms = 0;
            static const std::string ping = ": ping\n\n";
            return sink.write(ping.data(), ping.size());
          }
          return true;
        },
        [this, stream](bool) { ctx_.events.unsubscribe(stream); });
  });
}

}  // namespace tb
