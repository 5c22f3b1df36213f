#include "loopaudit/report/atomic_file.hpp"

#include <ext/stdio_filebuf.h>
#include <fcntl.h>
#include <signal.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>

#include "loopaudit/error.hpp"

namespace loopaudit {

namespace {

namespace fs = std::filesystem;

// The name a temporary of this process takes beside the target while it is
// moved into place: "NAME.tmp.PID".
std::string temporary_name(const std::string& path, pid_t pid) { return path + ".tmp." + std::to_string(pid); }

// The folder the target lives in ("." for a bare name).
fs::path folder_of(const std::string& path) {
  const fs::path parent = fs::path(path).parent_path();
  return parent.empty() ? fs::path(".") : parent;
}

// Removes "NAME.tmp.PID" files beside the target whose process no longer
// exists: what a run of this tool killed while writing NAME left behind.
// Any other file, and a temporary of a process still running, is kept.
void sweep_stale_temporaries(const std::string& path) {
  const std::string prefix = fs::path(path).filename().string() + ".tmp.";
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(folder_of(path), ec)) {
    const std::string name = entry.path().filename().string();
    if (name.size() <= prefix.size() || name.compare(0, prefix.size(), prefix) != 0) continue;
    const std::string digits = name.substr(prefix.size());
    if (digits.size() > 9 || !std::all_of(digits.begin(), digits.end(), [](unsigned char c) { return std::isdigit(c); })) {
      continue;
    }
    const auto pid = static_cast<pid_t>(std::stol(digits));
    if (pid <= 0 || pid == ::getpid()) continue;
    if (::kill(pid, 0) == -1 && errno == ESRCH && entry.is_regular_file(ec)) {
      std::error_code ignored;
      fs::remove(entry.path(), ignored);
    }
  }
}

// Runs write into the stream and throws OutputError naming path when any of
// it failed.
void fill(std::ostream& out, const std::string& path, const std::function<void(std::ostream&)>& write) {
  if (!out) throw OutputError(path + ": cannot write: " + std::strerror(errno));
  write(out);
  out.flush();
  if (!out) throw OutputError(path + ": writing failed (disk full?)");
}

void move_into_place(const std::string& from, const std::string& path) {
  std::error_code ec;
  fs::rename(from, path, ec);
  if (ec) {
    std::error_code ignored;
    fs::remove(from, ignored);
    throw OutputError(path + ": cannot replace: " + ec.message());
  }
}

// A file with no name in the target's folder, written whole, then given a
// name and renamed over the target: a run killed while writing leaves
// nothing behind. False when the file system has no unnamed files.
bool write_unnamed(const std::string& path, const std::function<void(std::ostream&)>& write) {
  const int fd = ::open(folder_of(path).c_str(), O_TMPFILE | O_WRONLY | O_CLOEXEC, 0666);
  if (fd < 0) {
    if (errno == EOPNOTSUPP || errno == EISDIR || errno == EINVAL) return false;
    throw OutputError(path + ": cannot write: " + std::strerror(errno));
  }
  {
    __gnu_cxx::stdio_filebuf<char> buffer(fd, std::ios::out | std::ios::binary);  // closes fd
    std::ostream out(&buffer);
    fill(out, path, write);
    const std::string temporary = temporary_name(path, ::getpid());
    const std::string handle = "/proc/self/fd/" + std::to_string(fd);
    auto link = [&] { return ::linkat(AT_FDCWD, handle.c_str(), AT_FDCWD, temporary.c_str(), AT_SYMLINK_FOLLOW); };
    int linked = link();
    if (linked != 0 && errno == EEXIST) {
      // Left by an earlier process that had this one's number: it is gone.
      std::error_code ignored;
      fs::remove(temporary, ignored);
      linked = link();
    }
    if (linked != 0) {
      if (errno == ENOENT) return false;  // no /proc: write it again the named way
      throw OutputError(path + ": cannot write: " + std::strerror(errno));
    }
    move_into_place(temporary, path);
  }
  return true;
}

void write_named(const std::string& path, const std::function<void(std::ostream&)>& write) {
  const std::string temporary = temporary_name(path, ::getpid());
  try {
    {
      std::ofstream out(temporary, std::ios::binary | std::ios::trunc);
      fill(out, path, write);
    }
    move_into_place(temporary, path);
  } catch (...) {
    std::error_code ignored;
    fs::remove(temporary, ignored);
    throw;
  }
}

}  // namespace

void write_atomically(const std::string& path, const std::function<void(std::ostream&)>& write) {
  sweep_stale_temporaries(path);
  if (!write_unnamed(path, write)) write_named(path, write);
}

}  // namespace loopaudit
