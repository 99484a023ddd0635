// Atomic report writing: a temporary file in the target's directory, flushed and renamed into
// place (rename(2) replaces the target atomically on POSIX file systems), so a reader sees the
// old report or the new one, never a half-written file.
#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <string>
#include <system_error>

#include "cylzone/core/errors.hpp"
#include "cylzone/report/report.hpp"

namespace cylzone {
namespace fs = std::filesystem;

void write_file_atomically(const fs::path& target, std::string_view content,
                           const std::vector<fs::path>& inputs) {
  const std::string name = target.string();
  const fs::path directory = target.has_parent_path() ? target.parent_path() : fs::path(".");
  std::error_code ec;
  if (!fs::is_directory(directory, ec))
    throw InputError(name, 0, "cannot write report: directory '" + directory.string() +
                                  "' does not exist");
  if (fs::exists(target, ec)) {
    if (fs::is_directory(target, ec))
      throw InputError(name, 0, "cannot write report: it is a directory");
    for (const fs::path& input : inputs) {
      std::error_code same_ec;
      if (fs::equivalent(target, input, same_ec))
        throw InputError(name, 0, "refusing to write a report over an input file");
    }
  }

  std::string temp = (directory / ("." + target.filename().string() + ".tmp-XXXXXX")).string();
  const int fd = ::mkstemp(temp.data());
  if (fd < 0)
    throw InputError(name, 0, std::string("cannot create temporary file: ") + std::strerror(errno));
  const char* p = content.data();
  std::size_t left = content.size();
  while (left > 0) {
    const ssize_t n = ::write(fd, p, left);
    if (n < 0) {
      if (errno == EINTR) continue;
      const std::string reason = std::strerror(errno);
      ::close(fd);
      ::unlink(temp.c_str());
      throw InputError(name, 0, "cannot write report: " + reason);
    }
    p += n;
    left -= static_cast<std::size_t>(n);
  }
  // Reports are read by other tools at once; make the bytes durable before they become visible.
  if (::fsync(fd) != 0 || ::close(fd) != 0) {
    const std::string reason = std::strerror(errno);
    ::unlink(temp.c_str());
    throw InputError(name, 0, "cannot write report: " + reason);
  }
  ::chmod(temp.c_str(), 0644);  // mkstemp creates 0600; reports are meant to be shared
  if (std::rename(temp.c_str(), target.c_str()) != 0) {
    const std::string reason = std::strerror(errno);
    ::unlink(temp.c_str());
    throw InputError(name, 0, "cannot move report into place: " + reason);
  }
}

}  // namespace cylzone
