#include "server/calibrate_command.hpp"

#include <array>
#include <iostream>
#include <sstream>

#include <nlohmann/json.hpp>

#include "server/cli_args.hpp"
#include "server/error.hpp"
#include "server/error_report.hpp"
#include "server/service_client.hpp"

namespace tb {

namespace {

const std::array<cli::OptionSpec, 8> kOptions{{
    {"service", "URL", "the running tonebridged, default http://127.0.0.1:7583"},
    {"token", "TOKEN", "access token for a service on another machine (or TONEBRIDGE_TOKEN)"},
    {"steps", "LIST",
     "steps to take, comma-separated, default: the required ones that are not current "
     "(level, channel_match, open, short, load)"},
    {"meter-vrms", "VOLTS", "the multimeter's AC reading at node A, for the level step"},
    {"load-ohm", "OHMS", "the known resistor of the load step"},
    {"load-tol", "PERCENT", "its tolerance, default 0.1"},
    {"yes", "", "do not wait for Enter before each step (scripts, the simulated bench)"},
    {"help", "", "show this help"},
}};

constexpr const char* kUsage = "tonebridge calibrate [--service URL] [options]";

bool wait_for_enter(std::istream& in, std::ostream& out, bool yes) {
  if (yes) return true;
  out << "  Press Enter when connected (q and Enter to stop): " << std::flush;
  std::string line;
  if (!std::getline(in, line)) return false;
  return line != "q" && line != "Q";
}

std::string range_text(const nlohmann::json& points) {
  if (points.empty()) return "no points";
  std::ostringstream o;
  o << points.size() << (points.size() == 1 ? " point" : " points") << ", "
    << points.front().value("freq_hz", 0.0) << " Hz";
  if (points.size() > 1) o << " to " << points.back().value("freq_hz", 0.0) << " Hz";
  return o.str();
}

// The level step: the tone plays while the meter is read, then the step measures node A
// at the same frequency and level.
nlohmann::json level_step(ServiceClient& svc, const cli::ParsedArgs& args, std::istream& in,
                          std::ostream& out) {
  double meter = 0;
  if (const auto v = args.get("meter-vrms")) {
    meter = cli::parse_quantity(*v, "V", "--meter-vrms");
  } else {
    const auto tone = svc.call("POST", "/api/v1/tone", {{"seconds", 300}});
    const auto id = tone.at("task").at("id").get<std::int64_t>();
    out << "  The test tone is playing. Read node A with the multimeter (AC volts) and type "
           "the reading in volts: "
        << std::flush;
    std::string line;
    const bool got = static_cast<bool>(std::getline(in, line));
    svc.call("DELETE", "/api/v1/tasks/" + std::to_string(id));
    if (!got || line.empty()) {
      throw Error("cli.missing_value", "no multimeter reading was typed",
                  "run the level step again and type the meter's AC reading, e.g. 0.412");
    }
    meter = cli::parse_quantity(line, "V", "the meter reading");
  }
  return svc.call("POST", "/api/v1/calibrations",
                  {{"kind", "level"}, {"meter_vrms", meter}, {"wait", true}});
}

}  // namespace

int run_calibrate(const std::vector<std::string>& argv, std::istream& in, std::ostream& out,
                  std::ostream& err) {
  try {
    const auto args = cli::parse_args(argv, kOptions, "calibrate");
    if (args.has("help")) {
      out << cli::format_help(kUsage, kOptions);
      return 0;
    }
    // A step waits up to 300 s for the engine.
    ServiceClient svc(args.get("service").value_or(default_service_url()),
                      args.get("token").value_or(token_from_environment()), 330);
    const auto guide = svc.call("GET", "/api/v1/calibrations/guide");
    const auto& setup = guide.at("setup");
    out << "Calibrating " << setup.value("device", "") << " at "
        << setup.value("sample_rate_hz", 0.0) / 1000 << " kHz, " << setup.value("layout", "")
        << ", Rref " << setup.value("rref_ohm", 0.0) << " ohm, on " << guide.at("grid_hz").size()
        << " frequencies.\n"
        << "SAFETY: " << guide.value("safety", "") << "\n";

    std::vector<nlohmann::json> todo;
    const auto wanted = args.get("steps");
    for (const auto& step : guide.at("steps")) {
      const std::string kind = step.value("kind", "");
      bool take;
      if (wanted) {
        take = ("," + *wanted + ",").find("," + kind + ",") != std::string::npos;
      } else if (kind == "level") {
        take = args.has("meter-vrms") || step.value("status", "") != "current";
      } else if (kind == "load") {
        take = args.has("load-ohm");
      } else {
        take = step.value("status", "") != "current";
      }
      if (take) todo.push_back(step);
    }
    if (todo.empty()) {
      out << "Every step is current; nothing to do (--steps takes one again).\n";
      return 0;
    }
    int n = 0;
    for (const auto& step : todo) {
      const std::string kind = step.value("kind", "");
      out << "\nStep " << ++n << " of " << todo.size() << ": " << step.value("title", kind) << " ("
          << step.value("why", "") << ")\n  Connect: " << step.value("connect", "")
          << "\n  Drawing: " << step.value("drawing", "") << "\n";
      if (kind == "load" && !args.has("load-ohm")) {
        throw Error("cli.missing_option", "the load step needs --load-ohm",
                    "give the known resistor's value, e.g. --load-ohm 1k --load-tol 0.01");
      }
      if (!wait_for_enter(in, out, args.has("yes"))) {
        out << "Stopped; the steps taken so far are saved.\n";
        return 0;
      }
      nlohmann::json saved;
      if (kind == "level") {
        saved = level_step(svc, args, in, out);
      } else {
        nlohmann::json body = {{"kind", kind}, {"wait", true}};
        if (kind == "load") {
          body["load_ohm"] = cli::parse_quantity(*args.get("load-ohm"), "ohm", "--load-ohm");
          body["load_tolerance_pct"] =
              cli::parse_quantity(args.get("load-tol").value_or("0.1"), "%", "--load-tol");
        }
        out << "  Measuring..." << std::flush;
        saved = svc.call("POST", "/api/v1/calibrations", body);
        out << "\n";
      }
      out << "  Saved calibration #" << saved.value("id", 0) << ": "
          << range_text(saved.value("points", nlohmann::json::array())) << ".\n";
      if (kind == "level") {
        out << "  Full scale is " << saved.value("volts_per_fs", 0.0) << " V peak.\n";
      }
    }
    out << "\nDone. Readings at this rate, layout and Rref now use these calibrations.\n";
    return 0;
  } catch (...) {
    return report_current_error("calibrate", err);
  }
}

}  // namespace tb
