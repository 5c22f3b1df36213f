// Names of enum values, one table per enum: the name of each value, the value
// of each name and the list of choices in the error for a name that is not in
// the table all come from the same entries.
//
//   inline constexpr NameTable<WindowKind, 2> kWindowNames{{
//       {WindowKind::kRectangular, "rectangular"}, {WindowKind::kHann, "hann"}}};
//   name_of(kWindowNames, WindowKind::kHann)         -> "hann"
//   value_of(kWindowNames, "kaiser", {"window"})     -> throws ConfigError
//       "unknown window 'kaiser'; choose one of rectangular, hann"
#pragma once

#include <array>
#include <cstddef>
#include <string>
#include <string_view>

#include "loopaudit/error.hpp"

namespace loopaudit {

template <typename Enum>
struct NameEntry {
  Enum value;
  const char* name;  // a literal: lives as long as the program
};

template <typename Enum, std::size_t N>
using NameTable = std::array<NameEntry<Enum>, N>;

// What a name was asked for, for the error: "unknown <what> '<name>'; choose
// one of <choices>", after "<where>: " when given (a file and table). `also`
// lists names the caller accepts besides the table's, first in the choices
// ("auto").
struct NameRequest {
  std::string_view what;
  std::string_view where = {};
  std::string_view also = {};
};

// True when no value and no name appears twice (checked with static_assert
// beside each table).
template <typename Enum, std::size_t N>
constexpr bool one_to_one(const NameTable<Enum, N>& table) {
  for (std::size_t i = 0; i < N; ++i) {
    for (std::size_t j = i + 1; j < N; ++j) {
      if (table[i].value == table[j].value || std::string_view(table[i].name) == table[j].name) return false;
    }
  }
  return true;
}

// The name of `value`; a value missing from its table (only a cast can make
// one) gets the name of the first entry.
template <typename Enum, std::size_t N>
constexpr const char* name_of(const NameTable<Enum, N>& table, Enum value) {
  for (const NameEntry<Enum>& entry : table) {
    if (entry.value == value) return entry.name;
  }
  return table.front().name;
}

// The names in table order: "rectangular, hann, hamming".
template <typename Enum, std::size_t N>
std::string name_list(const NameTable<Enum, N>& table) {
  std::string out;
  for (const NameEntry<Enum>& entry : table) {
    if (!out.empty()) out += ", ";
    out += entry.name;
  }
  return out;
}

// The value called `name`; throws ConfigError naming what was asked and
// listing the choices.
template <typename Enum, std::size_t N>
Enum value_of(const NameTable<Enum, N>& table, std::string_view name, const NameRequest& request) {
  for (const NameEntry<Enum>& entry : table) {
    if (name == entry.name) return entry.value;
  }
  std::string message;
  if (!request.where.empty()) message.append(request.where).append(": ");
  message.append("unknown ").append(request.what).append(" '").append(name).append("'; choose one of ");
  if (!request.also.empty()) message.append(request.also).append(", ");
  throw ConfigError(message + name_list(table));
}

}  // namespace loopaudit
