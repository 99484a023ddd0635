// Entry point for point files: load() checks the path and reads the file in one go;
// parse_points() hands the bytes to the delimited-text parser or the mesh reader.
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
#include "cylzone/io/load.hpp"
#include "cylzone/io/read_points.hpp"
#include "io/detail/populate_pages.hpp"
#include "io/detail/read_mesh.hpp"

namespace cylzone {
namespace {

/// Closes a FILE* on scope exit.
struct FileCloser {
  void operator()(std::FILE* f) const noexcept { std::fclose(f); }
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

LoadedFile load(const std::filesystem::path& file) {
  const std::string source = file.string();
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
  LoadedFile loaded;
  loaded.path_ = file;
  const auto expected = std::filesystem::file_size(file, ec);
  const std::size_t capacity = ec ? 0 : static_cast<std::size_t>(expected);
  loaded.data_.reset(new char[capacity > 0 ? capacity : 1]);
  // fread() fills the whole buffer: its pages in one call, not one fault each (populate_pages.hpp).
  detail::populate_for_write(loaded.data_.get(), capacity);
  loaded.size_ = std::fread(loaded.data_.get(), 1, capacity, stream.get());
  // The size can change between stat and read (a file still being written): read to the end.
  char chunk[65536];
  for (std::size_t got; (got = std::fread(chunk, 1, sizeof chunk, stream.get())) > 0;) {
    if (loaded.grown_.empty()) loaded.grown_.assign(loaded.data_.get(), loaded.size_);
    loaded.grown_.append(chunk, got);
  }
  if (std::ferror(stream.get()))
    throw InputError(source, 0, std::string("read error: ") + std::strerror(errno));
  return loaded;
}

PointCloud parse_points(std::string_view bytes, const std::string& source, PointFileFormat format,
                        const ReadOptions& options) {
  if (format == PointFileFormat::delimited_text)
    return parse_delimited_points(bytes, source, options);
  return detail::read_mesh_points(std::filesystem::path(source), bytes, format, options, source);
}

PointCloud read_points(const std::filesystem::path& file, const ReadOptions& options) {
  const LoadedFile loaded = load(file);
  return parse_points(loaded.bytes(), file.string(),
                      options.format.value_or(format_from_extension(file)), options);
}

}  // namespace cylzone
