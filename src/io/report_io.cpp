// Safe report writing (io/atomic_write.hpp): validation before any work, temporary files of our
// own naming beside the targets, flushed with fsync(2) and renamed into place with rename(2),
// which replaces a target atomically on POSIX file systems (POSIX.1-2017, rename()).
#include "cylzone/io/atomic_write.hpp"

#include <fcntl.h>
#include <signal.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <string>
#include <system_error>

#include "cylzone/core/errors.hpp"

namespace cylzone {
namespace fs = std::filesystem;
namespace {

constexpr std::string_view temporary_marker = ".cylzone-tmp-";

std::string errno_text(int code) { return std::strerror(code); }

/// A validated target: the file that will be replaced (symbolic links followed) and whether it
/// exists already.
struct ResolvedTarget {
  fs::path file;
  bool exists = false;
};

std::string quoted(const fs::path& p) { return "'" + p.string() + "'"; }

/// Checks one file target and returns the file it will replace. `name` is the target as given,
/// used in every message.
ResolvedTarget resolve_target(const fs::path& target) {
  const std::string name = target.string();
  if (target.empty()) throw InputError(name, 0, "cannot write report: empty file name");
  struct stat link_info {};
  if (::lstat(target.c_str(), &link_info) != 0) {
    if (errno != ENOENT)
      throw InputError(name, 0, "cannot write report: " + errno_text(errno));
    // A new file: its directory must exist and take new entries.
    const fs::path directory = target.has_parent_path() ? target.parent_path() : fs::path(".");
    std::error_code ec;
    if (!fs::is_directory(directory, ec))
      throw InputError(name, 0, "cannot write report: directory " + quoted(directory) +
                                    " does not exist");
    if (::access(directory.c_str(), W_OK | X_OK) != 0)
      throw InputError(name, 0, "cannot write report: directory " + quoted(directory) +
                                    " is not writable (" + errno_text(errno) + ")");
    fs::path file = fs::weakly_canonical(fs::absolute(target), ec);
    if (ec || file.empty()) throw InputError(name, 0, "cannot write report: " + ec.message());
    return {std::move(file), false};
  }
  struct stat info = link_info;
  if (S_ISLNK(link_info.st_mode) && ::stat(target.c_str(), &info) != 0)
    throw InputError(name, 0, "cannot write report: it is a symbolic link to nothing (" +
                                  errno_text(errno) + ")");
  if (S_ISDIR(info.st_mode)) throw InputError(name, 0, "cannot write report: it is a directory");
  if (!S_ISREG(info.st_mode))
    // rename(2) would replace the node itself: /dev/null, a FIFO a reader waits on, a socket.
    throw InputError(name, 0,
                     std::string("refusing to write a report to ") +
                         (S_ISLNK(link_info.st_mode) ? "a link to " : "") +
                         (S_ISCHR(info.st_mode) || S_ISBLK(info.st_mode) ? "a device"
                          : S_ISFIFO(info.st_mode)                        ? "a FIFO"
                          : S_ISSOCK(info.st_mode)                        ? "a socket"
                                                                          : "a special file") +
                         ": reports are written to regular files only");
  std::error_code ec;
  const fs::path file = fs::canonical(target, ec);
  if (ec) throw InputError(name, 0, "cannot write report: " + ec.message());
  if (::access(file.parent_path().c_str(), W_OK | X_OK) != 0)
    throw InputError(name, 0, "cannot write report: directory " + quoted(file.parent_path()) +
                                  " is not writable (" + errno_text(errno) + ")");
  return {file, true};
}

bool same_file(const ResolvedTarget& a, const ResolvedTarget& b) {
  if (a.file == b.file) return true;
  std::error_code ec;
  return a.exists && b.exists && fs::equivalent(a.file, b.file, ec);
}

/// Validates every target and returns the resolved files in the same order (empty path for "-").
std::vector<ResolvedTarget> resolve_all(const std::vector<OutputTarget>& targets,
                                        const std::vector<fs::path>& inputs) {
  std::vector<ResolvedTarget> resolved;
  const OutputTarget* to_stdout = nullptr;
  for (const OutputTarget& t : targets) {
    if (is_standard_output(t.path)) {
      if (to_stdout)
        throw InputError(t.path.string(), 0,
                         t.role + " and " + to_stdout->role +
                             " both ask for standard output: at most one report can go there");
      to_stdout = &t;
      resolved.push_back({});
      continue;
    }
    ResolvedTarget r = resolve_target(t.path);
    if (r.exists)
      for (const fs::path& input : inputs) {
        std::error_code ec;
        if (fs::equivalent(r.file, input, ec))
          throw InputError(t.path.string(), 0, "refusing to write a report over an input file");
      }
    for (std::size_t k = 0; k < resolved.size(); ++k)
      if (!resolved[k].file.empty() && same_file(resolved[k], r))
        throw InputError(t.path.string(), 0,
                         t.role + " names the same file as " + targets[k].role + " (" +
                             quoted(targets[k].path) + "): give each report its own file");
    resolved.push_back(r);
  }
  return resolved;
}

/// Writes `content` to a new temporary file beside `file`; returns its path. Throws InputError
/// naming `name` and removes the file on failure.
fs::path write_temporary(const fs::path& file, std::string_view content, const std::string& name) {
  const fs::path directory = file.parent_path();
  const long pid = static_cast<long>(::getpid());
  fs::path temp;
  int fd = -1;
  // O_EXCL makes the name ours; a number in use (another thread or a leftover) moves on.
  for (unsigned n = 0; fd < 0; ++n) {
    temp = directory / temporary_name(file.filename().string(), pid, n);
    fd = ::open(temp.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC | O_NOFOLLOW, 0600);
    if (fd < 0 && (errno != EEXIST || n > 1000))
      throw InputError(name, 0, "cannot create a temporary file in " + quoted(directory) + ": " +
                                    errno_text(errno));
  }
  const auto fail = [&](const std::string& what) {
    const std::string reason = errno_text(errno);
    ::close(fd);
    ::unlink(temp.c_str());
    throw InputError(name, 0, what + reason);
  };
  const char* p = content.data();
  std::size_t left = content.size();
  while (left > 0) {
    const ssize_t n = ::write(fd, p, left);
    if (n < 0) {
      if (errno == EINTR) continue;
      fail("cannot write report: ");
    }
    p += n;
    left -= static_cast<std::size_t>(n);
  }
  // Reports are meant to be shared (the temporary was created 0600 so that no one reads it
  // half-written). Other tools read them at once: make the bytes durable before the rename.
  if (::fchmod(fd, 0644) != 0 || ::fsync(fd) != 0) fail("cannot write report: ");
  if (::close(fd) != 0) {
    const std::string reason = errno_text(errno);
    ::unlink(temp.c_str());
    throw InputError(name, 0, "cannot write report: " + reason);
  }
  return temp;
}

void sync_directory(const fs::path& directory) {
  const int fd = ::open(directory.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd < 0) return;  // durability of the rename only; the data are already on disk
  ::fsync(fd);
  ::close(fd);
}

}  // namespace

bool is_standard_output(const fs::path& path) noexcept { return path.native() == "-"; }

std::string temporary_name(const std::string& name, long pid, unsigned n) {
  return "." + name + std::string(temporary_marker) + std::to_string(pid) + "-" +
         std::to_string(n);
}

std::size_t remove_stale_temporaries(const fs::path& directory, const std::string& name) {
  const std::string prefix = "." + name + std::string(temporary_marker);
  std::size_t removed = 0;
  std::error_code ec;
  for (fs::directory_iterator it(directory, ec), end; !ec && it != end; it.increment(ec)) {
    const std::string entry = it->path().filename().string();
    if (entry.compare(0, prefix.size(), prefix) != 0) continue;
    // The rest must be exactly "<pid>-<n>" in decimal digits: anything else is not ours.
    const std::string rest = entry.substr(prefix.size());
    const std::size_t dash = rest.find('-');
    if (dash == 0 || dash == std::string::npos || dash + 1 == rest.size() ||
        rest.find_first_not_of("0123456789-") != std::string::npos ||
        rest.find('-', dash + 1) != std::string::npos || dash > 9)
      continue;
    const long pid = std::stol(rest.substr(0, dash));
    if (pid <= 0 || pid == static_cast<long>(::getpid())) continue;
    // kill(pid, 0) probes without signalling; ESRCH: no such process (POSIX.1-2017, kill()).
    if (::kill(static_cast<pid_t>(pid), 0) == 0 || errno != ESRCH) continue;
    struct stat info {};
    if (::lstat(it->path().c_str(), &info) != 0 || !S_ISREG(info.st_mode)) continue;
    if (::unlink(it->path().c_str()) == 0) ++removed;
  }
  return removed;
}

void validate_outputs(const std::vector<OutputTarget>& targets,
                      const std::vector<fs::path>& inputs) {
  resolve_all(targets, inputs);
}

void write_outputs(const std::vector<OutputFile>& files, const std::vector<fs::path>& inputs,
                   std::ostream& standard_output) {
  std::vector<OutputTarget> targets;
  for (const OutputFile& f : files) targets.push_back(f.target);
  const std::vector<ResolvedTarget> resolved = resolve_all(targets, inputs);

  for (const ResolvedTarget& r : resolved)
    if (!r.file.empty())
      remove_stale_temporaries(r.file.parent_path(), r.file.filename().string());

  // Phase 1: every temporary complete and flushed; on any failure, none survives.
  std::vector<fs::path> temps(files.size());
  try {
    for (std::size_t k = 0; k < files.size(); ++k)
      if (!resolved[k].file.empty())
        temps[k] = write_temporary(resolved[k].file, files[k].content,
                                   files[k].target.path.string());
  } catch (...) {
    for (const fs::path& t : temps)
      if (!t.empty()) ::unlink(t.c_str());
    throw;
  }
  // Phase 2: the renames, one after another.
  for (std::size_t k = 0; k < files.size(); ++k) {
    if (temps[k].empty()) continue;
    if (std::rename(temps[k].c_str(), resolved[k].file.c_str()) != 0) {
      const std::string reason = errno_text(errno);
      for (std::size_t j = k; j < files.size(); ++j)
        if (!temps[j].empty()) ::unlink(temps[j].c_str());
      throw InputError(files[k].target.path.string(), 0,
                       "cannot move report into place: " + reason +
                           (k > 0 ? " (the reports before it were written)" : ""));
    }
    sync_directory(resolved[k].file.parent_path());
  }
  for (std::size_t k = 0; k < files.size(); ++k)
    if (resolved[k].file.empty()) {
      standard_output << files[k].content;
      standard_output.flush();
    }
}

void write_file_atomically(const fs::path& target, std::string_view content,
                           const std::vector<fs::path>& inputs) {
  if (is_standard_output(target))
    throw InputError("-", 0, "cannot write report: standard output is not a file here");
  struct NoStream : std::streambuf {} none;
  std::ostream unused(&none);
  write_outputs({{{target, "report"}, std::string(content)}}, inputs, unused);
}

}  // namespace cylzone
