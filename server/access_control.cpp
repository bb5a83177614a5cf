#include "server/access_control.hpp"

#include <algorithm>

#include <arpa/inet.h>
#include <ifaddrs.h>
#include <netinet/in.h>
#include <unistd.h>

#include "server/access_token.hpp"

namespace tb {

namespace {

std::string lower(std::string s) {
  std::transform(s.begin(), s.end(), s.begin(), [](unsigned char c) { return std::tolower(c); });
  return s;
}

// "host:port", "[::1]:port", "host" -> host and port ("" when absent).
std::pair<std::string, std::string> split_host(const std::string& h) {
  if (!h.empty() && h.front() == '[') {
    const auto close = h.find(']');
    if (close == std::string::npos) return {h, ""};
    const std::string port = close + 1 < h.size() && h[close + 1] == ':' ? h.substr(close + 2) : "";
    return {h.substr(0, close + 1), port};
  }
  const auto colon = h.rfind(':');
  if (colon == std::string::npos) return {h, ""};
  return {h.substr(0, colon), h.substr(colon + 1)};
}

}  // namespace

bool is_loopback_address(const std::string& a) {
  return a.rfind("127.", 0) == 0 || a == "::1" || a.rfind("::ffff:127.", 0) == 0;
}

std::vector<std::string> local_host_names(const std::string& listen_address) {
  std::vector<std::string> names{"127.0.0.1", "localhost", "[::1]"};
  if (listen_address != "127.0.0.1" && listen_address != "localhost") {
    names.push_back(listen_address);
    ifaddrs* list = nullptr;
    if (getifaddrs(&list) == 0) {
      for (auto* i = list; i; i = i->ifa_next) {
        if (!i->ifa_addr || i->ifa_addr->sa_family != AF_INET) continue;
        char buf[INET_ADDRSTRLEN];
        const auto* sin = reinterpret_cast<const sockaddr_in*>(i->ifa_addr);
        if (inet_ntop(AF_INET, &sin->sin_addr, buf, sizeof buf)) names.emplace_back(buf);
      }
      freeifaddrs(list);
    }
    char host[256] = {};
    if (gethostname(host, sizeof host - 1) == 0 && host[0]) {
      names.emplace_back(lower(host));
      names.push_back(lower(host) + ".local");
    }
  }
  std::sort(names.begin(), names.end());
  names.erase(std::unique(names.begin(), names.end()), names.end());
  return names;
}

AccessControl::AccessControl(const Store& store, bool lan, std::vector<std::string> hosts, int port)
    : store_(store), lan_(lan), hosts_(std::move(hosts)), port_(port) {
  reload_tokens();
}

void AccessControl::reload_tokens() {
  tokens_ = store_.tokens();
}

bool AccessControl::host_allowed(const std::string& host_header) const {
  const auto [host, port] = split_host(lower(host_header));
  if (!port.empty() && port != std::to_string(port_)) return false;
  return std::find(hosts_.begin(), hosts_.end(), host) != hosts_.end();
}

std::optional<std::string> AccessControl::token_role(const std::string& token) const {
  for (const auto& t : tokens_)
    if (token_matches(token, t.hash_hex)) return t.role;
  return std::nullopt;
}

AccessDecision AccessControl::check(const std::string& remote_addr, const std::string& host,
                                    const std::string& origin, const std::string& token,
                                    bool changes) const {
  if (host.empty() || !host_allowed(host)) {
    return {403, "access.foreign_host",
            "the Host header '" + host + "' is not a name of this service",
            "open the page by the address the service printed (e.g. http://127.0.0.1:" +
                std::to_string(port_) + "/)"};
  }
  if (changes && !origin.empty()) {
    const auto scheme = origin.find("://");
    const std::string origin_host =
        scheme == std::string::npos ? origin : origin.substr(scheme + 3);
    if (!host_allowed(origin_host)) {
      return {403, "access.foreign_origin",
              "a page from '" + origin + "' may not change anything here",
              "use the tonebridge page itself"};
    }
  }
  if (!lan_ || is_loopback_address(remote_addr)) return {};
  if (token.empty()) {
    return {401, "access.token_missing", "requests from other machines need the access token",
            "open the URL with the token that tonebridged printed at start (or scan its QR "
            "code); restart it with --new-token if it is lost"};
  }
  const auto role = token_role(token);
  if (!role) {
    return {401, "access.token_wrong", "the access token is not valid",
            "use the URL printed at the last start; tokens change with --new-token"};
  }
  if (changes && *role != "control") {
    return {403, "access.read_only", "this token may only watch, not change anything",
            "use the control token to take readings or change settings"};
  }
  return {};
}

}  // namespace tb
