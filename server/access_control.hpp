// Who may talk to the service. Three checks on every request, before its body is read:
//  1. Host header: only the names this service is reached by (127.0.0.1, localhost, [::1],
//     and on the LAN the listen address and this machine's addresses and name), each with
//     the port. A page on another site that resolves its own name to 127.0.0.1 (DNS
//     rebinding) sends its own name and is refused.
//  2. Origin: a request that changes something and carries an Origin header must come
//     from one of those same hosts (no cross-site form posts; no CORS headers are sent).
//  3. Token: a request from another machine (only possible when serving the LAN) must
//     carry an access token: "Authorization: Bearer TOKEN", a "token" query parameter
//     (for the event stream, which browsers open without headers) or a tb_token cookie.
//     A view token may only read.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "server/store.hpp"

namespace tb {

struct AccessDecision {
  int status = 0;  ///< 0: allowed; else 401 or 403
  std::string id, message, hint;
};

class AccessControl {
 public:
  /// `lan`: serving beyond this machine. `hosts`: the host names accepted (without port).
  AccessControl(const Store& store, bool lan, std::vector<std::string> hosts, int port);

  /// remote_addr: the peer's address; host, origin: headers ("" when absent); token: the
  /// one the request carries ("" when none); changes: the method changes something.
  AccessDecision check(const std::string& remote_addr, const std::string& host,
                       const std::string& origin, const std::string& token, bool changes) const;

  /// Reads the token hashes from the store again (after new tokens were made at start);
  /// checks use this copy, so a request never waits on the database.
  void reload_tokens();
  /// The port the service really listens on (known only after binding when it was 0).
  void set_port(int port) { port_ = port; }
  const std::vector<std::string>& hosts() const { return hosts_; }
  bool lan() const { return lan_; }

 private:
  bool host_allowed(const std::string& host_header) const;
  std::optional<std::string> token_role(const std::string& token) const;

  const Store& store_;
  std::vector<TokenRecord> tokens_;
  bool lan_;
  std::vector<std::string> hosts_;
  int port_;
};

/// The names this machine answers to on the LAN: its IPv4 addresses (getifaddrs) and host
/// name, plus the loopback names.
std::vector<std::string> local_host_names(const std::string& listen_address);

/// True for 127.0.0.0/8 and ::1 (also as ::ffff:127.x).
bool is_loopback_address(const std::string& address);

}  // namespace tb
