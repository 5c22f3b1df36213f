// A finding about the data or the analysis, carried as data to the outputs.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "loopaudit/names.hpp"

namespace loopaudit {

enum class Severity { kNote, kWarning, kError };
inline constexpr NameTable<Severity, 3> kSeverityNames{
    {{Severity::kNote, "note"}, {Severity::kWarning, "warning"}, {Severity::kError, "error"}}};
static_assert(one_to_one(kSeverityNames));

// Where a finding applies; every part is optional.
struct Location {
  std::string channel;
  std::optional<std::size_t> first_sample;
  std::optional<std::size_t> last_sample;
  std::optional<double> low_hz;
  std::optional<double> high_hz;
};

struct Diagnostic {
  Severity severity = Severity::kNote;
  std::string code;     // stable identifier, e.g. "loop.sign-suspect"
  std::string message;  // for a person
  Location where;
};

using Diagnostics = std::vector<Diagnostic>;

const char* severity_name(Severity severity);

Diagnostic make_note(std::string code, std::string message, Location where = {});
Diagnostic make_warning(std::string code, std::string message, Location where = {});

}  // namespace loopaudit
