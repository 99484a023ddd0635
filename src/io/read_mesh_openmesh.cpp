// The OpenMesh bridge: the only file that includes OpenMesh. It reads a file's bytes from
// memory (never the file again: read_points() hashed exactly these bytes) after the format's
// structure scan accepted them.
// OpenMesh's property containers copy default-constructed (deliberately uninitialised) vectors,
// which g++ 12 flags inside OpenMesh's own headers.
#if defined(__GNUC__) && !defined(__clang__)
#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wmaybe-uninitialized"
#endif
#include <OpenMesh/Core/IO/MeshIO.hh>
#include <OpenMesh/Core/Mesh/PolyMesh_ArrayKernelT.hh>
#include <OpenMesh/Core/System/omstream.hh>
#if defined(__GNUC__) && !defined(__clang__)
#pragma GCC diagnostic pop
#endif

#include <algorithm>
#include <iostream>
#include <istream>
#include <mutex>
#include <sstream>
#include <streambuf>
#include <string>

#include "cylzone/core/errors.hpp"
#include "io/detail/mesh_scan.hpp"
#include "io/detail/text_parsing.hpp"

namespace cylzone::detail {
namespace {

/// Double-precision points and normals (OpenMesh's default traits are single precision).
struct DoubleTraits : OpenMesh::DefaultTraits {
  using Point = OpenMesh::Vec3d;
  using Normal = OpenMesh::Vec3d;
};
using Mesh = OpenMesh::PolyMesh_ArrayKernelT<DoubleTraits>;

/// OpenMesh's log streams (omerr, omout, omlog) and some of its readers' state are process-wide;
/// reads through OpenMesh are serialised so the capture below sees only its own read's messages.
std::mutex& openmesh_mutex() {
  static std::mutex mutex;
  return mutex;
}

/// For its lifetime, everything OpenMesh logs goes to a local buffer instead of the terminal;
/// the library never prints. OpenMesh's three log streams (omerr, omout, omlog; see
/// OpenMesh/Core/System/mostream.hh) are std::ostreams whose own stream buffer forwards each
/// line to the standard streams connected to it. The capture swaps that buffer for its own for
/// the duration of a read and puts it back afterwards. (Disconnecting std::cerr and connecting a
/// buffer instead, as mostream's interface suggests, leaks: OpenMesh 9's disconnect() never frees
/// the connection it removes, which LeakSanitizer reports for every read.) Construct only while
/// holding openmesh_mutex().
class OpenMeshLogCapture {
  /// Keeps the first 4 KiB written to it and drops the rest: a reader that logs in a loop must
  /// not grow memory without bound.
  class BoundedText : public std::streambuf {
   public:
    const std::string& text() const { return text_; }

   protected:
    int_type overflow(int_type c) override {
      if (c != traits_type::eof() && text_.size() < limit) text_ += traits_type::to_char_type(c);
      return traits_type::not_eof(c);
    }
    std::streamsize xsputn(const char* s, std::streamsize n) override {
      const auto room = static_cast<std::streamsize>(limit - std::min(limit, text_.size()));
      text_.append(s, static_cast<std::size_t>(std::min(room, n)));
      return n;
    }

   private:
    static constexpr std::size_t limit = 4096;
    std::string text_;
  };

 public:
  OpenMeshLogCapture() {
    flush();  // anything pending belongs to the terminal, not to this read
    err_ = omerr().rdbuf(&text_);
    out_ = omout().rdbuf(&text_);
    log_ = omlog().rdbuf(&text_);
    // Some of OpenMesh 9's PLY messages ("unsupported conversion type ...", found by fuzzing)
    // go to std::cerr directly: the standard streams are captured too for the read.
    cerr_ = std::cerr.rdbuf(&text_);
    cout_ = std::cout.rdbuf(&text_);
    clog_ = std::clog.rdbuf(&text_);
  }
  ~OpenMeshLogCapture() {
    omerr().rdbuf(err_);
    omout().rdbuf(out_);
    omlog().rdbuf(log_);
    std::cerr.rdbuf(cerr_);
    std::cout.rdbuf(cout_);
    std::clog.rdbuf(clog_);
  }
  OpenMeshLogCapture(const OpenMeshLogCapture&) = delete;
  OpenMeshLogCapture& operator=(const OpenMeshLogCapture&) = delete;

  /// What OpenMesh said, on one line: lines joined by "; ", cut to a readable length, anything
  /// but printable ASCII shown as '?' (OpenMesh may echo the file's bytes).
  std::string one_line() const {
    std::string joined;
    std::istringstream lines(text_.text());
    for (std::string line; std::getline(lines, line);) {
      while (!line.empty() && is_blank(line.back())) line.pop_back();
      const auto start = line.find_first_not_of(" \t");
      if (start == std::string::npos) continue;
      if (!joined.empty()) joined += "; ";
      joined += line.substr(start);
    }
    const bool cut = joined.size() > 200;
    joined = quoted_excerpt(joined, 200);  // printable, in quotes
    joined = joined.substr(1, joined.size() - 2 - (cut ? 3 : 0)) + (cut ? "..." : "");
    return joined;
  }

 private:
  static void flush() {
    omerr().flush();
    omout().flush();
    omlog().flush();
  }
  BoundedText text_;
  std::streambuf* err_ = nullptr;
  std::streambuf* out_ = nullptr;
  std::streambuf* log_ = nullptr;
  std::streambuf* cerr_ = nullptr;
  std::streambuf* cout_ = nullptr;
  std::streambuf* clog_ = nullptr;
};

/// A read-only stream buffer over bytes in memory, with seeking (OpenMesh's readers seek).
class MemoryBuffer : public std::streambuf {
 public:
  explicit MemoryBuffer(std::string_view bytes) {
    // std::streambuf's get area is non-const by interface only; nothing is written through it.
    char* begin = const_cast<char*>(bytes.data());
    setg(begin, begin, begin + bytes.size());
  }

 protected:
  pos_type seekoff(off_type offset, std::ios_base::seekdir direction,
                   std::ios_base::openmode which) override {
    if (!(which & std::ios_base::in)) return pos_type(off_type(-1));
    const off_type base = direction == std::ios_base::beg   ? 0
                          : direction == std::ios_base::cur ? gptr() - eback()
                                                            : egptr() - eback();
    const off_type target = base + offset;
    if (target < 0 || target > egptr() - eback()) return pos_type(off_type(-1));
    setg(eback(), eback() + target, egptr());
    return pos_type(target);
  }
  pos_type seekpos(pos_type position, std::ios_base::openmode which) override {
    return seekoff(off_type(position), std::ios_base::beg, which);
  }
};

}  // namespace

OpenMeshResult read_with_openmesh(std::string_view bytes, PointFileFormat format,
                                  const ScanResult& scan, const std::string& source) {
  // OBJ: only the lines the scan checked (see read_mesh_obj.cpp).
  const std::string obj_text =
      format == PointFileFormat::obj ? obj_lines_for_openmesh(bytes) : std::string();
  MemoryBuffer buffer(format == PointFileFormat::obj ? std::string_view(obj_text) : bytes);
  std::istream stream(&buffer);
  std::lock_guard<std::mutex> lock(openmesh_mutex());
  OpenMeshLogCapture log;
  Mesh mesh;
  mesh.request_vertex_normals();
  // The format is named explicitly, so a forced format works whatever the extension; for STL
  // the encoding is passed in (the stream reader does not detect it).
  OpenMesh::IO::Options options = OpenMesh::IO::Options::VertexNormal;
  if (format == PointFileFormat::stl && scan.binary_stl) options += OpenMesh::IO::Options::Binary;
  if (format == PointFileFormat::ply && scan.kind != "ASCII PLY") options += OpenMesh::IO::Options::Binary;
  const char* extension = format == PointFileFormat::ply   ? ".ply"
                          : format == PointFileFormat::obj ? ".obj"
                                                           : ".stl";
  bool ok = false;
  try {
    ok = OpenMesh::IO::read_mesh(mesh, stream, extension, options);
  } catch (const std::exception& e) {
    throw InputError(source, 0, "OpenMesh failed reading it as " + scan.kind + ": " + e.what());
  }
  if (!ok) {
    const std::string reason = log.one_line();
    throw InputError(source, 0,
                     "OpenMesh could not read it as " + scan.kind + ": " +
                         (reason.empty() ? std::string("no reason given") : reason) +
                         scan.openmesh_limits);
  }
  OpenMeshResult result;
  const auto n = static_cast<Eigen::Index>(mesh.n_vertices());
  result.points.resize(3, n);
  for (const auto vertex : mesh.vertices()) {
    const auto& p = mesh.point(vertex);
    result.points.col(vertex.idx()) = Eigen::Vector3d(p[0], p[1], p[2]);
  }
  // STL has facet normals only; OpenMesh still reports vertex normals (all zero) for it.
  if (options.vertex_has_normal() && format != PointFileFormat::stl) {
    Eigen::Matrix3Xd normals(3, n);
    for (const auto vertex : mesh.vertices()) {
      const auto& v = mesh.normal(vertex);
      normals.col(vertex.idx()) = Eigen::Vector3d(v[0], v[1], v[2]);
    }
    result.normals = std::move(normals);
  }
  return result;
}

}  // namespace cylzone::detail
