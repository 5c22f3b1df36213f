// Output files appear whole or not at all: content goes to a file with no
// name in the target's folder (where the file system has them; a named
// "NAME.tmp.PID" elsewhere), which replaces the target only once it is
// complete. A run killed while writing leaves nothing behind, and the next
// write of NAME removes any "NAME.tmp.PID" whose process is gone.
#pragma once

#include <functional>
#include <ostream>
#include <string>

namespace loopaudit {

// Throws OutputError naming the path when the file cannot be written; the
// target is then left as it was.
void write_atomically(const std::string& path, const std::function<void(std::ostream&)>& write);

}  // namespace loopaudit
