#pragma once
// Validated reads of artifact fields. Every failure is a plumb::Error of kind
// artifact naming the document (`where`) and the field's JSON path.
#include <cstdint>
#include <nlohmann/json.hpp>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/error.hpp"

namespace plumb::json_fields {

[[noreturn]] void fail(const std::string& where, std::string_view path, const std::string& message,
                       const std::string& expected = {});

const nlohmann::json& require(const nlohmann::json& obj, std::string_view key, const std::string& where,
                              std::string_view path);
double require_finite(const nlohmann::json& obj, std::string_view key, const std::string& where,
                      std::string_view path);
std::int64_t require_integer(const nlohmann::json& obj, std::string_view key, const std::string& where,
                             std::string_view path);
// A non-negative integer (a count).
std::uint64_t require_count(const nlohmann::json& obj, std::string_view key, const std::string& where,
                            std::string_view path);
bool require_bool(const nlohmann::json& obj, std::string_view key, const std::string& where,
                  std::string_view path);
std::string require_string(const nlohmann::json& obj, std::string_view key, const std::string& where,
                           std::string_view path);
// An array of finite numbers.
std::vector<double> require_finite_array(const nlohmann::json& obj, std::string_view key,
                                         const std::string& where, std::string_view path);

}  // namespace plumb::json_fields
