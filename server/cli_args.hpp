// Command-line parsing for the tonebridge commands: options by table, values with SI
// prefixes as a technician types them ("4k7" is not accepted, "4.7k", "4.7 kohm",
// "100n", "2.2uF" are).
#pragma once

#include <map>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace tb::cli {

struct OptionSpec {
  std::string name;        ///< without the leading "--"
  std::string value_name;  ///< empty for a flag
  std::string help;
};

struct ParsedArgs {
  std::vector<std::string> positional;
  std::map<std::string, std::string> values;  ///< flags map to ""
  bool has(const std::string& name) const { return values.count(name) > 0; }
  std::optional<std::string> get(const std::string& name) const;
};

/// Accepts "--name value", "--name=value" and flags. Throws tb::Error cli.unknown_option
/// or cli.missing_value naming the option and the command's help.
ParsedArgs parse_args(std::span<const std::string> args, std::span<const OptionSpec> specs,
                      std::string_view command);

/// A number with an optional SI prefix (p n u µ m k M G) and an optional unit that must
/// match `unit` if given ("ohm"/"Ω" for ohms, "Hz", "V", "F", "H", "%", "s"; any unit
/// is matched by its own spelling, so "500ms" is 0.5 with unit "s"). Throws tb::Error
/// cli.bad_number naming the option. Example: parse_quantity("4.7k", "ohm", "--rref") == 4700.
double parse_quantity(std::string_view text, std::string_view unit, std::string_view option);

/// Comma-separated list of quantities.
std::vector<double> parse_quantity_list(std::string_view text, std::string_view unit,
                                        std::string_view option);

/// The help text for a command: usage line, then one line per option.
std::string format_help(std::string_view usage, std::span<const OptionSpec> specs);

}  // namespace tb::cli
