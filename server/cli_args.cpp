#include "server/cli_args.hpp"

#include <cctype>
#include <charconv>
#include <cmath>
#include <sstream>

#include "server/error.hpp"

namespace tb::cli {

std::optional<std::string> ParsedArgs::get(const std::string& name) const {
  auto it = values.find(name);
  if (it == values.end()) return std::nullopt;
  return it->second;
}

ParsedArgs parse_args(std::span<const std::string> args, std::span<const OptionSpec> specs,
                      std::string_view command) {
  ParsedArgs out;
  const std::string help_hint =
      "run `tonebridge " + std::string(command) + " --help` for the options";
  for (std::size_t i = 0; i < args.size(); ++i) {
    const std::string& arg = args[i];
    if (arg.size() < 3 || arg.rfind("--", 0) != 0) {
      if (arg.size() > 1 && arg[0] == '-' && arg != "-") {
        throw Error("cli.unknown_option", "unknown option " + arg, help_hint);
      }
      out.positional.push_back(arg);
      continue;
    }
    std::string name = arg.substr(2);
    std::optional<std::string> inline_value;
    if (auto eq = name.find('='); eq != std::string::npos) {
      inline_value = name.substr(eq + 1);
      name.resize(eq);
    }
    const OptionSpec* spec = nullptr;
    for (const auto& s : specs)
      if (s.name == name) spec = &s;
    if (spec == nullptr) throw Error("cli.unknown_option", "unknown option --" + name, help_hint);
    if (spec->value_name.empty()) {
      if (inline_value) throw Error("cli.bad_value", "--" + name + " takes no value", help_hint);
      out.values[name] = "";
    } else if (inline_value) {
      out.values[name] = *inline_value;
    } else if (i + 1 < args.size()) {
      out.values[name] = args[++i];
    } else {
      throw Error("cli.missing_value", "--" + name + " needs a value (" + spec->value_name + ")",
                  help_hint);
    }
  }
  return out;
}

namespace {

std::string lower(std::string_view s) {
  std::string out(s);
  for (auto& c : out)
    c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

bool unit_matches(std::string_view written, std::string_view unit) {
  if (written.empty()) return true;
  const std::string w = lower(written), u = lower(unit);
  if (w == u) return true;
  if (u == "ohm") return w == "ohms" || w == "r" || written == "Ω";
  return false;
}

}  // namespace

double parse_quantity(std::string_view text, std::string_view unit, std::string_view option) {
  std::string_view s = text;
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front())))
    s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back())))
    s.remove_suffix(1);
  double value = 0;
  const auto [end, ec] = std::from_chars(s.data(), s.data() + s.size(), value);
  auto bad = [&](const std::string& why) {
    return Error(
        "cli.bad_number",
        std::string(option) + " expects a number" +
            (unit.empty() ? "" : " of " + std::string(unit)) + ", got '" + std::string(text) + "'" +
            why,
        "write it like 1000, 4.7k, 100n or 2.2u" + (unit.empty() ? "" : std::string(unit)));
  };
  if (ec != std::errc() || s.empty()) throw bad("");
  std::string_view rest(end, static_cast<std::size_t>(s.data() + s.size() - end));
  while (!rest.empty() && rest.front() == ' ')
    rest.remove_prefix(1);
  double scale = 1;
  if (!rest.empty() && !unit_matches(rest, unit)) {
    // A leading SI prefix, then the unit (or nothing).
    struct Prefix {
      std::string_view text;
      double scale;
    };
    static constexpr Prefix prefixes[] = {{"p", 1e-12}, {"n", 1e-9}, {"u", 1e-6},
                                          {"µ", 1e-6},  {"m", 1e-3}, {"k", 1e3},
                                          {"K", 1e3},   {"M", 1e6},  {"G", 1e9}};
    bool matched = false;
    for (const auto& p : prefixes) {
      if (rest.substr(0, p.text.size()) == p.text &&
          unit_matches(rest.substr(p.text.size()), unit)) {
        scale = p.scale;
        matched = true;
        break;
      }
    }
    if (!matched) throw bad(" (unknown unit or prefix '" + std::string(rest) + "')");
  }
  value *= scale;
  if (!std::isfinite(value)) throw bad(" (not finite)");
  return value;
}

std::vector<double> parse_quantity_list(std::string_view text, std::string_view unit,
                                        std::string_view option) {
  std::vector<double> out;
  std::size_t start = 0;
  while (start <= text.size()) {
    const std::size_t comma = text.find(',', start);
    const std::size_t stop = comma == std::string_view::npos ? text.size() : comma;
    out.push_back(parse_quantity(text.substr(start, stop - start), unit, option));
    if (comma == std::string_view::npos) break;
    start = comma + 1;
  }
  return out;
}

std::string format_help(std::string_view usage, std::span<const OptionSpec> specs) {
  std::ostringstream out;
  out << "usage: " << usage << "\n\noptions:\n";
  for (const auto& s : specs) {
    std::string left = "  --" + s.name + (s.value_name.empty() ? "" : " " + s.value_name);
    if (left.size() < 26) left.resize(26, ' ');
    out << left << " " << s.help << "\n";
  }
  return out.str();
}

}  // namespace tb::cli
