#include "server/settings.hpp"

#include <algorithm>

#include "server/error.hpp"
#include "server/setting_value.hpp"

namespace tb {

using namespace setting_value;

namespace {

using Type = SettingType;
using nlohmann::json;

SettingSpec numeric(std::string name, Type type, std::string default_value, double min, double max,
                    std::string unit, bool live, std::string description) {
  SettingSpec s;
  s.name = std::move(name);
  s.type = type;
  s.default_value = std::move(default_value);
  s.min = min;
  s.max = max;
  s.unit = std::move(unit);
  s.live = live;
  s.description = std::move(description);
  return s;
}

SettingSpec worded(std::string name, Type type, std::string default_value,
                   std::vector<std::string> choices, std::string unit, bool live,
                   std::string description, TextRule rule = TextRule::any) {
  SettingSpec s = numeric(std::move(name), type, std::move(default_value), 0, 0, std::move(unit),
                          live, std::move(description));
  s.choices = std::move(choices);
  s.rule = rule;
  return s;
}

std::size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> row(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j)
    row[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    std::size_t diagonal = row[0];
    row[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t above = row[j];
      row[j] = std::min({row[j] + 1, row[j - 1] + 1, diagonal + (a[i - 1] == b[j - 1] ? 0 : 1)});
      diagonal = above;
    }
  }
  return row[b.size()];
}

// Settings a mistyped name probably meant: those starting with its first word ("rref"
// finds rref_ohm, rref_set_ohm and rref_tolerance_pct) or within two edits of it.
std::vector<std::string> near_names(std::string_view given) {
  std::string name = lower(given);
  std::replace(name.begin(), name.end(), '-', '_');
  const std::string first_word = name.substr(0, name.find('_'));
  std::vector<std::string> out;
  for (const auto& s : setting_specs()) {
    const bool same_word = !first_word.empty() && s.name.rfind(first_word, 0) == 0;
    if (same_word || edit_distance(name, s.name) <= 2) out.push_back(s.name);
  }
  return out;
}

Error unknown_key(std::string_view name, std::string_view where) {
  const auto near = near_names(name);
  std::string hint = "`tonebridged --help` lists every setting";
  if (!near.empty()) hint = "did you mean " + join(near, ", ") + "? " + hint;
  return config_error("config.unknown_key", where, "no setting named '" + std::string(name) + "'",
                      hint);
}

const SettingSpec* find_spec(std::string_view name) {
  for (const auto& s : setting_specs())
    if (s.name == name) return &s;
  return nullptr;
}

const SettingSpec& spec_of(std::string_view name, std::string_view where) {
  if (const SettingSpec* s = find_spec(name)) return *s;
  throw unknown_key(name, where);
}

// Getters asked for the wrong type are a bug in the caller, not the user's mistake.
void require(const SettingSpec& s, bool ok, std::string_view wanted) {
  if (!ok)
    throw Error("internal", "setting " + s.name + " was read as " + std::string(wanted),
                "this is a bug in tonebridged; please report it");
}

const char* type_name(Type t) {
  switch (t) {
    case Type::number:
      return "number";
    case Type::integer:
      return "integer";
    case Type::boolean:
      return "boolean";
    case Type::text:
      return "text";
    case Type::choice:
      return "choice";
    case Type::number_list:
      return "number_list";
  }
  return "text";
}

}  // namespace

const std::vector<SettingSpec>& setting_specs() {
  using T = Type;
  static const std::vector<SettingSpec> specs = {
      worded("listen", T::text, "127.0.0.1", {}, "", false,
             "address to serve on; anything but 127.0.0.1 or localhost serves the LAN and "
             "needs an access token",
             TextRule::ipv4_address),
      numeric("port", T::integer, "7583", 0, 65535, "", false,
              "TCP port; 0 takes any free port (it is printed at start)"),
      worded("db", T::text, "", {}, "", false, "database file; empty: the default path"),
      worded("device", T::text, "simulated", {}, "", false,
             "audio device id: simulated, or a PortAudio device \"pa:<host api>:<name>\", "
             "\"pa:<index>\" or \"pa:<name>\" (GET /api/v1/devices lists them)"),
      worded("sample_rate_hz", T::choice, "48000", {"44100", "48000", "96000", "192000"}, "Hz",
             false, "sample rate of the sound card"),
      numeric("period_frames", T::integer, "256", 64, 8192, "", false, "frames per device period"),
      worded("layout", T::choice, "part-low", {"part-low", "part-high"}, "", true, "jig layout"),
      numeric("rref_ohm", T::number, "1k", 0.1, 10e6, "ohm", true,
              "reference resistor in the jig now"),
      numeric("rref_set_ohm", T::number_list, "1,10,100,1k,10k,100k", 0.1, 10e6, "ohm", true,
              "the references the jig can switch to (for advice)"),
      numeric("rref_tolerance_pct", T::number, "0.1", 0.001, 10, "%", true,
              "tolerance of the reference resistor"),
      numeric("rref_tempco_ppm_per_k", T::number, "50", 0, 1000, "", true,
              "temperature coefficient of the reference resistor, ppm/K (metal film ~50)"),
      numeric("rref_temp_span_k", T::number, "5", 0, 50, "K", true,
              "how far the reference resistor's temperature may sit from where its value was "
              "known, K"),
      numeric("rref_inductance_h", T::number, "20n", 0, 10e-6, "H", true,
              "series inductance of the reference resistor, half-width (non-inductive film "
              "~20 nH)"),
      numeric("freq_hz", T::number, "1000", 10, 96000, "Hz", true,
              "test frequency of single and continuous readings"),
      numeric("level_fs", T::number, "0.3", 0.001, 1, "", true,
              "output level, fraction of full scale"),
      numeric("level_cap_fs", T::number, "0.5", 0.001, 1, "", false,
              "highest output level (fraction of full scale) any request may use; a safety cap "
              "that only the config file or a flag can raise"),
      numeric("duration_s", T::number, "0.5", 0.05, 30, "s", true,
              "analysed tone length per reading"),
      numeric("readings_per_s_max", T::number, "4", 0.1, 20, "", false,
              "fastest continuous reading rate, readings per second"),
      worded("mains_hz", T::choice, "50", {"50", "60"}, "Hz", true,
             "mains frequency here; its hum and harmonics are kept out of the readings"),
      numeric("full_scale_vrms", T::number, "0", 0, 100, "V", true,
              "rms volts of a full-scale sine at the inputs; 0 = unknown (a level calibration "
              "replaces it)"),
      numeric("calibration_max_age_h", T::number, "24", 0.1, 8760, "h", true,
              "calibrations older than this are still applied but the reading calls them "
              "stale"),
      numeric("channel_drift_db_per_h", T::number, "0.01", 0, 1, "dB/h", true,
              "how fast the two inputs' gain ratio may wander after the channel match; the "
              "budget's calibration_drift term grows with the match's age"),
      numeric("sim_seed", T::integer, "1", 1, 1e9, "", false,
              "seed of the simulated card's hidden faults"),
      worded("sim_part", T::text, "cap 6.8u esr 0.05", {}, "", true,
             "the part on the simulated jig (docs/parts.md)", TextRule::non_empty),
      worded("sim_real_time", T::boolean, "true", {}, "", false,
             "pace the simulated card to the wall clock"),
      worded("sim_prompts", T::boolean, "false", {}, "", true,
             "the simulated bench asks for connections as a real jig does (a swap-and-average "
             "reading's input swap) and makes them when continued"),
      numeric("max_body_bytes", T::integer, "65536", 1024, 1048576, "", false,
              "largest request body, bytes"),
      numeric("max_event_clients", T::integer, "64", 1, 256, "", false,
              "most live event streams at once"),
      numeric("input_node_a", T::integer, "1", 1, 64, "", false,
              "input channel (1-based) that reads node A, the generator side of the jig"),
      numeric("input_node_b", T::integer, "2", 1, 64, "", false,
              "input channel (1-based) that reads node B, the junction of Rref and the part"),
      numeric("output_channel", T::integer, "1", 1, 64, "", false,
              "output channel (1-based) that drives the jig"),
  };
  return specs;
}

Settings::Settings() {
  for (const auto& s : setting_specs())
    values_.emplace(s.name, canonical(s, s.default_value, "default of " + s.name));
  check_across_keys("defaults");
}

void Settings::set(std::string_view name, std::string_view value, std::string_view where) {
  set_all({Assignment{std::string(name), std::string(value), std::string(where)}}, where);
}

void Settings::set_all(const std::vector<Assignment>& assignments, std::string_view where) {
  Settings next = *this;
  for (const auto& a : assignments)
    next.assign(a.name, a.value, a.where);
  next.check_across_keys(where);
  values_ = std::move(next.values_);
}

void Settings::assign(std::string_view name, std::string_view value, std::string_view where) {
  const SettingSpec& s = spec_of(name, where);
  values_.find(name)->second = canonical(s, value, where);
}

void Settings::check_across_keys(std::string_view where) const {
  if (integer("input_node_a") == integer("input_node_b"))
    throw config_error("config.out_of_range", where,
                       "input_node_a and input_node_b are both input " + as_text("input_node_a") +
                           ": one input cannot read both nodes",
                       "set them to the two inputs the jig's nodes are wired to (defaults 1 "
                       "and 2)");
  if (number("level_fs") > number("level_cap_fs"))
    throw config_error("config.out_of_range", where,
                       "level_fs " + as_text("level_fs") + " is above level_cap_fs " +
                           as_text("level_cap_fs") + ", the highest output level allowed",
                       "lower level_fs, or raise the safety cap level_cap_fs in the config "
                       "file or with --level-cap-fs");
}

double Settings::number(std::string_view name) const {
  const SettingSpec& s = spec_of(name, "");
  require(s, s.type == Type::number || s.type == Type::integer || numeric_choice(s), "a number");
  return parse_canonical(values_.find(name)->second);
}

int Settings::integer(std::string_view name) const {
  const SettingSpec& s = spec_of(name, "");
  require(s, s.type == Type::integer || numeric_choice(s), "a whole number");
  return static_cast<int>(parse_canonical(values_.find(name)->second));
}

bool Settings::boolean(std::string_view name) const {
  const SettingSpec& s = spec_of(name, "");
  require(s, s.type == Type::boolean, "true or false");
  return values_.find(name)->second == "true";
}

const std::string& Settings::text(std::string_view name) const {
  const SettingSpec& s = spec_of(name, "");
  require(s, s.type == Type::text || s.type == Type::choice, "text");
  return values_.find(name)->second;
}

std::vector<double> Settings::numbers(std::string_view name) const {
  const SettingSpec& s = spec_of(name, "");
  require(s, s.type == Type::number_list, "a list of numbers");
  return parse_canonical_list(values_.find(name)->second);
}

std::string Settings::as_text(std::string_view name) const {
  const SettingSpec& s = spec_of(name, "");
  const std::string& v = values_.find(name)->second;
  const bool is_words = s.type == Type::text || s.type == Type::choice;
  return is_words && needs_quotes(v) ? quoted(v) : v;
}

json Settings::to_json() const {
  json out = json::object();
  for (const auto& s : setting_specs())
    out[s.name] = typed(s, values_.find(s.name)->second);
  return out;
}

void Settings::apply_json(const json& changes, bool live_only) {
  if (!changes.is_object())
    throw config_error(
        "config.bad_value", "",
        "settings changes must be a JSON object like {\"rref_ohm\": 4700}, got " + changes.dump(),
        "send an object of setting names and values");
  Settings next = *this;
  for (const auto& [name, value] : changes.items()) {
    const SettingSpec& s = spec_of(name, "");
    if (live_only && !s.live)
      throw config_error(
          "config.not_live", "", s.name + " cannot change while tonebridged runs",
          "set it in the config file or with " + flag_of(s) + ", then restart tonebridged");
    next.assign(name, json_as_text(s, value), "");
  }
  next.check_across_keys("");
  values_ = std::move(next.values_);
}

json settings_schema_json() {
  json out = json::array();
  for (const auto& s : setting_specs()) {
    json row = {{"name", s.name},
                {"type", type_name(s.type)},
                {"default", typed(s, canonical(s, s.default_value, ""))},
                {"unit", s.unit},
                {"description", s.description},
                {"live", s.live}};
    if (s.type == Type::number || s.type == Type::integer || s.type == Type::number_list) {
      row["min"] = s.min;
      row["max"] = s.max;
    }
    if (s.type == Type::choice) {
      row["choices"] = json::array();
      for (const auto& c : s.choices)
        row["choices"].push_back(typed(s, c));
    }
    if (s.rule == TextRule::non_empty) row["rule"] = "non_empty";
    if (s.rule == TextRule::ipv4_address) row["rule"] = "ipv4_address";
    out.push_back(std::move(row));
  }
  return out;
}

}  // namespace tb
