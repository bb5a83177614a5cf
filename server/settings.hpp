// The service's settings: one table (name, type, default, bounds, unit, description) that
// loads the config file, applies command-line flags (flags win), backs the settings API
// and is served to the page so its forms are built from it. A parsed Settings is a plain
// value handed to constructors; there are no global settings.
//
// Config file (docs/configuration.md): UTF-8 text, one `key = value` per line, `#` starts
// a comment, blank lines ignored; keys are the table's names. Values are written as on the
// command line: "4.7k", "0.5", "true", "part-high".
//
// Every rejection is a tb::Error naming the key, the value given and what is allowed:
// config.unknown_key, config.bad_value (not a number, not one of the choices),
// config.out_of_range ("level_cap_fs must be between 0.001 and 1, got 2"),
// config.unreadable (the file named by --config cannot be read; line numbers are given
// for errors inside a file).
#pragma once

#include <filesystem>
#include <map>
#include <string>
#include <string_view>
#include <vector>

#include <nlohmann/json.hpp>

namespace tb {

enum class SettingType { number, integer, boolean, text, choice, number_list };

struct SettingSpec {
  std::string name;  ///< "rref_ohm"; the flag is "--rref-ohm"
  SettingType type = SettingType::number;
  std::string default_value;         ///< as text, parsed like a user's value
  double min = 0, max = 0;           ///< number, integer, number_list: inclusive bounds
  std::vector<std::string> choices;  ///< choice
  std::string unit;                  ///< "Hz", "ohm", "V", "" (parse_quantity's unit)
  std::string description;
  bool live = false;  ///< may change while the service runs (PUT /api/v1/settings)
};

/// The table, in the order the page shows it.
const std::vector<SettingSpec>& setting_specs();

class Settings {
 public:
  /// Every setting at its default.
  Settings();

  /// Sets one value from text; throws config.* naming `name` (and `where`, e.g.
  /// "tonebridged.conf line 4", when given).
  void set(std::string_view name, std::string_view value, std::string_view where = "");

  double number(std::string_view name) const;  ///< number and integer settings
  int integer(std::string_view name) const;
  bool boolean(std::string_view name) const;
  const std::string& text(std::string_view name) const;      ///< text and choice settings
  std::vector<double> numbers(std::string_view name) const;  ///< number_list
  /// The value as text, as it would be written in a config file.
  std::string as_text(std::string_view name) const;

  /// {"name": value, ...} with numbers as numbers, booleans as booleans.
  nlohmann::json to_json() const;
  /// Applies a JSON object of changes all-or-nothing: throws config.* for the first bad
  /// entry (unknown key, wrong type, out of range, not live when `live_only`) and leaves
  /// this object unchanged.
  void apply_json(const nlohmann::json& changes, bool live_only);

 private:
  std::map<std::string, std::string, std::less<>> values_;  // canonical text per name
};

/// The table as JSON for the page: [{name,type,default,min,max,choices,unit,description,live}].
nlohmann::json settings_schema_json();

/// $XDG_CONFIG_HOME/tonebridge/tonebridged.conf, or ~/.config/tonebridge/tonebridged.conf.
std::filesystem::path default_config_path();

/// Applies a config file to `settings`. Throws config.unreadable if it cannot be read,
/// config.* with the line number for a bad line.
void load_config_file(const std::filesystem::path& path, Settings& settings);

/// Applies "--name-with-dashes value" / "--name=value" flags for every setting; returns
/// the arguments it did not recognise as settings (for the program's own flags).
/// Throws config.* naming the flag.
std::vector<std::string> apply_setting_flags(const std::vector<std::string>& args,
                                             Settings& settings);

/// Help lines for every setting: "  --rref-ohm OHM   reference resistor (default 1k)".
std::string settings_help();

}  // namespace tb
