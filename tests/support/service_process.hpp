// A real tonebridged, started by a test on a free loopback port with its own database in
// a temporary folder, and stopped by SIGTERM (or killed) by the test. Requests go through
// cpp-httplib's client.
#pragma once

#include <sys/types.h>

#include <functional>
#include <map>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

namespace tb::test {

struct HttpResult {
  int status = 0;  ///< 0 when the request could not be made
  std::string body;
  std::map<std::string, std::string> headers;
  std::string failure;  ///< why the request could not be made (cpp-httplib's words)
  /// The body parsed; throws, naming the status, the failure and the start of the body, if
  /// it is not JSON.
  nlohmann::json json() const;
};

class ServiceProcess {
 public:
  /// Starts tonebridged with `args` plus --db (in `dir`, made if empty), --port 0 unless
  /// `args` name a port, and a fast simulated bench (no real-time pacing) unless `args` set
  /// sim-real-time. Waits up to 30 s for its "serving http://HOST:PORT/" line.
  explicit ServiceProcess(std::vector<std::string> args = {}, std::string dir = "");
  ~ServiceProcess();  ///< SIGTERM, then SIGKILL after 20 s
  ServiceProcess(const ServiceProcess&) = delete;
  ServiceProcess& operator=(const ServiceProcess&) = delete;

  int port() const { return port_; }
  pid_t pid() const { return pid_; }
  const std::string& dir() const { return dir_; }
  std::string db() const { return dir_ + "/tonebridge.db"; }
  std::string output() const;  ///< stdout so far
  std::string errors() const;  ///< stderr so far

  /// Sends SIGTERM and waits; returns the exit code (128 + signal if killed).
  int stop();
  /// SIGKILL, as a crash or an impatient user would.
  void kill9();

  HttpResult request(const std::string& method, const std::string& path,
                     const std::string& body = "",
                     const std::map<std::string, std::string>& headers = {},
                     const std::string& host = "127.0.0.1") const;
  HttpResult get(const std::string& path) const { return request("GET", path); }
  HttpResult post(const std::string& path, const nlohmann::json& body) const {
    return request("POST", path, body.dump());
  }

 private:
  std::string dir_;
  pid_t pid_ = 0;
  int port_ = 0;
};

/// Runs tonebridged to completion (for start-up refusals); returns exit code and output.
struct ServiceRun {
  int exit_code = -1;
  std::string out, err;
};
ServiceRun run_service_once(const std::vector<std::string>& args);

/// An IPv4 address of this machine that is not loopback ("" if it has none).
std::string lan_address();

/// Polls `ready` every 20 ms for up to timeout_s; returns its last answer.
bool eventually(const std::function<bool()>& ready, double timeout_s);

}  // namespace tb::test
