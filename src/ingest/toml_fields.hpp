// Reading our TOML files key by key, with messages that name the file, the
// table and the key. Unknown keys are refused so that a typo cannot pass.
#pragma once

#include <cstdint>
#include <optional>
#include <set>
#include <string>
#include <toml++/toml.h>
#include <vector>

namespace loopaudit::detail {

// Parses the file; throws InputError with line and column on a syntax error.
toml::table parse_toml_file(const std::string& path);

void check_keys(const toml::table& table, const std::set<std::string>& allowed, const std::string& where);

// The sub-table, or nullptr when absent; throws ConfigError when not a table.
const toml::table* optional_table(const toml::table& parent, const char* key, const std::string& where);

std::optional<double> optional_number(const toml::table& table, const char* key, const std::string& where);
// Bounds for a whole-number key; the default suits counts and byte offsets.
struct WholeRange {
  std::int64_t low = 0;
  std::int64_t high = std::int64_t{1} << 50;
};
// A whole number within range; nullopt when absent; ConfigError otherwise.
std::optional<std::int64_t> optional_whole(const toml::table& table, const char* key, const std::string& where,
                                           WholeRange range = {});
double required_number(const toml::table& table, const char* key, const std::string& where);
std::optional<std::string> optional_text(const toml::table& table, const char* key, const std::string& where);
// A list of strings; nullopt when absent.
std::optional<std::vector<std::string>> optional_texts(const toml::table& table, const char* key, const std::string& where);
// A number or a list of numbers; nullopt when absent.
std::optional<std::vector<double>> optional_numbers(const toml::table& table, const char* key, const std::string& where);

}  // namespace loopaudit::detail
