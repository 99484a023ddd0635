// Entry point for point files: checks the path, reads the file in one go and hands the bytes to
// the delimited-text parser or the mesh reader.
#include <algorithm>
#include <cctype>
#include <cerrno>
#include <cstdio>
#include <cstring>
#include <memory>
#include <string>
#include <string_view>
#include <system_error>

#include "cylzone/core/errors.hpp"
#include "cylzone/io/read_points.hpp"
#include "io/detail/page_hints.hpp"
#include "io/detail/read_mesh.hpp"

namespace cylzone {
namespace {

/// Closes a FILE* on scope exit.
struct FileCloser {
  void operator()(std::FILE* f) const noexcept { std::fclose(f); }
};

/// A file's bytes. The buffer is allocated uninitialised and filled by one fread: zero-filling
/// it first would touch every page twice.
class FileBytes {
 public:
  std::string_view view() const noexcept {
    return grown_.empty() ? std::string_view(data_.get(), size_) : std::string_view(grown_);
  }

  static FileBytes read(const std::filesystem::path& file, const std::string& source) {
    std::error_code ec;
    const auto status = std::filesystem::status(file, ec);
    if (ec || !std::filesystem::exists(status)) {
      if (status.type() == std::filesystem::file_type::not_found || !ec)
        throw InputError(source, 0, "file not found");
      throw InputError(source, 0, "cannot access the file: " + ec.message());
    }
    if (std::filesystem::is_directory(status))
      throw InputError(source, 0, "is a directory, not a point file");
    if (!std::filesystem::is_regular_file(status))
      throw InputError(source, 0, "is not a regular file");

    errno = 0;
    std::unique_ptr<std::FILE, FileCloser> stream(std::fopen(file.c_str(), "rb"));
    if (!stream)
      throw InputError(source, 0, std::string("cannot open the file: ") + std::strerror(errno));
    FileBytes bytes;
    const auto expected = std::filesystem::file_size(file, ec);
    const std::size_t capacity = ec ? 0 : static_cast<std::size_t>(expected);
    bytes.data_.reset(new char[capacity > 0 ? capacity : 1]);
    detail::prefer_huge_pages(bytes.data_.get(), capacity);
    bytes.size_ = std::fread(bytes.data_.get(), 1, capacity, stream.get());
    // The size can change between stat and read (a file still being written): read to the end.
    char chunk[65536];
    for (std::size_t got; (got = std::fread(chunk, 1, sizeof chunk, stream.get())) > 0;) {
      if (bytes.grown_.empty()) bytes.grown_.assign(bytes.data_.get(), bytes.size_);
      bytes.grown_.append(chunk, got);
    }
    if (std::ferror(stream.get()))
      throw InputError(source, 0, std::string("read error: ") + std::strerror(errno));
    return bytes;
  }

 private:
  std::unique_ptr<char[]> data_;
  std::size_t size_ = 0;
  std::string grown_;  ///< used only when the file grew while being read
};

}  // namespace

PointFileFormat format_from_extension(const std::filesystem::path& file) noexcept {
  try {
    std::string ext = file.extension().string();
    std::transform(ext.begin(), ext.end(), ext.begin(),
                   [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
    if (ext == ".ply") return PointFileFormat::ply;
    if (ext == ".obj") return PointFileFormat::obj;
    if (ext == ".off") return PointFileFormat::off;
    if (ext == ".stl") return PointFileFormat::stl;
  } catch (...) {
    // An extension that cannot be converted is no mesh extension.
  }
  return PointFileFormat::delimited_text;
}

PointCloud read_points(const std::filesystem::path& file, const ReadOptions& options) {
  const std::string source = file.string();
  const FileBytes file_bytes = FileBytes::read(file, source);
  const std::string_view bytes = file_bytes.view();
  const PointFileFormat format = options.format.value_or(format_from_extension(file));
  if (format == PointFileFormat::delimited_text)
    return parse_delimited_points(bytes, source, options);
  return detail::read_mesh_points(file, bytes, format, options, source);
}

}  // namespace cylzone
