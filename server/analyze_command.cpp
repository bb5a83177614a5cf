#include "server/analyze_command.hpp"

#include <array>
#include <cmath>
#include <numbers>

#include "dsp/recording_analysis.hpp"
#include "server/cli_args.hpp"
#include "server/error.hpp"
#include "server/error_report.hpp"
#include "server/reading_json.hpp"
#include "server/reading_text.hpp"
#include "server/sweep_file.hpp"
#include "server/sweep_fit.hpp"
#include "server/wav_file.hpp"

namespace tb {

namespace {

const std::array<cli::OptionSpec, 17> kOptions{{
    {"rref", "OHMS", "reference resistor, e.g. 1k or 10 (required)"},
    {"rref-tol", "PERCENT", "reference resistor tolerance, default 1 (%)"},
    {"layout", "part-low|part-high", "jig layout, default part-low (Rref A-B, part B-ground)"},
    {"swap", "", "node A was recorded on channel 2 and node B on channel 1"},
    {"freq", "HZ[,HZ...]", "analyse only tones near these frequencies"},
    {"full-scale-vrms", "VOLTS",
     "rms volts of a full-scale sine at the inputs (states the test level)"},
    {"input-r", "OHMS", "input resistance of the channel reading node B, e.g. 47k"},
    {"input-c", "FARADS", "input capacitance of that channel, e.g. 100p (needs --input-r)"},
    {"window", "auto|rectangular|hann", "lock-in window, default auto"},
    {"min-tone-db", "DB", "ignore tones weaker than the strongest by more, default -40"},
    {"kind", "C|L|R", "report as this part type instead of detecting it"},
    {"blocks", "N", "analysis blocks to aim for, default 16"},
    {"family", "capacitor|inductor|resistor|driver",
     "sweep files: the part family to fit, default: every model"},
    {"model", "NAME", "sweep files: fit this model only (docs/fits.md), e.g. c_esr_esl"},
    {"mounting", "TEXT", "sweep files, drivers: how the driver was held, default \"free air\""},
    {"json", "", "print one JSON object instead of text"},
    {"help", "", "show this help"},
}};

constexpr const char* kUsage =
    "tonebridge analyze RECORDING.wav --rref OHMS [options]\n"
    "       tonebridge analyze SWEEP.csv|SWEEP.json [--family F] [--model M] [--json]";

std::string with_u(double v, double u, const std::string& unit) {
  return format_si(v, unit, 5) + " ± " + format_si(2 * u, unit, 2);
}

// A saved sweep (this program's export, or a CSV from elsewhere): the equivalent-circuit
// fit, and for a driver its Thiele/Small parameters.
int fit_sweep_file(const cli::ParsedArgs& args, const std::string& path, std::ostream& out) {
  const auto file = read_sweep_file(path);
  FitRequest req;
  req.family = parse_family(args.get("family").value_or("auto"));
  if (auto m = args.get("model")) {
    req.model = dsp::parse_fit_model(*m);
    if (!req.model)
      throw Error("cli.bad_value", "no fit model '" + *m + "'",
                  "leave out --model to choose by fit quality; docs/fits.md lists the models");
  }
  if (auto m = args.get("mounting")) req.conditions.mounting = *m;
  auto j = fit_json(file.input, req);
  j["file"] = path;
  j["uncertainties_given"] = file.uncertainties_given;
  if (args.has("json")) {
    out << j.dump(2) << "\n";
    return 0;
  }
  const auto range = j.at("frequency_range_hz");
  out << "sweep      " << path << "  (" << j.at("points_used").get<int>() << " points, "
      << format_si(range[0].get<double>(), "Hz", 3) << " to "
      << format_si(range[1].get<double>(), "Hz", 3) << ", " << j.at("points_skipped").get<int>()
      << " skipped)\n"
      << "model      " << j.at("model").get<std::string>() << ": "
      << j.at("description").get<std::string>() << "\n";
  for (const auto* group : {"params", "derived"}) {
    for (const auto& p : j.at(group)) {
      out << "  " << p.at("name").get<std::string>() << " = "
          << with_u(
                 p.at("value").get<double>(), p.at("u").get<double>(),
                 p.at("unit").get<std::string>() == "ohm" ? "Ω" : p.at("unit").get<std::string>())
          << "\n";
    }
  }
  if (!j.at("srf").is_null()) {
    out << "  self-resonance = "
        << with_u(j["srf"].at("value").get<double>(), j["srf"].at("u").get<double>(), "Hz") << "\n";
  }
  out << "fit        reduced chi-squared " << j.at("chi2_reduced").get<double>() << "\n";
  if (j.contains("driver")) {
    const auto& d = j["driver"].at("from_fit");
    out << "driver     fs " << format_si(d.at("fs_hz").get<double>(), "Hz", 4) << ", Qms "
        << d.at("qms").get<double>() << ", Qes " << d.at("qes").get<double>() << ", Qts "
        << d.at("qts").get<double>() << ", Re " << format_si(d.at("re_ohm").get<double>(), "Ω", 4)
        << " (" << j["driver"]["conditions"].at("mounting").get<std::string>() << ")\n";
  }
  for (const auto& n : j.at("notes"))
    out << "note: " << n.get<std::string>() << "\n";
  if (!file.uncertainties_given)
    out << "note: the file has no uncertainty columns; the fit's uncertainties come from the "
           "scatter of the points about the model\n";
  out << "uncertainties are expanded (k = 2)\n";
  return 0;
}

dsp::AnalysisConfig build_config(const cli::ParsedArgs& args, double sample_rate_hz) {
  dsp::AnalysisConfig config;
  config.sample_rate_hz = sample_rate_hz;
  const auto rref = args.get("rref");
  if (!rref) {
    throw Error("cli.missing_option", "--rref is required",
                "give the reference resistor's value, e.g. --rref 1k");
  }
  const double rref_ohm = cli::parse_quantity(*rref, "ohm", "--rref");
  if (!(rref_ohm > 0) || rref_ohm > 1e9) {
    throw Error("cli.out_of_range", "--rref must be between 0 and 1 Gohm, got " + *rref,
                "give the resistor's value in ohms, e.g. --rref 1k");
  }
  config.bridge.rref_ohm = rref_ohm;
  if (auto tol = args.get("rref-tol")) {
    const double pct = cli::parse_quantity(*tol, "%", "--rref-tol");
    if (!(pct >= 0 && pct <= 20)) {
      throw Error("cli.out_of_range", "--rref-tol must be between 0 and 20 %, got " + *tol,
                  "give the tolerance printed on the resistor, e.g. 0.1 or 1");
    }
    config.rref_tolerance_rel = pct / 100;
  } else {
    config.rref_tolerance_rel = 0.01;
  }
  if (auto layout = args.get("layout")) {
    auto parsed = dsp::parse_layout(*layout);
    if (!parsed) {
      throw Error("cli.bad_value", "--layout must be part-low or part-high, got " + *layout,
                  "part-low: Rref from A to B, part from B to ground; part-high: the reverse");
    }
    config.bridge.layout = *parsed;
  }
  if (auto f = args.get("freq")) config.tones_hz = cli::parse_quantity_list(*f, "Hz", "--freq");
  if (auto v = args.get("full-scale-vrms")) {
    const double vrms = cli::parse_quantity(*v, "V", "--full-scale-vrms");
    if (!(vrms > 0 && vrms < 1000)) {
      throw Error("cli.out_of_range", "--full-scale-vrms must be between 0 and 1000 V, got " + *v,
                  "measure node A with a multimeter while a known level plays");
    }
    config.volts_per_fs = vrms * std::numbers::sqrt2;
  }
  if (auto r = args.get("input-r")) {
    const double r_in = cli::parse_quantity(*r, "ohm", "--input-r");
    if (!(r_in > 0)) throw Error("cli.out_of_range", "--input-r must be > 0", "e.g. --input-r 47k");
    dsp::InputLoad load{r_in, 0.0};
    if (auto c = args.get("input-c")) {
      load.c_f = cli::parse_quantity(*c, "F", "--input-c");
      if (!(load.c_f >= 0 && load.c_f < 1e-6)) {
        throw Error("cli.out_of_range", "--input-c must be between 0 and 1 uF, got " + *c,
                    "card inputs are tens to hundreds of pF, e.g. --input-c 100p");
      }
    }
    config.input_load = load;
  } else if (args.has("input-c")) {
    throw Error("cli.missing_option", "--input-c needs --input-r",
                "give both, e.g. --input-r 47k --input-c 100p");
  }
  if (auto w = args.get("window"); w && *w != "auto") {
    config.window = dsp::parse_window(*w);
    if (!config.window) {
      throw Error("cli.bad_value", "--window must be auto, rectangular or hann, got " + *w,
                  "leave it at auto unless you know the tone is (or is not) bin-exact");
    }
  }
  if (auto m = args.get("min-tone-db")) {
    config.min_tone_db = cli::parse_quantity(*m, "dB", "--min-tone-db");
    if (!(config.min_tone_db < 0 && config.min_tone_db >= -120)) {
      throw Error("cli.out_of_range", "--min-tone-db must be between -120 and 0",
                  "e.g. --min-tone-db -50");
    }
  }
  if (auto k = args.get("kind")) {
    config.force_kind = dsp::parse_part_kind(*k);
    if (!config.force_kind)
      throw Error("cli.bad_value", "--kind must be C, L or R, got " + *k, "e.g. --kind C");
  }
  if (auto b = args.get("blocks")) {
    const double n = cli::parse_quantity(*b, "", "--blocks");
    if (!(n >= 2 && n <= 1000) || n != std::floor(n)) {
      throw Error("cli.out_of_range", "--blocks must be a whole number from 2 to 1000",
                  "e.g. --blocks 16");
    }
    config.target_blocks = static_cast<std::size_t>(n);
  }
  return config;
}

}  // namespace

int run_analyze(std::span<const std::string> argv, std::ostream& out, std::ostream& err) {
  try {
    const auto args = cli::parse_args(argv, kOptions, "analyze");
    if (args.has("help")) {
      out << "Analyse a stereo recording of the jig: channel 1 = node A (generator side),\n"
             "channel 2 = node B. Finds the tones and the steady part by itself.\n"
             "Given a saved sweep (.csv or .json) instead, fits its equivalent circuit.\n\n"
          << cli::format_help(kUsage, kOptions);
      return 0;
    }
    if (args.positional.size() != 1) {
      throw Error("cli.usage",
                  args.positional.empty() ? "no recording given" : "more than one recording given",
                  "usage: tonebridge analyze RECORDING.wav --rref OHMS, or analyze SWEEP.csv");
    }
    const std::string& path = args.positional[0];
    if (is_sweep_file(path)) return fit_sweep_file(args, path, out);
    Recording rec = read_recording(path);
    if (rec.channels < 2) {
      throw Error("file.mono", path + " has one channel; the jig needs two (node A and node B)",
                  "record in stereo: channel 1 at node A, channel 2 at node B");
    }
    auto config = build_config(args, rec.sample_rate_hz);
    std::vector<double>* a = &rec.data[0];
    std::vector<double>* b = &rec.data[1];
    if (args.has("swap")) std::swap(a, b);

    const auto result = dsp::analyze_recording(*a, *b, config);

    if (args.has("json")) {
      auto j = to_json(result);
      j["file"] = path;
      j["format"] = rec.format;
      j["channels"] = rec.channels;
      j["layout"] = std::string(dsp::layout_name(config.bridge.layout));
      j["rref_ohm"] = config.bridge.rref_ohm.real();
      j["rref_tolerance_rel"] = config.rref_tolerance_rel;
      out << j.dump(2) << "\n";
      return 0;
    }
    char head[512];
    std::snprintf(head, sizeof head,
                  "recording  %s  (%s, %d channels, %.0f Hz, %.2f s)\n"
                  "tone on    %.2f s to %.2f s, layout %s, Rref %s ± %.3g %%\n\n",
                  path.c_str(), rec.format.c_str(), rec.channels, rec.sample_rate_hz,
                  result.duration_s, static_cast<double>(result.active_begin) / rec.sample_rate_hz,
                  static_cast<double>(result.active_end) / rec.sample_rate_hz,
                  std::string(dsp::layout_name(config.bridge.layout)).c_str(),
                  format_si(config.bridge.rref_ohm.real(), "Ω", 4).c_str(),
                  config.rref_tolerance_rel * 100);
    out << head;
    for (const auto& r : result.readings)
      out << format_reading(r) << "\n";
    for (const auto& note : result.notes)
      out << "note: " << note << "\n";
    if (result.harmonics_dropped > 0) {
      out << "note: " << result.harmonics_dropped
          << " harmonic(s) of the generator's tone ignored (distortion, not excitation)\n";
    }
    out << "uncertainties are expanded (about 95 %), k from the effective degrees of freedom;\n"
           "channel mismatch and fixture leads are not calibrated out in this analysis\n";
    return 0;
  } catch (...) {
    return report_current_error("analyze", err);
  }
}

}  // namespace tb
