// Errors a user can cause. Each message names the file, line, column, channel
// or frequency at fault. Data-quality findings are Diagnostics, not errors.
#pragma once

#include <concepts>
#include <cstdio>
#include <stdexcept>
#include <string>
#include <string_view>

namespace loopaudit {

class Error : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// The recording or table cannot be read or is not usable as data.
class InputError : public Error {
 public:
  using Error::Error;
};

// A scenario or option is missing, unknown or out of range.
class ConfigError : public Error {
 public:
  using Error::Error;
};

// The error of an options struct's validate() for a setting outside its
// range, named by its settings key: "'overlap' 0.99 is out of range; use a
// fraction from 0 to 0.9".
template <typename Number>
  requires std::integral<Number> || std::floating_point<Number>
ConfigError setting_out_of_range(std::string_view key, Number value, std::string_view allowed) {
  char text[32];
  if constexpr (std::floating_point<Number>) {
    // Enough digits that a value just outside a limit does not print as the
    // limit (0.9999999 is not "1").
    std::snprintf(text, sizeof text, "%.10g", static_cast<double>(value));
  } else if constexpr (std::unsigned_integral<Number>) {
    std::snprintf(text, sizeof text, "%llu", static_cast<unsigned long long>(value));
  } else {
    std::snprintf(text, sizeof text, "%lld", static_cast<long long>(value));
  }
  std::string message = "'";
  message.append(key).append("' ").append(text).append(" is out of range; use ").append(allowed);
  return ConfigError(message);
}

// The data are readable but no answer can be computed from them
// (for example no line with injection power).
class NumericalError : public Error {
 public:
  using Error::Error;
};

// An output file could not be written.
class OutputError : public Error {
 public:
  using Error::Error;
};

}  // namespace loopaudit
