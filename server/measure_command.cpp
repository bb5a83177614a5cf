#include "server/measure_command.hpp"

#include <array>
#include <cmath>
#include <fstream>
#include <numbers>
#include <sstream>

#include "dsp/circuit.hpp"
#include "dsp/jig_model.hpp"
#include "dsp/part_spec.hpp"
#include "server/bench_procedure.hpp"
#include "server/cli_args.hpp"
#include "server/error.hpp"
#include "server/error_report.hpp"
#include "server/measurement.hpp"
#include "server/reading_json.hpp"
#include "server/reading_text.hpp"
#include "server/simulated_card.hpp"

namespace tb {

namespace {

const std::array<cli::OptionSpec, 20> kOptions{{
    {"part", "TEXT", "the part on the simulated jig, e.g. \"cap 6.8u esr 0.02\" (docs/parts.md)"},
    {"netlist", "FILE", "the part as a SPICE-style R/L/C netlist between nodes p and n"},
    {"freq", "HZ|auto",
     "test frequency; auto (default): 1 kHz, or 100/120 Hz for large capacitors"},
    {"mains", "50|60", "local mains frequency, default 50 (picks 120 Hz, else 100 Hz)"},
    {"rref", "OHMS", "reference resistor, default 1k"},
    {"rref-tol", "PERCENT", "its tolerance, default 0.1"},
    {"layout", "part-low|part-high", "jig layout, default part-low"},
    {"level", "FRACTION", "output level as a fraction of full scale, default 0.5"},
    {"duration", "SECONDS", "analysed tone length, default 1"},
    {"rate", "HZ", "sample rate, default 48000"},
    {"device", "ID",
     "audio device: simulated only; real cards are measured through tonebridged "
     "(docs/hardware.md)"},
    {"seed", "N", "seed of the simulated card's hidden faults, default 1"},
    {"no-channel-match", "", "skip the channel-match step (both inputs on node A)"},
    {"no-open-short", "", "skip the open/short fixture compensation"},
    {"show-truth", "", "teaching aid: print the part's true impedance (simulated bench only)"},
    {"json", "", "print one JSON object"},
    {"help", "", "show this help"},
    {"sixteen-bit", "", "simulate a 16-bit card"},
    {"clock-offset", "",
     "give the simulated card's output and input separate clocks (up to 50 ppm apart)"},
    {"full-scale-vrms", "VOLTS",
     "rms volts of a full-scale sine at the inputs (states the test level)"},
}};

constexpr const char* kUsage = "tonebridge measure --part TEXT [options]";

double number(const cli::ParsedArgs& args, const std::string& name, const char* unit,
              double fallback, double lo, double hi, const std::string& hint) {
  const auto v = args.get(name);
  if (!v) return fallback;
  const double x = cli::parse_quantity(*v, unit, "--" + name);
  if (!(x >= lo && x <= hi)) {
    std::ostringstream msg;
    msg << "--" << name << " must be between " << lo << " and " << hi << ", got " << *v;
    throw Error("cli.out_of_range", msg.str(), hint);
  }
  return x;
}

dsp::PartSpec load_part(const cli::ParsedArgs& args) {
  if (auto text = args.get("part")) return dsp::parse_part(*text);
  if (auto file = args.get("netlist")) {
    std::ifstream in(*file);
    if (!in) {
      throw Error("file.unreadable", *file + ": cannot open the netlist",
                  "give the path of a text file with R/L/C lines between nodes p and n");
    }
    std::stringstream s;
    s << in.rdbuf();
    return dsp::parse_netlist(s.str());
  }
  throw Error("cli.missing_option", "the simulated bench needs a part on its jig",
              "give one with --part, e.g. --part \"cap 6.8u esr 0.02\", or --netlist FILE");
}

}  // namespace

int run_measure(std::span<const std::string> argv, std::ostream& out, std::ostream& err) {
  try {
    const auto args = cli::parse_args(argv, kOptions, "measure");
    if (args.has("help")) {
      out << "One reading of the part on the jig. On the simulated bench the card's faults are\n"
             "drawn at random from --seed and hidden from the measurement.\n"
             "SAFETY: on a real bench discharge capacitors first; never measure powered "
             "equipment.\n\n"
          << cli::format_help(kUsage, kOptions);
      return 0;
    }
    if (!args.positional.empty()) {
      throw Error("cli.usage", "unexpected argument '" + args.positional[0] + "'",
                  std::string("usage: ") + kUsage);
    }
    if (auto dev = args.get("device"); dev && *dev != "simulated") {
      throw Error("device.unknown", "no audio device '" + *dev + "'",
                  "this command runs the simulated bench only; measure a real card through "
                  "tonebridged (device setting, docs/hardware.md) or leave out --device");
    }
    MeasureRequest req;
    req.stream.sample_rate_hz =
        number(args, "rate", "Hz", 48000, 44100, 192000, "use 44100, 48000, 96000 or 192000");
    req.rref_ohm = number(args, "rref", "ohm", 1000, 0.1, 10e6, "e.g. --rref 1k");
    req.rref_tolerance_rel = number(args, "rref-tol", "%", 0.1, 0, 20, "e.g. --rref-tol 0.1") / 100;
    req.level_fs =
        number(args, "level", "", 0.5, 1e-4, 1, "a fraction of full scale, e.g. --level 0.3");
    req.duration_s = number(args, "duration", "s", 1, 0.1, 60, "e.g. --duration 2");
    const double mains = number(args, "mains", "Hz", 50, 50, 60, "50 or 60");
    req.volts_per_fs = number(args, "full-scale-vrms", "V", 0, 0.01, 100,
                              "measure node A with a multimeter while a known level plays") *
                       std::numbers::sqrt2;
    if (mains != 50 && mains != 60)
      throw Error("cli.bad_value", "--mains must be 50 or 60", "e.g. --mains 60");
    if (auto layout = args.get("layout")) {
      auto parsed = dsp::parse_layout(*layout);
      if (!parsed)
        throw Error("cli.bad_value", "--layout must be part-low or part-high, got " + *layout,
                    "see docs/jig.md");
      req.layout = *parsed;
    }
    const double seed = number(args, "seed", "", 1, 0, 9e15, "a whole number, e.g. --seed 7");
    const auto part = load_part(args);

    SimulatedBenchConfig bench;
    bench.card = dsp::draw_card_faults({.seed = static_cast<std::uint64_t>(seed),
                                        .clock_offset = args.has("clock-offset"),
                                        .sixteen_bit = args.has("sixteen-bit")});
    bench.jig.layout = req.layout;
    bench.jig.rref_ohm = req.rref_ohm;
    bench.part = part.netlist;
    bench.noise_seed = static_cast<std::uint64_t>(seed) * 7919 + 1;
    bench.rref_tolerance_rel = req.rref_tolerance_rel;
    SimulatedCard card(bench);

    BenchCorrections corrections;
    corrections.channel_match = !args.has("no-channel-match");
    corrections.open_short = !args.has("no-open-short");
    auto take = [&](double freq) {
      req.freq_hz = freq;
      return measure_on_bench(card, bench.jig, part.netlist, req, corrections);
    };

    const std::string freq_arg = args.get("freq").value_or("auto");
    MeasureResult result;
    if (freq_arg == "auto") {
      result = take(1000);
      // Large capacitors (above 10 uF, electrolytics) are specified at 100 or 120 Hz (IEC
      // 60384-4); pick the one that is not a harmonic of the local mains.
      if (result.reading.kind == dsp::PartKind::capacitor && result.reading.values.cs_f > 10e-6) {
        result = take(mains == 50 ? 120 : 100);
      }
    } else {
      result = take(cli::parse_quantity(freq_arg, "Hz", "--freq"));
    }

    const auto& r = result.reading;
    std::optional<std::complex<double>> truth;
    if (args.has("show-truth"))
      truth = dsp::part_impedance(part.netlist, r.freq_hz);  // teaching aid only
    if (args.has("json")) {
      nlohmann::json j = to_json(result, req);
      j["device"] = "simulated";
      j["seed"] = static_cast<std::uint64_t>(seed);
      j["part"] = part.description;
      if (truth) j["truth"] = {{"z_real_ohm", truth->real()}, {"z_imag_ohm", truth->imag()}};
      out << j.dump(2) << "\n";
      return 0;
    }
    out << "simulated bench, card seed " << static_cast<std::uint64_t>(seed)
        << " (faults hidden), part: " << part.description << "\n"
        << "layout " << dsp::layout_name(req.layout) << ", Rref " << format_si(req.rref_ohm, "Ω", 4)
        << " ± " << req.rref_tolerance_rel * 100 << " %, channel match "
        << (result.channel_match ? "measured" : "not applied") << ", open/short "
        << (result.fixture_compensated ? "applied" : "not applied") << "\n\n"
        << format_reading(r);
    for (const auto& n : result.notices)
      out << "    note: " << n.message << (n.hint.empty() ? "" : "; " + n.hint) << "\n";
    if (result.advice.better_than_present) out << "    advice: " << result.advice.text << "\n";
    if (truth) {
      out << "    truth (teaching aid, not part of the measurement): "
          << format_si(truth->real(), "Ω", 5) << (truth->imag() < 0 ? " - j" : " + j")
          << format_si(std::abs(truth->imag()), "Ω", 5) << "\n";
    }
    return 0;
  } catch (...) {
    return report_current_error("measure", err);
  }
}

}  // namespace tb
