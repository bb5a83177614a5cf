// Reading API requests: a JSON body that must be an object with known fields of the right
// types. Every rejection is a tb::Error request.* naming the field and what it must be,
// so a client sees exactly what to fix:
//   request.bad_json      the body is not JSON (the parser's position is given)
//   request.not_object    the body is JSON but not an object
//   request.unknown_field a field this route does not take (a typo, usually)
//   request.bad_type      a field of the wrong JSON type
//   request.missing_field a required field is absent
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include <nlohmann/json.hpp>

namespace tb::api {

/// Any JSON object (fields checked by the caller). An empty body is an empty object.
nlohmann::json parse_object(const std::string& body);
/// A JSON object with only the listed fields. An empty body is an empty object.
nlohmann::json parse_body(const std::string& body, const std::vector<std::string_view>& fields);

std::optional<double> opt_number(const nlohmann::json& j, const char* field);
std::optional<std::int64_t> opt_id(const nlohmann::json& j, const char* field);
std::optional<std::string> opt_text(const nlohmann::json& j, const char* field);
std::optional<bool> opt_bool(const nlohmann::json& j, const char* field);
std::optional<std::vector<double>> opt_numbers(const nlohmann::json& j, const char* field);
double need_number(const nlohmann::json& j, const char* field);
std::string need_text(const nlohmann::json& j, const char* field);

/// A path or query id: digits only, >= 1. Throws request.bad_value otherwise.
std::int64_t parse_id(const std::string& text, const char* what);
/// A query parameter that must be a whole number in [lo, hi]; `fallback` when absent.
int query_int(const std::string& text, const char* name, int fallback, int lo, int hi);

}  // namespace tb::api
