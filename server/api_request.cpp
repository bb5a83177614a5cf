#include "server/api_request.hpp"

#include <algorithm>
#include <charconv>

#include "server/error.hpp"

namespace tb::api {

namespace {

const nlohmann::json* field_of(const nlohmann::json& j, const char* field) {
  const auto it = j.find(field);
  return it == j.end() || it->is_null() ? nullptr : &*it;
}

[[noreturn]] void bad_type(const char* field, const char* what) {
  throw Error("request.bad_type", std::string("field '") + field + "' must be " + what,
              "fix the request body; docs/api.md gives an example of each route");
}

}  // namespace

nlohmann::json parse_object(const std::string& body) {
  if (body.find_first_not_of(" \t\r\n") == std::string::npos) return nlohmann::json::object();
  nlohmann::json j;
  try {
    j = nlohmann::json::parse(body);
  } catch (const nlohmann::json::parse_error& e) {
    throw Error("request.bad_json",
                "the body is not valid JSON (at byte " + std::to_string(e.byte) + ")",
                "send a JSON object, e.g. {\"freq_hz\": 1000}, with Content-Type: "
                "application/json");
  }
  if (!j.is_object()) {
    throw Error("request.not_object",
                "the body must be a JSON object, got " + std::string(j.type_name()),
                "wrap the fields in { }");
  }
  return j;
}

nlohmann::json parse_body(const std::string& body, const std::vector<std::string_view>& fields) {
  nlohmann::json j = parse_object(body);
  for (const auto& [key, value] : j.items()) {
    if (std::find(fields.begin(), fields.end(), key) == fields.end()) {
      std::string known;
      for (auto f : fields)
        known += (known.empty() ? "" : ", ") + std::string(f);
      throw Error("request.unknown_field", "this route takes no field '" + key + "'",
                  known.empty() ? "send an empty body" : "the fields it takes: " + known);
    }
  }
  return j;
}

std::optional<double> opt_number(const nlohmann::json& j, const char* field) {
  const auto* v = field_of(j, field);
  if (!v) return std::nullopt;
  if (!v->is_number()) bad_type(field, "a number");
  return v->get<double>();
}

std::optional<std::int64_t> opt_id(const nlohmann::json& j, const char* field) {
  const auto* v = field_of(j, field);
  if (!v) return std::nullopt;
  if (!v->is_number_integer() || v->get<std::int64_t>() < 1) bad_type(field, "a whole number >= 1");
  return v->get<std::int64_t>();
}

std::optional<std::string> opt_text(const nlohmann::json& j, const char* field) {
  const auto* v = field_of(j, field);
  if (!v) return std::nullopt;
  if (!v->is_string()) bad_type(field, "a string");
  return v->get<std::string>();
}

std::optional<bool> opt_bool(const nlohmann::json& j, const char* field) {
  const auto* v = field_of(j, field);
  if (!v) return std::nullopt;
  if (!v->is_boolean()) bad_type(field, "true or false");
  return v->get<bool>();
}

std::optional<std::vector<double>> opt_numbers(const nlohmann::json& j, const char* field) {
  const auto* v = field_of(j, field);
  if (!v) return std::nullopt;
  if (!v->is_array()) bad_type(field, "an array of numbers");
  std::vector<double> out;
  for (const auto& x : *v) {
    if (!x.is_number()) bad_type(field, "an array of numbers");
    out.push_back(x.get<double>());
  }
  return out;
}

double need_number(const nlohmann::json& j, const char* field) {
  if (auto v = opt_number(j, field)) return *v;
  throw Error("request.missing_field", std::string("field '") + field + "' is required",
              "add it to the request body");
}

std::string need_text(const nlohmann::json& j, const char* field) {
  if (auto v = opt_text(j, field)) return *v;
  throw Error("request.missing_field", std::string("field '") + field + "' is required",
              "add it to the request body");
}

std::int64_t parse_id(const std::string& text, const char* what) {
  std::int64_t v = 0;
  const auto [p, ec] = std::from_chars(text.data(), text.data() + text.size(), v);
  if (ec != std::errc() || p != text.data() + text.size() || v < 1) {
    throw Error("request.bad_value", std::string(what) + " '" + text + "' is not an id",
                "ids are whole numbers from 1, as the lists return them");
  }
  return v;
}

int query_int(const std::string& text, const char* name, int fallback, int lo, int hi) {
  if (text.empty()) return fallback;
  int v = 0;
  const auto [p, ec] = std::from_chars(text.data(), text.data() + text.size(), v);
  if (ec != std::errc() || p != text.data() + text.size() || v < lo || v > hi) {
    throw Error("request.bad_value",
                std::string("query parameter ") + name + " must be a whole number from " +
                    std::to_string(lo) + " to " + std::to_string(hi) + ", got '" + text + "'",
                "fix the URL");
  }
  return v;
}

}  // namespace tb::api
