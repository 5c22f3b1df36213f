#include "loopaudit/record/diagnostic.hpp"

#include <utility>

namespace loopaudit {

const char* severity_name(Severity severity) { return name_of(kSeverityNames, severity); }

Diagnostic make_note(std::string code, std::string message, Location where) {
  return {Severity::kNote, std::move(code), std::move(message), std::move(where)};
}

Diagnostic make_warning(std::string code, std::string message, Location where) {
  return {Severity::kWarning, std::move(code), std::move(message), std::move(where)};
}

}  // namespace loopaudit
