// A small HTTP client for the commands that drive a running tonebridged (`tonebridge
// calibrate`, `tonebridge sweep`): JSON in, JSON out, the service's errors rethrown as
// tb::Error with the service's own id, message and hint.
#pragma once

#include <memory>
#include <string>

#include <nlohmann/json.hpp>

namespace httplib {
class Client;
}

namespace tb {

class ServiceClient {
 public:
  /// url: "http://127.0.0.1:7583"; token: empty, or an access token sent as a bearer token.
  /// read_timeout_s: how long one call may wait for its answer.
  ServiceClient(const std::string& url, std::string token, int read_timeout_s = 330);
  ~ServiceClient();
  ServiceClient(const ServiceClient&) = delete;
  ServiceClient& operator=(const ServiceClient&) = delete;

  /// method "GET", "POST", "PUT" or "DELETE"; body is sent for POST and PUT. Returns the
  /// parsed reply (null for an empty body). Throws tb::Error service.unreachable when
  /// nothing answers, or the service's error for a reply of 400 and above.
  /// Example: svc.call("GET", "/api/v1/status").at("state")
  nlohmann::json call(const std::string& method, const std::string& path,
                      const nlohmann::json& body = nullptr);

  /// GET of a body that is not JSON (an export); throws as call() does.
  std::string get_text(const std::string& path);

  const std::string& url() const { return url_; }

 private:
  struct Reply {
    int status = 0;
    std::string body;
  };
  Reply send(const std::string& method, const std::string& path, const nlohmann::json& body);

  std::unique_ptr<httplib::Client> client_;
  std::string url_, token_;
};

/// The service URL from --service, else http://127.0.0.1:7583; the token from --token,
/// else $TONEBRIDGE_TOKEN.
std::string default_service_url();
std::string token_from_environment();

}  // namespace tb
