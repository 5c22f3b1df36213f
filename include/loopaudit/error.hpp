// Errors a user can cause. Each message names the file, line, column, channel
// or frequency at fault. Data-quality findings are Diagnostics, not errors.
#pragma once

#include <stdexcept>
#include <string>

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
