#include "tests/support/service_process.hpp"

#include <arpa/inet.h>
#include <fcntl.h>
#include <ifaddrs.h>
#include <netinet/in.h>
#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <fstream>
#include <iostream>
#include <regex>
#include <sstream>
#include <stdexcept>
#include <thread>

#include <httplib.h>

#include "tests/support/run_command.hpp"
#include "tests/support/signals.hpp"

extern char** environ;

namespace tb::test {

namespace {

bool has_flag(const std::vector<std::string>& args, const std::string& name) {
  for (const auto& a : args)
    if (a == name || a.rfind(name + "=", 0) == 0) return true;
  return false;
}

}  // namespace

nlohmann::json HttpResult::json() const {
  try {
    return nlohmann::json::parse(body);
  } catch (const nlohmann::json::parse_error&) {
    throw std::runtime_error("not a JSON answer: HTTP status " + std::to_string(status) +
                             (failure.empty() ? "" : " (" + failure + ")") + ", body '" +
                             body.substr(0, 200) + "'");
  }
}

bool eventually(const std::function<bool()>& ready, double timeout_s) {
  const auto end = std::chrono::steady_clock::now() + std::chrono::duration<double>(timeout_s);
  for (;;) {
    if (ready()) return true;
    if (std::chrono::steady_clock::now() > end) return false;
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  }
}

ServiceProcess::ServiceProcess(std::vector<std::string> args, std::string dir)
    : dir_(dir.empty() ? make_temp_dir("svc") : std::move(dir)) {
  if (!has_flag(args, "--db")) args.insert(args.end(), {"--db", db()});
  if (!has_flag(args, "--port")) args.insert(args.end(), {"--port", "0"});
  if (!has_flag(args, "--sim-real-time")) args.push_back("--sim-real-time=false");
  posix_spawn_file_actions_t actions;
  posix_spawn_file_actions_init(&actions);
  const std::string out = dir_ + "/stdout", err = dir_ + "/stderr";
  posix_spawn_file_actions_addopen(&actions, 1, out.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  posix_spawn_file_actions_addopen(&actions, 2, err.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  posix_spawn_file_actions_addopen(&actions, 0, "/dev/null", O_RDONLY, 0);
  std::vector<char*> argv{const_cast<char*>(TB_SERVICE_PATH)};
  for (auto& a : args)
    argv.push_back(a.data());
  argv.push_back(nullptr);
  const int rc = posix_spawn(&pid_, TB_SERVICE_PATH, &actions, nullptr, argv.data(), environ);
  posix_spawn_file_actions_destroy(&actions);
  if (rc != 0) throw std::runtime_error("could not start " + std::string(TB_SERVICE_PATH));
  const std::regex serving(R"(serving http://[^:]+:(\d+)/)");
  const bool up = eventually(
      [&] {
        std::smatch m;
        const auto text = output();
        if (std::regex_search(text, m, serving)) {
          port_ = std::stoi(m[1].str());
          return true;
        }
        int status = 0;
        return waitpid(pid_, &status, WNOHANG) == pid_ && (pid_ = 0, true);
      },
      30);
  if (!up || port_ == 0) {
    const std::string why = output() + errors();
    if (pid_) kill9();
    throw std::runtime_error("tonebridged did not start: " + why);
  }
}

ServiceProcess::~ServiceProcess() {
  if (pid_) stop();
}

std::string ServiceProcess::output() const {
  return read_text_file(dir_ + "/stdout");
}
std::string ServiceProcess::errors() const {
  return read_text_file(dir_ + "/stderr");
}

int ServiceProcess::stop() {
  if (!pid_) return -1;
  int status = 0;
  if (waitpid(pid_, &status, WNOHANG) == pid_) {
    // It ended before the test asked: say how, and what it wrote, for the test's log.
    std::cerr << "tonebridged (pid " << pid_ << ") had already ended ("
              << (WIFEXITED(status) ? "exit " + std::to_string(WEXITSTATUS(status))
                                    : "signal " + std::to_string(WTERMSIG(status)))
              << "); its stderr:\n"
              << errors() << "\n";
    pid_ = 0;
    return WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
  }
  ::kill(pid_, SIGTERM);
  const bool ended = eventually([&] { return waitpid(pid_, &status, WNOHANG) == pid_; }, 20);
  if (!ended) {
    ::kill(pid_, SIGKILL);
    waitpid(pid_, &status, 0);
  }
  pid_ = 0;
  return WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
}

void ServiceProcess::kill9() {
  if (!pid_) return;
  ::kill(pid_, SIGKILL);
  int status = 0;
  waitpid(pid_, &status, 0);
  pid_ = 0;
}

HttpResult ServiceProcess::request(const std::string& method, const std::string& path,
                                   const std::string& body,
                                   const std::map<std::string, std::string>& headers,
                                   const std::string& host) const {
  httplib::Client client(host, port_);
  client.set_read_timeout(120, 0);
  httplib::Headers h;
  for (const auto& [k, v] : headers)
    h.emplace(k, v);
  auto r = method == "GET"      ? client.Get(path, h)
           : method == "DELETE" ? client.Delete(path, h, body, "application/json")
           : method == "PUT"    ? client.Put(path, h, body, "application/json")
                                : client.Post(path, h, body, "application/json");
  HttpResult out;
  if (!r) {
    out.failure = httplib::to_string(r.error());
    return out;
  }
  out.status = r->status;
  out.body = r->body;
  for (const auto& [k, v] : r->headers)
    out.headers[k] = v;
  return out;
}

ServiceRun run_service_once(const std::vector<std::string>& args) {
  const auto r = run_command(TB_SERVICE_PATH, args);
  return {r.exit_code, r.out, r.err};
}

std::string lan_address() {
  ifaddrs* list = nullptr;
  std::string found;
  if (getifaddrs(&list) != 0) return found;
  for (auto* i = list; i && found.empty(); i = i->ifa_next) {
    if (!i->ifa_addr || i->ifa_addr->sa_family != AF_INET) continue;
    char buf[INET_ADDRSTRLEN];
    const auto* sin = reinterpret_cast<const sockaddr_in*>(i->ifa_addr);
    if (inet_ntop(AF_INET, &sin->sin_addr, buf, sizeof buf) && std::string(buf).rfind("127.", 0))
      found = buf;
  }
  freeifaddrs(list);
  return found;
}

}  // namespace tb::test
