#include "server/service_client.hpp"

#include <httplib.h>

#include <cstdlib>

#include "server/error.hpp"

namespace tb {

ServiceClient::ServiceClient(const std::string& url, std::string token, int read_timeout_s)
    : client_(std::make_unique<httplib::Client>(url)), url_(url), token_(std::move(token)) {
  client_->set_read_timeout(read_timeout_s, 0);
  client_->set_connection_timeout(5, 0);
}

ServiceClient::~ServiceClient() = default;

ServiceClient::Reply ServiceClient::send(const std::string& method, const std::string& path,
                                         const nlohmann::json& body) {
  httplib::Headers headers;
  if (!token_.empty()) headers.emplace("Authorization", "Bearer " + token_);
  const std::string text = body.is_null() ? "{}" : body.dump();
  const auto res = method == "GET"      ? client_->Get(path, headers)
                   : method == "DELETE" ? client_->Delete(path, headers)
                   : method == "PUT"    ? client_->Put(path, headers, text, "application/json")
                                        : client_->Post(path, headers, text, "application/json");
  if (!res) {
    throw Error("service.unreachable",
                "no answer from " + url_ + " (" + httplib::to_string(res.error()) + ")",
                "start it with `tonebridged` (or `./tbdev demo`), or give --service");
  }
  if (res->status >= 400) {
    const auto j = nlohmann::json::parse(res->body, nullptr, false);
    const auto e =
        j.is_object() ? j.value("error", nlohmann::json::object()) : nlohmann::json::object();
    throw Error(e.value("id", "service.error"),
                e.value("message", "HTTP " + std::to_string(res->status)), e.value("hint", ""));
  }
  return {res->status, res->body};
}

nlohmann::json ServiceClient::call(const std::string& method, const std::string& path,
                                   const nlohmann::json& body) {
  const auto r = send(method, path, body);
  if (r.body.empty()) return nullptr;
  auto j = nlohmann::json::parse(r.body, nullptr, false);
  if (j.is_discarded()) {
    throw Error("service.bad_reply", "the service at " + url_ + " sent a reply that is not JSON",
                "check that --service points at tonebridged");
  }
  return j;
}

std::string ServiceClient::get_text(const std::string& path) {
  return send("GET", path, nullptr).body;
}

std::string default_service_url() {
  return "http://127.0.0.1:7583";
}

std::string token_from_environment() {
  const char* t = std::getenv("TONEBRIDGE_TOKEN");
  return t ? t : "";
}

}  // namespace tb
