#include "server/sweep_command.hpp"

#include <array>
#include <atomic>
#include <chrono>
#include <cmath>
#include <csignal>
#include <fstream>
#include <iomanip>
#include <sstream>
#include <thread>

#include <nlohmann/json.hpp>

#include "server/cli_args.hpp"
#include "server/error.hpp"
#include "server/error_report.hpp"
#include "server/service_client.hpp"

namespace tb {

namespace {

const std::array<cli::OptionSpec, 15> kOptions{{
    {"service", "URL", "the running tonebridged, default http://127.0.0.1:7583"},
    {"token", "TOKEN", "access token for a service on another machine (or TONEBRIDGE_TOKEN)"},
    {"start", "HZ", "lowest frequency, default 100"},
    {"stop", "HZ", "highest frequency, default 10k (at most 0.45 of the sample rate)"},
    {"per-decade", "N", "points per decade, default 10"},
    {"method", "stepped|multisine", "one tone at a time (default) or all tones in one capture"},
    {"grid", "log|odd_odd", "multisine: tones on every bin asked for (log) or on odd-odd bins"},
    {"level", "FRACTION", "output level as a fraction of full scale; default: the service's"},
    {"duration", "SECONDS", "analysed length per point (stepped)"},
    {"label", "TEXT", "a label kept with the sweep, e.g. \"L3 left cabinet\""},
    {"part-id", "ID", "file the sweep under this part of a repair job"},
    {"format", "csv|json", "what to write, default csv"},
    {"output", "FILE", "write there instead of to standard output"},
    {"quiet", "", "no progress line"},
    {"help", "", "show this help"},
}};

constexpr const char* kUsage = "tonebridge sweep [--start HZ] [--stop HZ] [options]";

std::atomic<bool> g_interrupted{false};

extern "C" void on_interrupt(int) {
  g_interrupted = true;
}

double positive(const cli::ParsedArgs& args, const std::string& name, const char* unit) {
  const double v = cli::parse_quantity(*args.get(name), unit, "--" + name);
  if (!(v > 0) || !std::isfinite(v)) {
    throw Error("cli.out_of_range", "--" + name + " must be above 0, got " + *args.get(name),
                "e.g. --" + name + " 20");
  }
  return v;
}

nlohmann::json request_from(const cli::ParsedArgs& args) {
  nlohmann::json body = nlohmann::json::object();
  if (args.get("start")) body["start_hz"] = positive(args, "start", "Hz");
  if (args.get("stop")) body["stop_hz"] = positive(args, "stop", "Hz");
  if (auto v = args.get("per-decade")) {
    const double n = cli::parse_quantity(*v, "", "--per-decade");
    if (n != std::floor(n) || n < 1 || n > 1000) {
      throw Error("cli.out_of_range", "--per-decade must be a whole number from 1 to 1000",
                  "e.g. --per-decade 20");
    }
    body["points_per_decade"] = static_cast<int>(n);
  }
  if (auto m = args.get("method")) {
    if (*m != "stepped" && *m != "multisine") {
      throw Error("cli.bad_value", "--method must be stepped or multisine, got " + *m,
                  "stepped is the most accurate; multisine takes the whole sweep in one capture");
    }
    body["method"] = *m;
  }
  if (auto g = args.get("grid")) {
    if (*g != "log" && *g != "odd_odd")
      throw Error("cli.bad_value", "--grid must be log or odd_odd, got " + *g,
                  "odd_odd leaves bins free for distortion to show on");
    body["grid"] = *g;
  }
  if (args.get("level")) body["level_fs"] = positive(args, "level", "");
  if (args.get("duration")) body["duration_s"] = positive(args, "duration", "s");
  if (auto l = args.get("label")) body["label"] = *l;
  if (auto p = args.get("part-id")) {
    const double id = cli::parse_quantity(*p, "", "--part-id");
    if (id != std::floor(id) || id < 1)
      throw Error("cli.bad_value", "--part-id must be a part's id, got " + *p,
                  "list a job's parts with GET /api/v1/jobs/ID");
    body["part_id"] = static_cast<std::int64_t>(id);
  }
  return body;
}

std::string progress_line(const nlohmann::json& task, double elapsed_s) {
  const auto& p = task.value("progress", nlohmann::json::object());
  const int done = p.value("done", 0), total = p.value("total", 0);
  std::ostringstream o;
  o << "\rsweep: " << done << "/" << total << " points";
  if (total > 0) o << " (" << (100 * done / total) << " %)";
  o << ", " << std::fixed << std::setprecision(1) << elapsed_s << " s   ";
  return o.str();
}

}  // namespace

int run_sweep_command(const std::vector<std::string>& argv, std::ostream& out, std::ostream& err) {
  try {
    const auto args = cli::parse_args(argv, kOptions, "sweep");
    if (args.has("help")) {
      out << "A sweep of the part on the jig, measured by a running tonebridged (start it\n"
             "with `tonebridged` or `./tbdev demo`) and saved there. Ctrl-C cancels it; the\n"
             "points measured so far are kept and written.\n"
             "SAFETY: discharge capacitors first; never measure powered equipment.\n\n"
          << cli::format_help(kUsage, kOptions);
      return 0;
    }
    if (!args.positional.empty()) {
      throw Error("cli.usage", "unexpected argument '" + args.positional[0] + "'",
                  std::string("usage: ") + kUsage);
    }
    const std::string format = args.get("format").value_or("csv");
    if (format != "csv" && format != "json")
      throw Error("cli.bad_value", "--format must be csv or json, got " + format,
                  "e.g. --format json");
    // Open the output before the sweep so a bad path costs no measuring time.
    std::ofstream file;
    if (auto path = args.get("output")) {
      file.open(*path, std::ios::binary | std::ios::trunc);
      if (!file) {
        throw Error("file.unwritable", *path + ": cannot write there",
                    "give a path in a folder you can write to");
      }
    }
    std::ostream& sink = file.is_open() ? static_cast<std::ostream&>(file) : out;
    const auto body = request_from(args);

    ServiceClient svc(args.get("service").value_or(default_service_url()),
                      args.get("token").value_or(token_from_environment()), 30);
    const auto started = svc.call("POST", "/api/v1/sweeps", body);
    const auto task_id = started.at("task").at("id").get<std::int64_t>();
    const std::string task_path = "/api/v1/tasks/" + std::to_string(task_id);

    g_interrupted = false;
    auto previous = std::signal(SIGINT, on_interrupt);
    const auto t0 = std::chrono::steady_clock::now();
    nlohmann::json task;
    bool cancel_sent = false;
    const bool quiet = args.has("quiet");
    for (;;) {
      task = svc.call("GET", task_path);
      const double elapsed =
          std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
      if (!quiet) err << progress_line(task, elapsed) << std::flush;
      if (!task.value("ended_at", std::string()).empty()) break;
      if (g_interrupted && !cancel_sent) {
        svc.call("DELETE", task_path);
        cancel_sent = true;
      }
      std::this_thread::sleep_for(std::chrono::milliseconds(250));
    }
    std::signal(SIGINT, previous);
    if (!quiet) err << "\n";

    const auto sweep_id = task.value("result", nlohmann::json::object()).value("sweep_id", 0);
    const std::string status = task.value("status", "");
    if (sweep_id == 0) {
      const auto e = task.value("error", nlohmann::json::object());
      throw Error(e.value("id", "sweep.failed"), e.value("message", "the sweep did not start"),
                  e.value("hint", ""));
    }
    sink << svc.get_text("/api/v1/sweeps/" + std::to_string(sweep_id) + "/export?format=" + format);
    if (format == "json") sink << "\n";
    sink.flush();
    const auto saved = svc.call("GET", "/api/v1/sweeps/" + std::to_string(sweep_id));
    err << "sweep #" << sweep_id << " " << saved.value("status", status) << ": "
        << saved.value("points_saved", 0) << " of " << saved.value("points_planned", 0)
        << " points saved in the service's store\n";
    if (status == "done") return 0;
    if (status == "failed") {
      const auto e = task.value("error", nlohmann::json::object());
      err << "sweep: " << e.value("message", "failed") << "\n";
      if (!e.value("hint", std::string()).empty())
        err << "  what to do: " << e.value("hint", "") << "\n";
    } else {
      err << "sweep: cancelled; the points above are a partial sweep\n";
    }
    return 1;
  } catch (...) {
    return report_current_error("sweep", err);
  }
}

}  // namespace tb
