// Output files appear whole or not at all: content goes to a temporary file
// in the same folder, which replaces the target only once it is complete.
#pragma once

#include <functional>
#include <ostream>
#include <string>

namespace loopaudit {

// Throws OutputError naming the path when the file cannot be written; the
// target is then left as it was.
void write_atomically(const std::string& path, const std::function<void(std::ostream&)>& write);

}  // namespace loopaudit
