#include "loopaudit/report/atomic_file.hpp"

#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>

#include "loopaudit/error.hpp"

namespace loopaudit {

void write_atomically(const std::string& path, const std::function<void(std::ostream&)>& write) {
  namespace fs = std::filesystem;
  const std::string temporary = path + ".tmp." + std::to_string(::getpid());
  try {
    {
      std::ofstream out(temporary, std::ios::binary | std::ios::trunc);
      if (!out) throw OutputError(path + ": cannot write: " + std::strerror(errno));
      write(out);
      out.flush();
      if (!out) throw OutputError(path + ": writing failed (disk full?)");
    }
    std::error_code ec;
    fs::rename(temporary, path, ec);
    if (ec) throw OutputError(path + ": cannot replace: " + ec.message());
  } catch (...) {
    std::error_code ignored;
    fs::remove(temporary, ignored);
    throw;
  }
}

}  // namespace loopaudit
