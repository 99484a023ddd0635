#pragma once
/// \file load.hpp
/// Loading is reading a file's bytes once; parsing works on those bytes in memory. A caller
/// that records a file's digest hashes the same buffer it parses, so the digest is that of the
/// bytes the figures come from, and nothing is read twice. read_points() is load() followed by
/// parse_points().

#include <filesystem>
#include <memory>
#include <string>
#include <string_view>

#include "cylzone/io/point_cloud.hpp"
#include "cylzone/io/read_points.hpp"

namespace cylzone {

/// A file's bytes, read in one go. Move-only; the buffer is not zero-filled first (that would
/// touch every page twice).
class LoadedFile {
 public:
  LoadedFile() = default;
  LoadedFile(LoadedFile&&) noexcept = default;
  LoadedFile& operator=(LoadedFile&&) noexcept = default;

  const std::filesystem::path& path() const noexcept { return path_; }
  std::string_view bytes() const noexcept {
    return grown_.empty() ? std::string_view(data_.get(), size_) : std::string_view(grown_);
  }

 private:
  friend LoadedFile load(const std::filesystem::path& file);
  std::filesystem::path path_;
  std::unique_ptr<char[]> data_;
  std::size_t size_ = 0;
  std::string grown_;  ///< used only when the file grew while being read
};

/// Reads `file` once. Throws InputError naming the file: not found, a directory or not a
/// regular file, cannot be opened, read error.
LoadedFile load(const std::filesystem::path& file);

/// Parses point data already in memory: delimited text, or a mesh / cloud format (read_points.hpp
/// describes both). `source` names the data in messages and is the mesh reader's path.
/// Throws InputError as read_points() does.
PointCloud parse_points(std::string_view bytes, const std::string& source, PointFileFormat format,
                        const ReadOptions& options = {});

}  // namespace cylzone
