#include "ingest/toml_fields.hpp"

#include <cmath>
#include <filesystem>
#include <sstream>

#include "loopaudit/error.hpp"

namespace loopaudit::detail {

toml::table parse_toml_file(const std::string& path) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec)) throw InputError(path + ": no such file");
  try {
    return toml::parse_file(path);
  } catch (const toml::parse_error& e) {
    std::ostringstream message;
    message << path << ": line " << e.source().begin.line << ", column " << e.source().begin.column << ": "
            << e.description();
    throw InputError(message.str());
  }
}

void check_keys(const toml::table& table, const std::set<std::string>& allowed, const std::string& where) {
  for (const auto& [key, value] : table) {
    if (!allowed.count(std::string(key.str()))) {
      std::ostringstream message;
      message << where << ": unknown key '" << key.str() << "'; known keys:";
      for (const auto& name : allowed) message << ' ' << name;
      throw ConfigError(message.str());
    }
  }
}

const toml::table* optional_table(const toml::table& parent, const char* key, const std::string& where) {
  const auto node = parent[key];
  if (!node) return nullptr;
  if (!node.is_table()) throw ConfigError(where + ": '" + key + "' must be a table [" + key + "]");
  return node.as_table();
}

std::optional<double> optional_number(const toml::table& table, const char* key, const std::string& where) {
  const auto node = table[key];
  if (!node) return std::nullopt;
  // A whole number too large for a double to hold exactly is still a number
  // (and then out of some range, which the caller says).
  if (const auto whole = node.value_exact<std::int64_t>()) return static_cast<double>(*whole);
  const auto value = node.value<double>();
  if (!value || !std::isfinite(*value)) throw ConfigError(where + ": '" + key + "' must be a number");
  return value;
}

std::optional<std::int64_t> optional_whole(const toml::table& table, const char* key, const std::string& where,
                                           WholeRange range) {
  const auto value = optional_number(table, key, where);
  if (!value) return std::nullopt;
  if (*value != std::floor(*value) || *value < static_cast<double>(range.low) ||
      *value > static_cast<double>(range.high)) {
    const ConfigError error = setting_out_of_range(key, *value, "a whole number from " + std::to_string(range.low) +
                                                                     " to " + std::to_string(range.high));
    throw ConfigError(where + ": " + error.what());
  }
  return static_cast<std::int64_t>(*value);
}

double required_number(const toml::table& table, const char* key, const std::string& where) {
  const auto value = optional_number(table, key, where);
  if (!value) throw ConfigError(where + ": missing key '" + key + "'");
  return *value;
}

std::optional<std::string> optional_text(const toml::table& table, const char* key, const std::string& where) {
  const auto node = table[key];
  if (!node) return std::nullopt;
  const auto value = node.value<std::string>();
  if (!value) throw ConfigError(where + ": '" + key + "' must be text in quotes");
  return value;
}

std::optional<std::vector<std::string>> optional_texts(const toml::table& table, const char* key,
                                                       const std::string& where) {
  const auto node = table[key];
  if (!node) return std::nullopt;
  const auto* list = node.as_array();
  if (list == nullptr) throw ConfigError(where + ": '" + key + "' must be a list of names in quotes");
  std::vector<std::string> out;
  for (const auto& item : *list) {
    const auto value = item.value<std::string>();
    if (!value) throw ConfigError(where + ": '" + key + "' must be a list of names in quotes");
    out.push_back(*value);
  }
  return out;
}

std::optional<std::vector<double>> optional_numbers(const toml::table& table, const char* key,
                                                    const std::string& where) {
  const auto node = table[key];
  if (!node) return std::nullopt;
  if (const auto single = node.value<double>()) return std::vector<double>{*single};
  const auto* list = node.as_array();
  if (list == nullptr) throw ConfigError(where + ": '" + key + "' must be a number or a list of numbers");
  std::vector<double> out;
  for (const auto& item : *list) {
    const auto value = item.value<double>();
    if (!value || !std::isfinite(*value)) throw ConfigError(where + ": '" + key + "' must be a list of numbers");
    out.push_back(*value);
  }
  return out;
}

}  // namespace loopaudit::detail
