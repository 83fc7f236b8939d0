#include "core/json_fields.hpp"

#include <cmath>

namespace plumb::json_fields {

using nlohmann::json;

void fail(const std::string& where, std::string_view path, const std::string& message,
          const std::string& expected) {
  Location loc;
  loc.file = where;
  throw Error(ErrorKind::artifact, "field '" + std::string(path) + "' " + message, loc, {}, expected);
}

const json& require(const json& obj, std::string_view key, const std::string& where, std::string_view path) {
  if (!obj.is_object()) fail(where, path, "is not inside a JSON object", "an object");
  const auto it = obj.find(std::string(key));
  if (it == obj.end()) fail(where, path, "is missing");
  return *it;
}

double require_finite(const json& obj, std::string_view key, const std::string& where, std::string_view path) {
  const json& v = require(obj, key, where, path);
  if (!v.is_number()) fail(where, path, "is not a number", "a finite number");
  const double d = v.get<double>();
  if (!std::isfinite(d)) fail(where, path, "is not finite", "a finite number");
  return d;
}

std::int64_t require_integer(const json& obj, std::string_view key, const std::string& where,
                             std::string_view path) {
  const json& v = require(obj, key, where, path);
  if (!v.is_number_integer()) fail(where, path, "is not an integer", "an integer");
  return v.get<std::int64_t>();
}

std::uint64_t require_count(const json& obj, std::string_view key, const std::string& where,
                            std::string_view path) {
  const std::int64_t v = require_integer(obj, key, where, path);
  if (v < 0) fail(where, path, "is negative", "a count (an integer >= 0)");
  return static_cast<std::uint64_t>(v);
}

bool require_bool(const json& obj, std::string_view key, const std::string& where, std::string_view path) {
  const json& v = require(obj, key, where, path);
  if (!v.is_boolean()) fail(where, path, "is not true or false", "a boolean");
  return v.get<bool>();
}

std::string require_string(const json& obj, std::string_view key, const std::string& where,
                           std::string_view path) {
  const json& v = require(obj, key, where, path);
  if (!v.is_string()) fail(where, path, "is not a string", "a string");
  return v.get<std::string>();
}

std::vector<double> require_finite_array(const json& obj, std::string_view key, const std::string& where,
                                         std::string_view path) {
  const json& v = require(obj, key, where, path);
  if (!v.is_array()) fail(where, path, "is not an array", "an array of finite numbers");
  std::vector<double> out;
  out.reserve(v.size());
  for (std::size_t i = 0; i < v.size(); ++i) {
    if (!v[i].is_number()) fail(where, std::string(path) + "[" + std::to_string(i) + "]", "is not a number");
    const double d = v[i].get<double>();
    if (!std::isfinite(d)) fail(where, std::string(path) + "[" + std::to_string(i) + "]", "is not finite");
    out.push_back(d);
  }
  return out;
}

}  // namespace plumb::json_fields
