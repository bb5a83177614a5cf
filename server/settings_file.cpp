// The settings' outside sources: the config file, the command-line flags, --help.
#include "server/settings.hpp"

#include <pwd.h>
#include <unistd.h>

#include <cctype>
#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <optional>

#include "server/error.hpp"
#include "server/setting_value.hpp"

namespace tb {

using namespace setting_value;

namespace {

using Type = SettingType;

// One line of a config file: nothing (blank or comment) or a key and its value.
std::optional<Settings::Assignment> parse_line(std::string_view line, const std::string& where) {
  const std::string_view t = trim(line);
  if (t.empty() || t.front() == '#') return std::nullopt;
  const std::string form_hint =
      "write one setting per line, like `rref_ohm = 4.7k`; start comments with #";
  const std::size_t eq = t.find('=');
  if (eq == std::string_view::npos || trim(t.substr(0, eq)).empty())
    throw config_error("config.bad_value", where,
                       "expected `key = value`, got '" + std::string(t) + "'", form_hint);
  std::string_view rest = trim(t.substr(eq + 1));
  std::string_view value;
  if (!rest.empty() && (rest.front() == '"' || rest.front() == '\'')) {
    const std::size_t close = rest.find(rest.front(), 1);
    if (close == std::string_view::npos)
      throw config_error("config.bad_value", where,
                         "the quote opened in '" + std::string(t) + "' is not closed", form_hint);
    value = rest.substr(1, close - 1);
    const std::string_view after = trim(rest.substr(close + 1));
    if (!after.empty() && after.front() != '#')
      throw config_error("config.bad_value", where,
                         "text after the closing quote in '" + std::string(t) + "'", form_hint);
  } else {
    std::size_t end = 0;
    while (end < rest.size() &&
           !(rest[end] == '#' &&
             (end == 0 || std::isspace(static_cast<unsigned char>(rest[end - 1])))))
      ++end;
    value = trim(rest.substr(0, end));
  }
  return Settings::Assignment{std::string(trim(t.substr(0, eq))), std::string(value), where};
}

std::filesystem::path home_dir() {
  if (const char* home = std::getenv("HOME"); home != nullptr && *home != '\0') return home;
  if (const passwd* pw = getpwuid(getuid()); pw != nullptr && pw->pw_dir != nullptr)
    return pw->pw_dir;
  return ".";
}

}  // namespace

std::filesystem::path default_config_path() {
  std::filesystem::path base;
  if (const char* xdg = std::getenv("XDG_CONFIG_HOME");
      xdg != nullptr && std::filesystem::path(xdg).is_absolute()) {
    base = xdg;
  } else {
    base = home_dir() / ".config";
  }
  return base / "tonebridge" / "tonebridged.conf";
}

void load_config_file(const std::filesystem::path& path, Settings& settings) {
  const std::string hint = "check the file's path and permissions (docs/configuration.md)";
  auto unreadable = [&](int error) {
    return Error("config.unreadable",
                 "cannot read the config file " + path.string() + ": " + std::strerror(error),
                 hint);
  };
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) throw unreadable(EISDIR);
  errno = 0;
  std::ifstream in(path);
  if (!in) throw unreadable(errno != 0 ? errno : ENOENT);
  std::vector<Settings::Assignment> assignments;
  std::string line;
  for (int line_number = 1; std::getline(in, line); ++line_number) {
    if (line_number == 1 && line.rfind("\xEF\xBB\xBF", 0) == 0) line.erase(0, 3);  // a UTF-8 BOM
    if (auto a = parse_line(line, path.string() + " line " + std::to_string(line_number)))
      assignments.push_back(std::move(*a));
  }
  if (in.bad()) throw unreadable(errno != 0 ? errno : EIO);
  settings.set_all(assignments, path.string());
}

std::vector<std::string> apply_setting_flags(const std::vector<std::string>& args,
                                             Settings& settings) {
  std::vector<std::string> rest;
  std::vector<Settings::Assignment> assignments;
  for (std::size_t i = 0; i < args.size(); ++i) {
    const std::string& arg = args[i];
    if (arg == "--") {
      rest.insert(rest.end(), args.begin() + static_cast<std::ptrdiff_t>(i), args.end());
      break;
    }
    const std::size_t eq = arg.find('=');
    const SettingSpec* s = nullptr;
    for (const auto& spec : setting_specs())
      if (arg.substr(0, eq) == flag_of(spec)) s = &spec;
    if (s == nullptr) {
      rest.push_back(arg);
      continue;
    }
    std::string value;
    if (eq != std::string::npos) {
      value = arg.substr(eq + 1);
    } else if (s->type == Type::boolean) {
      value = "true";
    } else if (i + 1 < args.size()) {
      value = args[++i];
    } else {
      throw config_error("config.bad_value", "",
                         flag_of(*s) + " needs a value (" + value_name(*s) + ")",
                         "write " + flag_of(*s) + " VALUE or " + flag_of(*s) + "=VALUE");
    }
    assignments.push_back({s->name, value, flag_of(*s)});
  }
  settings.set_all(assignments);
  return rest;
}

std::string settings_help() {
  std::string out;
  for (const auto& s : setting_specs()) {
    std::string left = "  " + flag_of(s) + (s.type == Type::boolean ? "" : " ") + value_name(s);
    if (left.size() < 34) left.resize(34, ' ');
    std::string facts;
    if (s.type == Type::number || s.type == Type::integer || s.type == Type::number_list)
      facts = bound_text(s, s.min) + " to " + with_unit(s, bound_text(s, s.max)) + ", ";
    const std::string shown = s.type == Type::text && needs_quotes(s.default_value)
                                  ? quoted(s.default_value)
                                  : s.default_value;
    facts += "default " + (s.type == Type::choice ? with_unit(s, shown) : shown);
    out += left + " " + s.description + " (" + facts + ")\n";
  }
  return out;
}

}  // namespace tb
