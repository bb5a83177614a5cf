// The HTTP side of tonebridged (cpp-httplib): the API routes (api_routes.hpp), the live
// event stream, the page's static files, and the rules every request passes first
// (access_control.hpp, a body size limit, JSON errors for everything that goes wrong).
#pragma once

#include <atomic>
#include <memory>
#include <string>

#include "server/access_control.hpp"
#include "server/api_routes.hpp"

namespace httplib {
class Server;
}

namespace tb {

struct HttpOptions {
  std::string listen = "127.0.0.1";
  int port = 7583;  ///< 0: any free port (tests)
  std::size_t max_body_bytes = 65536;
  int max_event_clients = 64;
  std::string web_dir;  ///< static files of the page; empty: none
  /// The plotting library's files (uPlot's dist/ from npm), served under /vendor/uplot/ so
  /// the page works on a bench without internet; empty or missing: the page draws no plots.
  std::string vendor_dir;
};

class HttpService {
 public:
  /// Binds the socket; throws tb::Error http.bind_failed naming the address and port.
  HttpService(ApiContext& ctx, const AccessControl& access, const HttpOptions& options);
  ~HttpService();

  int port() const { return port_; }
  /// Serves until stop(); call from one thread.
  void serve();
  /// Ends every event stream and stops serving (safe from any thread, not from a signal).
  void stop();

 private:
  void install_routes();
  void install_events();

  ApiContext& ctx_;
  const AccessControl& access_;
  HttpOptions options_;
  std::vector<Route> routes_;
  std::unique_ptr<httplib::Server> server_;
  std::atomic<bool> stopping_{false};
  int port_ = 0;
};

/// JSON error body: {"error":{"id":..,"message":..,"hint":..}}.
nlohmann::json error_body(const std::string& id, const std::string& message,
                          const std::string& hint);
/// The HTTP status for an error id: 400 for request.*, config.*, part.*, measure.*;
/// 404 for *.not_found; 409 for *.conflict / *.busy; 413 for request.too_large;
/// 429 for engine.queue_full and events.too_many_clients; 503 for engine.stopping and
/// device.*; 500 for internal and store.* write failures.
int status_for(const std::string& id);

}  // namespace tb
