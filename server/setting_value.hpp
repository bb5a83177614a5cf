// One row of the settings table (settings.hpp) applied to one value: checking it, the
// canonical text stored for it, its JSON form and how it is written in a file or in
// --help. Shared by settings.cpp and settings_file.cpp; not for other callers.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include <nlohmann/json.hpp>

#include "server/error.hpp"
#include "server/settings.hpp"

namespace tb::setting_value {

/// Checks `value` against the row and returns the text stored for it: numbers in the
/// shortest form that reads back to the same double, whole numbers in full, lists
/// comma-separated, booleans "true"/"false", choices as the table spells them. Throws
/// config.bad_value or config.out_of_range naming the key, the value and what is allowed,
/// the message prefixed with `where` ("tonebridged.conf line 4: ") when given.
std::string canonical(const SettingSpec& s, std::string_view value, std::string_view where);

/// A canonical value as JSON: number, integer, boolean, array of numbers, or string
/// (numeric choices as integers).
nlohmann::json typed(const SettingSpec& s, const std::string& canonical_value);

/// A value of the settings API as the text canonical() takes. Throws config.bad_value for
/// a JSON type the setting cannot take.
std::string json_as_text(const SettingSpec& s, const nlohmann::json& v);

double parse_canonical(std::string_view text);
std::vector<double> parse_canonical_list(std::string_view text);

/// A choice whose choices are numbers (it has a unit: sample_rate_hz, mains_hz).
bool numeric_choice(const SettingSpec& s);

/// True when a config file would not read `v` back unquoted (outer blanks, a leading
/// quote or `#`, a `#` after a blank, empty); quoted() then wraps it in quotes.
bool needs_quotes(std::string_view v);
std::string quoted(const std::string& v);

std::string flag_of(const SettingSpec& s);               ///< "--rref-ohm"
std::string value_name(const SettingSpec& s);            ///< "OHM", "N", "part-low|part-high", ...
std::string bound_text(const SettingSpec& s, double v);  ///< "10M", "96k", "65535"
std::string with_unit(const SettingSpec& s, const std::string& text);  ///< "10M ohm"
std::string how_to_set(const SettingSpec& s);  ///< the hint: config file, flag, page

/// A tb::Error whose message is prefixed with `where` when given.
Error config_error(std::string id, std::string_view where, const std::string& message,
                   std::string hint);

std::string_view trim(std::string_view s);
std::string lower(std::string_view s);
std::string join(const std::vector<std::string>& items, std::string_view separator);

}  // namespace tb::setting_value
