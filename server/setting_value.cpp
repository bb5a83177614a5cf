#include "server/setting_value.hpp"

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>

#include "server/cli_args.hpp"

namespace tb::setting_value {

using Type = SettingType;
using nlohmann::json;

namespace {

std::string dashed(std::string_view name) {
  std::string out(name);
  std::replace(out.begin(), out.end(), '_', '-');
  return out;
}

// The shortest text that reads back to the same double (std::to_chars' guarantee).
std::string shortest(double v) {
  char buf[64];
  const auto r = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, r.ptr);
}

std::string range_text(const SettingSpec& s) {
  return "between " + bound_text(s, s.min) + " and " + with_unit(s, bound_text(s, s.max));
}

bool is_dotted_quad(std::string_view s) {
  int parts = 0;
  for (;;) {
    const std::size_t dot = s.find('.');
    const std::string_view part = s.substr(0, dot);
    int byte = 0;
    const auto [end, ec] = std::from_chars(part.data(), part.data() + part.size(), byte);
    // Leading zeros are refused: some resolvers read "010" as octal.
    if (part.empty() || part.size() > 3 || (part.size() > 1 && part[0] == '0') ||
        ec != std::errc() || end != part.data() + part.size() || byte > 255)
      return false;
    ++parts;
    if (dot == std::string_view::npos) return parts == 4;
    s.remove_prefix(dot + 1);
  }
}

std::string canonical_number(const SettingSpec& s, std::string_view value, std::string_view where) {
  const std::string given(trim(value));
  double v = 0;
  try {
    v = cli::parse_quantity(given, s.unit, s.name);
  } catch (const Error&) {
    const std::string kind = s.type == Type::integer ? "a whole number " : "a number ";
    throw config_error("config.bad_value", where,
                       s.name + " must be " + kind + range_text(s) + ", got '" + given + "'",
                       "write it like 1000, 4.7k or 100n; " + how_to_set(s));
  }
  if (s.type == Type::integer && v != std::floor(v))
    throw config_error("config.bad_value", where,
                       s.name + " must be a whole number " + range_text(s) + ", got " + given,
                       how_to_set(s));
  if (v < s.min || v > s.max)
    throw config_error("config.out_of_range", where,
                       s.name + " must be " + range_text(s) + ", got " + given, how_to_set(s));
  // + 0.0 turns a typed "-0" into 0, so it is stored and shown as 0.
  return s.type == Type::integer ? std::to_string(static_cast<long long>(v)) : shortest(v + 0.0);
}

std::string canonical_list(const SettingSpec& s, std::string_view value, std::string_view where) {
  const std::string given(trim(value));
  const std::string allowed = "a list of numbers separated by commas, each " + range_text(s);
  std::vector<double> items;
  try {
    items = cli::parse_quantity_list(given, s.unit, s.name);
  } catch (const Error&) {
    throw config_error("config.bad_value", where,
                       s.name + " must be " + allowed + ", got '" + given + "'",
                       "write it like 1,10,100,1k; " + how_to_set(s));
  }
  std::vector<std::string> texts;
  for (const double v : items) {
    if (v < s.min || v > s.max)
      throw config_error(
          "config.out_of_range", where,
          s.name + " must be " + allowed + ", got " + bound_text(s, v) + " in '" + given + "'",
          how_to_set(s));
    texts.push_back(shortest(v));
  }
  return join(texts, ",");
}

std::string canonical_boolean(const SettingSpec& s, std::string_view value,
                              std::string_view where) {
  const std::string word = lower(trim(value));
  for (const char* yes : {"true", "yes", "on", "1"})
    if (word == yes) return "true";
  for (const char* no : {"false", "no", "off", "0"})
    if (word == no) return "false";
  throw config_error(
      "config.bad_value", where,
      s.name + " must be true or false (or yes/no, on/off, 1/0), got '" + std::string(value) + "'",
      how_to_set(s));
}

std::string canonical_choice(const SettingSpec& s, std::string_view value, std::string_view where) {
  const std::string given(trim(value));
  if (numeric_choice(s)) {
    try {
      const double v = cli::parse_quantity(given, s.unit, s.name);
      for (const auto& c : s.choices)
        if (parse_canonical(c) == v) return c;
    } catch (const Error&) {
      // Not a number at all: reported below like any value that is not a choice.
    }
  } else {
    for (const auto& c : s.choices)
      if (lower(c) == lower(given)) return c;
  }
  throw config_error(
      "config.bad_value", where,
      s.name + " must be one of " + with_unit(s, join(s.choices, ", ")) + ", got '" + given + "'",
      how_to_set(s));
}

std::string canonical_text(const SettingSpec& s, std::string_view value, std::string_view where) {
  const std::string given(value);
  if (std::any_of(given.begin(), given.end(),
                  [](char c) { return std::iscntrl(static_cast<unsigned char>(c)) != 0; }))
    throw config_error("config.bad_value", where,
                       s.name + " must be one line of text without control characters",
                       how_to_set(s));
  if (s.rule == TextRule::non_empty && trim(given).empty())
    throw config_error("config.bad_value", where,
                       s.name + " must not be empty, got '" + given + "'", how_to_set(s));
  if (s.rule == TextRule::ipv4_address && given != "localhost" && !is_dotted_quad(given))
    throw config_error(
        "config.bad_value", where,
        s.name + " must be an IPv4 address like 127.0.0.1 or 192.168.1.20, or localhost, got '" +
            given + "'",
        "127.0.0.1 serves this computer only, its LAN address (or 0.0.0.0) a tablet too; " +
            how_to_set(s));
  return given;
}

}  // namespace

std::string_view trim(std::string_view s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front())))
    s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back())))
    s.remove_suffix(1);
  return s;
}

std::string lower(std::string_view s) {
  std::string out(s);
  for (auto& c : out)
    c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

std::string flag_of(const SettingSpec& s) {
  return "--" + dashed(s.name);
}

std::string join(const std::vector<std::string>& items, std::string_view separator) {
  std::string out;
  for (const auto& item : items)
    out += (out.empty() ? "" : std::string(separator)) + item;
  return out;
}

double parse_canonical(std::string_view text) {
  double v = 0;
  std::from_chars(text.data(), text.data() + text.size(), v);
  return v;
}

std::vector<double> parse_canonical_list(std::string_view text) {
  std::vector<double> out;
  for (std::size_t start = 0;;) {
    const std::size_t comma = text.find(',', start);
    out.push_back(parse_canonical(text.substr(start, comma - start)));
    if (comma == std::string_view::npos) return out;
    start = comma + 1;
  }
}

// Bounds as a technician writes them: "10M", "96k", "0.001"; whole numbers in full.
std::string bound_text(const SettingSpec& s, double v) {
  if (s.type == Type::integer) return std::to_string(static_cast<long long>(v));
  static constexpr std::pair<double, const char*> prefixes[] = {{1e9, "G"}, {1e6, "M"}, {1e3, "k"}};
  for (const auto& [scale, prefix] : prefixes)
    if (std::abs(v) >= scale) return shortest(v / scale) + prefix;
  return shortest(v);
}

std::string with_unit(const SettingSpec& s, const std::string& text) {
  return s.unit.empty() ? text : text + " " + s.unit;
}

bool numeric_choice(const SettingSpec& s) {
  return s.type == Type::choice && !s.unit.empty();
}

std::string how_to_set(const SettingSpec& s) {
  return "set it in the config file or with " + flag_of(s) +
         (s.live ? ", or on the settings page" : "");
}

Error config_error(std::string id, std::string_view where, const std::string& message,
                   std::string hint) {
  return Error(std::move(id), where.empty() ? message : std::string(where) + ": " + message,
               std::move(hint));
}

// Checks a value against its row of the table; returns the text stored for it.
std::string canonical(const SettingSpec& s, std::string_view value, std::string_view where) {
  switch (s.type) {
    case Type::number:
    case Type::integer:
      return canonical_number(s, value, where);
    case Type::number_list:
      return canonical_list(s, value, where);
    case Type::boolean:
      return canonical_boolean(s, value, where);
    case Type::choice:
      return canonical_choice(s, value, where);
    case Type::text:
      break;
  }
  return canonical_text(s, value, where);
}

json typed(const SettingSpec& s, const std::string& value) {
  switch (s.type) {
    case Type::number:
      return parse_canonical(value);
    case Type::integer:
      return static_cast<long long>(parse_canonical(value));
    case Type::boolean:
      return value == "true";
    case Type::number_list:
      return parse_canonical_list(value);
    case Type::choice:
      if (numeric_choice(s)) return static_cast<long long>(parse_canonical(value));
      break;
    case Type::text:
      break;
  }
  return value;
}

// A JSON value of the settings API as the text set() takes.
std::string json_as_text(const SettingSpec& s, const json& v) {
  auto number_text = [](const json& n) {
    return n.is_number_float() ? shortest(n.get<double>()) : n.dump();
  };
  auto wrong = [&](const std::string& expected) {
    return config_error(
        "config.bad_value", "",
        s.name + " must be " + expected + ", got " + v.dump() + " (a JSON " + v.type_name() + ")",
        how_to_set(s));
  };
  if (v.is_string()) return v.get<std::string>();
  switch (s.type) {
    case Type::number:
    case Type::integer:
      if (v.is_number()) return number_text(v);
      throw wrong("a number, or a string like \"4.7k\"");
    case Type::boolean:
      if (v.is_boolean()) return v.get<bool>() ? "true" : "false";
      throw wrong("true or false");
    case Type::choice:
      if (numeric_choice(s) && v.is_number()) return number_text(v);
      throw wrong("one of " + join(s.choices, ", "));
    case Type::number_list:
      if (v.is_array()) {
        std::vector<std::string> items;
        for (const auto& item : v) {
          if (item.is_number()) {
            items.push_back(number_text(item));
          } else if (item.is_string()) {
            items.push_back(item.get<std::string>());
          } else {
            throw wrong("an array of numbers");
          }
        }
        return join(items, ",");
      }
      throw wrong("an array of numbers");
    case Type::text:
      break;
  }
  throw wrong("a string");
}

bool needs_quotes(std::string_view v) {
  if (v.empty() || v != trim(v) || v.front() == '"' || v.front() == '\'' || v.front() == '#')
    return true;
  for (std::size_t i = 1; i < v.size(); ++i)
    if (v[i] == '#' && std::isspace(static_cast<unsigned char>(v[i - 1]))) return true;
  return false;
}

// Double quotes unless the value holds one; a value with both kinds cannot be written.
std::string quoted(const std::string& v) {
  const char q = v.find('"') == std::string::npos ? '"' : '\'';
  return q + v + q;
}

std::string value_name(const SettingSpec& s) {
  std::string unit = s.unit == "%" ? "PCT" : s.unit;
  for (auto& c : unit)
    c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  switch (s.type) {
    case Type::number:
      return unit.empty() ? "NUMBER" : unit;
    case Type::integer:
      return "N";
    case Type::boolean:
      return "[=BOOL]";
    case Type::choice:
      return join(s.choices, "|");
    case Type::number_list:
      return (unit.empty() ? "NUMBER" : unit) + ",...";
    case Type::text:
      break;
  }
  return s.rule == TextRule::ipv4_address ? "ADDRESS" : "TEXT";
}

}  // namespace tb::setting_value
