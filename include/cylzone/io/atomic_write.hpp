#pragma once
/// \file atomic_write.hpp
/// Writing reports safely: a set of output files is validated before any work starts and then
/// committed together, so a run leaves either every new report or none, and never damages an
/// input or a special file.
///
/// Rules (docs/report-schema.md, "Writing the reports"):
///  * Regular files only. A target that exists must be a regular file, or a symbolic link whose
///    final target is one (the link is kept and the file it names is replaced). A device node,
///    a FIFO, a socket, a directory or a dangling link is refused: rename(2) would replace the
///    node itself (e.g. /dev/null) with a regular file.
///  * Never over an input (the same file by identity, also through a hard link or another
///    spelling of the path).
///  * Distinct targets: two outputs naming the same file, however spelled, are refused.
///  * The set commits together: every content goes to a temporary file beside its target,
///    written and flushed (fsync) before the first rename; any failure before that removes every
///    temporary file and renames none. rename(2) replaces each target atomically (POSIX), so a
///    reader sees an old report or a new one, never a half-written file. The renames themselves
///    follow one another in a few microseconds; only a failure of rename(2) there (the directory
///    removed meanwhile) can leave a set half-committed, and it is reported.
///  * Temporary files are named `.<target name>.cylzone-tmp-<pid>-<n>`. A run first removes the
///    stale ones of that naming beside its targets whose process no longer exists (a run that
///    was killed), and no others.
///  * "-" names standard output: written after the files are committed; at most one output may
///    be "-".
///
/// Every refusal is an InputError naming the target and the problem, thrown before anything is
/// written.

#include <filesystem>
#include <ostream>
#include <string>
#include <string_view>
#include <vector>

namespace cylzone {

/// One requested output: where (a path, or "-" for standard output) and, for messages, which
/// option or role asked for it (e.g. "--json").
struct OutputTarget {
  std::filesystem::path path;
  std::string role;
};

/// One output with its content, ready to commit.
struct OutputFile {
  OutputTarget target;
  std::string content;
};

/// True for "-", the name of standard output.
bool is_standard_output(const std::filesystem::path& path) noexcept;

/// Checks every target without writing anything: its directory exists and is writable, it is
/// not a special file (or a link to one), not one of `inputs`, not the same file as another
/// target, and at most one target is "-". Call it before the evaluation, so bad output paths
/// cost nothing and leave nothing. Throws InputError.
void validate_outputs(const std::vector<OutputTarget>& targets,
                      const std::vector<std::filesystem::path>& inputs);

/// Validates again (the file system may have changed meanwhile), removes stale temporary files
/// beside the targets, then commits every file as a set (see the file comment) and finally
/// writes the one "-" output, if any, to `standard_output`. Throws InputError; on a throw before
/// the renames, no target has changed and no temporary file is left.
void write_outputs(const std::vector<OutputFile>& files,
                   const std::vector<std::filesystem::path>& inputs,
                   std::ostream& standard_output);

/// One file, committed as a set of one ("-" is refused here: there is no stream to write to).
void write_file_atomically(const std::filesystem::path& target, std::string_view content,
                           const std::vector<std::filesystem::path>& inputs);

/// Removes `.<name>.cylzone-tmp-<pid>-<n>` files in `directory` for `name` whose process `pid`
/// no longer runs; returns how many were removed. Other files are never touched.
std::size_t remove_stale_temporaries(const std::filesystem::path& directory,
                                     const std::string& name);

/// The temporary-file name of our own for `name`, process `pid` and sequence number `n`.
std::string temporary_name(const std::string& name, long pid, unsigned n);

}  // namespace cylzone
