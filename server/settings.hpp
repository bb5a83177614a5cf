// The service's settings: one table (name, type, default, bounds, unit, description) that
// loads the config file, applies command-line flags (flags win), backs the settings API
// and is served to the page so its forms are built from it. A parsed Settings is a plain
// value handed to constructors; there are no global settings.
//
// Config file (docs/configuration.md): UTF-8 text, one `key = value` per line, blank lines
// ignored; keys are the table's names. A comment is a line whose first non-blank character
// is `#`, or the rest of a line from a `#` that follows a blank (so "a#b" keeps its `#`).
// Values are written as on the command line: "4.7k", "0.5", "true", "part-high"; quotes
// (double or single) around a value are optional and keep a `#` or outer blanks in it. A
// key given twice: the last one wins.
//
// Every rejection is a tb::Error naming the key, the value given and what is allowed:
// config.unknown_key, config.bad_value (not a number, not one of the choices, a fraction
// for a whole number, a JSON value of the wrong type, a file line without `=`),
// config.out_of_range ("level_cap_fs must be between 0.001 and 1, got 2"; also
// level_fs above level_cap_fs), config.not_live (a change through the API to a setting
// that only the config file or a flag may set), config.unreadable (the file named by
// --config cannot be read; line numbers are given for errors inside a file).
#pragma once

#include <filesystem>
#include <map>
#include <string>
#include <string_view>
#include <vector>

#include <nlohmann/json.hpp>

namespace tb {

enum class SettingType { number, integer, boolean, text, choice, number_list };

/// What a text setting accepts beyond one line of text.
enum class TextRule { any, non_empty, ipv4_address /* dotted quad or "localhost" */ };

struct SettingSpec {
  std::string name;  ///< "rref_ohm"; the flag is "--rref-ohm"
  SettingType type = SettingType::number;
  std::string default_value;         ///< as text, parsed like a user's value
  double min = 0, max = 0;           ///< number, integer, number_list: inclusive bounds
  std::vector<std::string> choices;  ///< choice; with a unit they are numbers ("48000")
  std::string unit;                  ///< "Hz", "ohm", "V", "" (parse_quantity's unit)
  std::string description;
  bool live = false;              ///< may change while the service runs (PUT /api/v1/settings)
  TextRule rule = TextRule::any;  ///< text
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

  struct Assignment {
    std::string name, value;
    std::string where;  ///< as for set(): "tonebridged.conf line 4", "--rref-ohm", ""
  };
  /// Sets several values as one change, all-or-nothing: each value is checked as set()
  /// does, the checks across keys (level_fs <= level_cap_fs) once after the last, so the
  /// order of different keys does not matter (a key given twice: the last one wins).
  /// `where` prefixes a failure across keys.
  void set_all(const std::vector<Assignment>& assignments, std::string_view where = "");

  /// number, integer and numeric choice (sample_rate_hz) settings. The getters throw
  /// config.unknown_key for a name not in the table and tb::Error internal for a setting
  /// of another type (both are bugs in the caller).
  double number(std::string_view name) const;
  int integer(std::string_view name) const;  ///< integer and numeric choice settings
  bool boolean(std::string_view name) const;
  const std::string& text(std::string_view name) const;      ///< text and choice settings
  std::vector<double> numbers(std::string_view name) const;  ///< number_list
  /// The value as text, as it would be written in a config file: numbers in the shortest
  /// form that reads back to the same double ("4700", "1e-07"), lists comma-separated,
  /// booleans "true"/"false"; text in quotes only when the file would read it otherwise
  /// (outer blanks, a `#` after a blank, a leading quote or `#`, or empty).
  std::string as_text(std::string_view name) const;

  /// {"name": value, ...} with numbers (and numeric choices) as numbers, booleans as
  /// booleans, lists as arrays, text and other choices as strings.
  nlohmann::json to_json() const;
  /// Applies a JSON object of changes all-or-nothing: throws config.* for the first bad
  /// entry (unknown key, wrong type, out of range, config.not_live when `live_only`) and
  /// leaves this object unchanged. Numbers may be JSON numbers or strings ("4.7k"),
  /// booleans JSON booleans or strings, lists arrays (of numbers or strings) or one
  /// comma-separated string, numeric choices numbers or strings.
  void apply_json(const nlohmann::json& changes, bool live_only);

 private:
  // Checks one value and stores its canonical text; no checks across keys.
  void assign(std::string_view name, std::string_view value, std::string_view where);
  void check_across_keys(std::string_view where) const;

  std::map<std::string, std::string, std::less<>> values_;  // canonical text per name
};

/// The table as JSON for the page: [{name,type,default,min,max,choices,unit,description,live}]
/// with the default typed as in to_json(); min and max only for number, integer and
/// number_list, choices only for choice, and "rule" ("non_empty", "ipv4_address") for a
/// text setting with a rule.
nlohmann::json settings_schema_json();

/// $XDG_CONFIG_HOME/tonebridge/tonebridged.conf when XDG_CONFIG_HOME is an absolute path,
/// else ~/.config/tonebridge/tonebridged.conf ($HOME, or the user's home directory from
/// the password database when HOME is unset).
std::filesystem::path default_config_path();

/// Applies a config file to `settings`, all-or-nothing (set_all). Throws
/// config.unreadable ("cannot read the config file PATH: No such file or directory") if
/// it cannot be read, config.* with the line number for a bad line, config.out_of_range
/// naming the file when the file's values disagree across keys (checked against the
/// settings as they were for keys the file leaves out).
void load_config_file(const std::filesystem::path& path, Settings& settings);

/// Applies "--name-with-dashes value" / "--name=value" flags for every setting,
/// all-or-nothing (set_all); a boolean flag alone means true and takes a value only after
/// '=' ("--sim-real-time=false"). Returns the arguments it did not recognise as settings,
/// in order (for the program's own flags); everything from a "--" on is returned as is.
/// Throws config.* naming the flag (config.bad_value for a flag missing its value).
std::vector<std::string> apply_setting_flags(const std::vector<std::string>& args,
                                             Settings& settings);

/// Help lines for every setting, one each, in the table's order:
/// "  --rref-ohm OHM   reference resistor in the jig now (0.1 to 10M ohm, default 1k)".
std::string settings_help();

}  // namespace tb
