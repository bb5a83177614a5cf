#include "server/service.hpp"

#include <csignal>
#include <filesystem>
#include <thread>

#include <pthread.h>

#include "server/access_token.hpp"
#include "server/demo_scenario.hpp"
#include "server/device_registry.hpp"
#include "server/engine.hpp"
#include "server/error.hpp"
#include "server/error_report.hpp"
#include "server/event_bus.hpp"
#include "server/http_service.hpp"
#include "server/live_settings.hpp"
#include "server/settings.hpp"
#include "server/store.hpp"
#include "server/store_sink.hpp"

#ifndef TB_WEB_DIR
#define TB_WEB_DIR ""
#endif
#ifndef TB_VERSION
#define TB_VERSION "0.0.0"
#endif

namespace tb {

namespace {

constexpr const char* kUsage =
    "tonebridged: the tonebridge measuring service. It drives the sound card (or the\n"
    "simulated bench), keeps every reading and sweep in its database and serves the page\n"
    "and the HTTP API.\n\n"
    "usage: tonebridged [options]\n\n"
    "program options:\n"
    "  --config FILE     settings file (default: ~/.config/tonebridge/tonebridged.conf if it "
    "exists)\n"
    "  --demo            the demo: the invented workshop's jobs in a separate demo database\n"
    "  --new-token       make a new LAN access token (the old ones stop working)\n"
    "  --viewer-token    also make a read-only token for a viewer tablet\n"
    "  --web-dir DIR     the page's files (default: the web/ folder of the source tree)\n"
    "  --vendor-dir DIR  the plotting library, served as /vendor/uplot/ (default: the\n"
    "                    source tree's node_modules/uplot/dist, put there by ./tbdev)\n"
    "  --list-routes     print the API's routes and exit\n"
    "  --help            this text\n\n"
    "settings (also in the config file, docs/configuration.md):\n";

constexpr const char* kSafety =
    "SAFETY: discharge capacitors through a bleeder and check them with a meter before\n"
    "connecting; never connect the jig to powered equipment; a charged part can destroy\n"
    "the sound card's inputs. See docs/safety.md.\n";

struct ProgramFlags {
  std::string config, web_dir = TB_WEB_DIR, vendor_dir = TB_VENDOR_DIR;
  bool demo = false, new_token = false, viewer_token = false, list_routes = false, help = false;
};

ProgramFlags take_program_flags(std::vector<std::string>& args) {
  ProgramFlags f;
  std::vector<std::string> rest;
  for (std::size_t i = 0; i < args.size(); ++i) {
    const std::string& a = args[i];
    auto value = [&](std::string& into) {
      if (i + 1 >= args.size()) {
        throw Error("cli.missing_value", a + " needs a value", "see tonebridged --help");
      }
      into = args[++i];
    };
    if (a == "--config")
      value(f.config);
    else if (a.rfind("--config=", 0) == 0)
      f.config = a.substr(9);
    else if (a == "--web-dir")
      value(f.web_dir);
    else if (a == "--vendor-dir")
      value(f.vendor_dir);
    else if (a == "--demo")
      f.demo = true;
    else if (a == "--new-token")
      f.new_token = true;
    else if (a == "--viewer-token")
      f.viewer_token = true;
    else if (a == "--list-routes")
      f.list_routes = true;
    else if (a == "--help" || a == "-h")
      f.help = true;
    else
      rest.push_back(a);
  }
  args = rest;
  return f;
}

Settings load_settings(const ProgramFlags& f, std::vector<std::string> args) {
  Settings s;
  if (!f.config.empty()) {
    load_config_file(f.config, s);
  } else if (std::filesystem::exists(default_config_path())) {
    load_config_file(default_config_path(), s);
  }
  const auto unknown = apply_setting_flags(args, s);
  if (!unknown.empty()) {
    throw Error("cli.unknown_option", "tonebridged has no option '" + unknown.front() + "'",
                "run tonebridged --help for the options");
  }
  return s;
}

std::filesystem::path db_path(const Settings& s, bool demo) {
  if (!s.text("db").empty()) return s.text("db");
  auto p = Store::default_path();
  if (demo) p.replace_filename("demo.db");
  return p;
}

// On the LAN every other machine needs a token. A new one is shown once, as a URL and a
// QR code; afterwards only its hash is kept.
void prepare_tokens(Store& store, const ProgramFlags& f, const std::string& url_base,
                    std::ostream& out) {
  const auto existing = store.tokens();
  auto show = [&](const std::string& role, const char* who) {
    const auto token = generate_token();
    store.add_token(role, sha256_hex(token));
    const std::string url = url_base + "?token=" + token;
    out << "\n"
        << who << " (shown once; anyone with it can " << (role == "control" ? "use" : "watch")
        << " this bench):\n  " << url << "\n"
        << qr_for_terminal(url) << "\n";
  };
  if (existing.empty() || f.new_token) {
    store.delete_tokens();
    show("control", "Access URL for a tablet on the bench");
    if (f.viewer_token) show("view", "Read-only URL for a viewer");
  } else {
    out << "LAN access: the token made on " << existing.front().created_at
        << " is in use (its URL was shown then). Run with --new-token to make a new one.\n";
    if (f.viewer_token) show("view", "Read-only URL for a viewer");
  }
}

}  // namespace

int run_service(const std::vector<std::string>& argv, std::ostream& out, std::ostream& err) {
  try {
    auto args = argv;
    const auto flags = take_program_flags(args);
    if (flags.help) {
      out << kUsage << settings_help() << "\n" << kSafety;
      return 0;
    }
    if (flags.list_routes) {
      for (const auto& r : api_routes())
        out << r.method << " " << r.path << "\n";
      out << "GET /api/v1/routes\nGET /api/v1/events\n";
      return 0;
    }
    const Settings initial = load_settings(flags, args);
    LiveSettings settings(initial);

    // Signals are taken by one thread with sigwait, so no handler runs inside a lock.
    sigset_t stop_signals;
    sigemptyset(&stop_signals);
    sigaddset(&stop_signals, SIGINT);
    sigaddset(&stop_signals, SIGTERM);
    pthread_sigmask(SIG_BLOCK, &stop_signals, nullptr);
    std::signal(SIGPIPE, SIG_IGN);

    Store store(db_path(initial, flags.demo));
    if (store.interrupted_at_open() > 0) {
      out << "note: " << store.interrupted_at_open()
          << " sweep(s) were cut off when the service last stopped; they are kept as "
             "interrupted with their saved points\n";
    }
    if (flags.demo && seed_demo_jobs(store) > 0)
      out << "demo: added the Larkspur Lane Audio repair jobs\n";

    const std::string listen = initial.text("listen");
    const bool lan = listen != "127.0.0.1" && listen != "localhost";
    const int port = initial.integer("port");
    AccessControl access(store, lan, local_host_names(listen), port);

    EventBus events(initial.integer("max_event_clients"));
    StoreSink store_sink(store);
    Engine engine(open_device(initial), settings, &store, {&store_sink, &events});

    ApiContext ctx{engine,
                   store,
                   settings,
                   events,
                   {{"service", "tonebridged"},
                    {"version", TB_VERSION},
                    {"started_at", utc_now_iso()},
                    {"listen", listen},
                    {"lan", lan}}};
    HttpOptions http;
    http.listen = listen == "localhost" ? "127.0.0.1" : listen;
    http.port = port;
    http.max_body_bytes = static_cast<std::size_t>(initial.integer("max_body_bytes"));
    http.max_event_clients = initial.integer("max_event_clients");
    http.web_dir = flags.web_dir;
    http.vendor_dir = flags.vendor_dir;
    HttpService service(ctx, access, http);
    access.set_port(service.port());
    ctx.service["port"] = service.port();

    const std::string shown_host =
        lan ? (listen == "0.0.0.0" ? access.hosts().back() : listen) : std::string("127.0.0.1");
    const std::string url = "http://" + shown_host + ":" + std::to_string(service.port()) + "/";
    if (lan) {
      prepare_tokens(store, flags, url, out);
      access.reload_tokens();
    }
    out << kSafety << "tonebridged " << TB_VERSION << ": "
        << (initial.text("device") == "simulated" ? "simulated bench" : initial.text("device"))
        << ", database " << store.path().string() << "\n"
        << "serving " << url << " (open it in a browser; Ctrl+C stops)\n"
        << std::flush;

    std::thread stopper([&] {
      int sig = 0;
      sigwait(&stop_signals, &sig);
      engine.shutdown();
      service.stop();
    });
    service.serve();
    if (stopper.joinable()) {
      // serve() ended without a signal (the socket failed): wake the stopper ourselves.
      pthread_kill(stopper.native_handle(), SIGTERM);
      stopper.join();
    }
    engine.shutdown();
    out << "tonebridged: stopped; every saved reading and sweep is in " << store.path().string()
        << "\n";
    return 0;
  } catch (...) {
    const auto e = describe_current_error();
    err << "tonebridged: error [" << e.id << "]: " << e.message << ". " << e.hint << "\n";
    const bool usage = e.id.rfind("cli.", 0) == 0 || e.id.rfind("config.", 0) == 0;
    return usage ? 2 : 1;
  }
}

}  // namespace tb
