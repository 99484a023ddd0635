// Mesh and cloud input (PLY, OBJ, OFF, STL). Every file is written at test time by the small
// writers below, which follow the published format descriptions and share no code with the
// reader or with OpenMesh, so the reader is checked against independently written bytes:
//  - PLY: G. Turk, "The PLY polygon file format" (1994);
//  - OBJ: Wavefront "Object Files (.obj)", Advanced Visualizer manual, appendix B1;
//  - OFF: Geomview manual, section "OFF files" (OpenMesh reads binary OFF in machine byte order);
//  - STL: 3D Systems "StereoLithography Interface Specification" (1989): binary is an 80-byte
//    header, a little-endian uint32 facet count and 50 bytes per facet.
#include <catch2/catch.hpp>

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <functional>
#include <iostream>
#include <limits>
#include <optional>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "cylzone/core/errors.hpp"
#include "cylzone/io/read_points.hpp"
#include "expect_input_error.hpp"
#include "io/detail/read_mesh.hpp"
#include "temporary_folder.hpp"

namespace fs = std::filesystem;
using cylzone::PointCloud;
using cylzone::ReadOptions;
using cylzone::testing::expect_input_error;
using cylzone::testing::TemporaryFolder;

namespace {

// ---------------------------------------------------------------- test data

/// Random points in a 1 m box with all 53 bits of mantissa in use, and un-normalised normals.
struct Cloud {
  Eigen::Matrix3Xd points;
  Eigen::Matrix3Xd normals;
};

Cloud random_cloud(int n, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> coordinate(-500.0, 500.0);
  std::normal_distribution<double> direction(0.0, 1.0);
  Cloud cloud{Eigen::Matrix3Xd(3, n), Eigen::Matrix3Xd(3, n)};
  for (int i = 0; i < n; ++i) {
    cloud.points.col(i) = Eigen::Vector3d(coordinate(rng), coordinate(rng), coordinate(rng));
    Eigen::Vector3d v(direction(rng), direction(rng), direction(rng));
    cloud.normals.col(i) = 2.5 * v / v.norm();
  }
  return cloud;
}

/// Triangles of a fan over consecutive points: (0,1,2), (0,2,3), ... sharing vertices.
std::vector<std::array<int, 3>> fan(int n) {
  std::vector<std::array<int, 3>> faces;
  for (int i = 1; i + 1 < n; ++i) faces.push_back({0, i, i + 1});
  return faces;
}

std::string g17(double value) {
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%.17g", value);
  return buffer;
}

// ---------------------------------------------------------------- independent writers

template <class T>
void put_binary(std::string& out, T value, bool big_endian) {
  unsigned char b[sizeof(T)];
  std::memcpy(b, &value, sizeof(T));
  // The test machine is little-endian (x86-64); reverse for big-endian files.
  if (big_endian) std::reverse(b, b + sizeof(T));
  out.append(reinterpret_cast<const char*>(b), sizeof(T));
}

enum class PlyEncoding { ascii, little_endian, big_endian };

std::string write_ply(const Cloud& cloud, bool normals, PlyEncoding encoding, bool doubles,
                      bool faces) {
  const auto n = static_cast<int>(cloud.points.cols());
  const char* type = doubles ? "double" : "float";
  std::string out = "ply\nformat ";
  out += encoding == PlyEncoding::ascii           ? "ascii"
         : encoding == PlyEncoding::little_endian ? "binary_little_endian"
                                                  : "binary_big_endian";
  out += " 1.0\ncomment written by the cylzone tests\nelement vertex " + std::to_string(n) + "\n";
  for (const char* name : {"x", "y", "z"}) out += std::string("property ") + type + " " + name + "\n";
  if (normals)
    for (const char* name : {"nx", "ny", "nz"}) out += std::string("property ") + type + " " + name + "\n";
  out += "property uchar quality\n";  // an extra property the reader must skip
  const auto triangles = fan(n);
  if (faces)
    out += "element face " + std::to_string(triangles.size()) +
           "\nproperty list uchar int vertex_indices\n";
  out += "end_header\n";
  for (int i = 0; i < n; ++i) {
    double values[6] = {cloud.points(0, i), cloud.points(1, i), cloud.points(2, i),
                        cloud.normals(0, i), cloud.normals(1, i), cloud.normals(2, i)};
    const int count = normals ? 6 : 3;
    if (encoding == PlyEncoding::ascii) {
      for (int k = 0; k < count; ++k) out += g17(values[k]) + " ";
      out += "7\n";
    } else {
      const bool big = encoding == PlyEncoding::big_endian;
      for (int k = 0; k < count; ++k) {
        if (doubles) put_binary(out, values[k], big);
        else put_binary(out, static_cast<float>(values[k]), big);
      }
      put_binary(out, static_cast<std::uint8_t>(7), big);
    }
  }
  if (faces)
    for (const auto& t : triangles) {
      if (encoding == PlyEncoding::ascii) {
        out += "3 " + std::to_string(t[0]) + " " + std::to_string(t[1]) + " " + std::to_string(t[2]) + "\n";
      } else {
        const bool big = encoding == PlyEncoding::big_endian;
        put_binary(out, static_cast<std::uint8_t>(3), big);
        for (int v : t) put_binary(out, static_cast<std::int32_t>(v), big);
      }
    }
  return out;
}

std::string write_obj(const Cloud& cloud, bool normals) {
  const auto n = static_cast<int>(cloud.points.cols());
  std::string out = "# written by the cylzone tests\no scan\n";
  for (int i = 0; i < n; ++i)
    out += "v " + g17(cloud.points(0, i)) + " " + g17(cloud.points(1, i)) + " " +
           g17(cloud.points(2, i)) + "\n";
  if (normals)
    for (int i = 0; i < n; ++i)
      out += "vn " + g17(cloud.normals(0, i)) + " " + g17(cloud.normals(1, i)) + " " +
             g17(cloud.normals(2, i)) + "\n";
  for (const auto& t : fan(n)) {
    out += "f";
    for (int v : t) out += " " + std::to_string(v + 1) + (normals ? "//" + std::to_string(v + 1) : "");
    out += "\n";
  }
  return out;
}

std::string write_off(const Cloud& cloud, bool normals) {
  const auto n = static_cast<int>(cloud.points.cols());
  const auto triangles = fan(n);
  std::string out = std::string(normals ? "NOFF" : "OFF") + "\n" + std::to_string(n) + " " +
                    std::to_string(triangles.size()) + " 0\n";
  for (int i = 0; i < n; ++i) {
    out += g17(cloud.points(0, i)) + " " + g17(cloud.points(1, i)) + " " + g17(cloud.points(2, i));
    if (normals)
      out += " " + g17(cloud.normals(0, i)) + " " + g17(cloud.normals(1, i)) + " " +
             g17(cloud.normals(2, i));
    out += "\n";
  }
  for (const auto& t : triangles)
    out += "3 " + std::to_string(t[0]) + " " + std::to_string(t[1]) + " " + std::to_string(t[2]) + "\n";
  return out;
}

std::string write_stl(const Cloud& cloud, bool binary) {
  const auto triangles = fan(static_cast<int>(cloud.points.cols()));
  std::string out;
  if (binary) {
    // Binary files may start with "solid" too; the size decides.
    const std::string header = "solid-looking header of a binary STL";
    out = header + std::string(80 - header.size(), ' ');
    put_binary(out, static_cast<std::uint32_t>(triangles.size()), false);
    for (const auto& t : triangles) {
      for (int k = 0; k < 3; ++k) put_binary(out, 0.0f, false);  // facet normal
      for (int v : t)
        for (int k = 0; k < 3; ++k) put_binary(out, static_cast<float>(cloud.points(k, v)), false);
      put_binary(out, static_cast<std::uint16_t>(0), false);
    }
    return out;
  }
  out = "solid scan\n";
  for (const auto& t : triangles) {
    out += "  facet normal 0 0 0\n    outer loop\n";
    for (int v : t)
      out += "      vertex " + g17(static_cast<float>(cloud.points(0, v))) + " " +
             g17(static_cast<float>(cloud.points(1, v))) + " " +
             g17(static_cast<float>(cloud.points(2, v))) + "\n";
    out += "    endloop\n  endfacet\n";
  }
  return out + "endsolid scan\n";
}

// ---------------------------------------------------------------- comparisons

Eigen::Matrix3Xd normalised(const Eigen::Matrix3Xd& v) { return v.colwise().normalized(); }

double max_relative_difference(const Eigen::Matrix3Xd& a, const Eigen::Matrix3Xd& b) {
  REQUIRE(a.cols() == b.cols());
  double worst = 0.0;
  for (Eigen::Index i = 0; i < a.cols(); ++i)
    for (int r = 0; r < 3; ++r)
      worst = std::max(worst, std::abs(a(r, i) - b(r, i)) / std::max(std::abs(b(r, i)), 1e-300));
  return worst;
}

/// Unit normals as the mesh reader computed them into a separate matrix before it normalised in
/// place: each column divided by its largest absolute component, then by its Euclidean norm.
Eigen::Matrix3Xd unit_normals_out_of_place(const Eigen::Matrix3Xd& raw) {
  Eigen::Matrix3Xd unit(3, raw.cols());
  for (Eigen::Index i = 0; i < raw.cols(); ++i) {
    const Eigen::Vector3d v = raw.col(i);
    const Eigen::Vector3d scaled = v / v.cwiseAbs().maxCoeff();
    unit.col(i) = scaled / scaled.norm();
  }
  return unit;
}

/// Columns sorted lexicographically, for formats whose vertex order is the reader's (STL).
std::vector<std::array<double, 3>> sorted_columns(const Eigen::Matrix3Xd& m) {
  std::vector<std::array<double, 3>> out;
  for (Eigen::Index i = 0; i < m.cols(); ++i) out.push_back({m(0, i), m(1, i), m(2, i)});
  std::sort(out.begin(), out.end());
  return out;
}

Eigen::Matrix3Xd as_floats(const Eigen::Matrix3Xd& m) {
  return m.cast<float>().cast<double>();
}

/// Redirects the process's stdout and stderr (file descriptors 1 and 2) into a file for its
/// lifetime, so a test sees whatever a library would print to the terminal by any route.
class TerminalCapture {
 public:
  explicit TerminalCapture(const fs::path& file) : file_(file) {
    flush_all();
    const int fd = ::open(file.c_str(), O_CREAT | O_TRUNC | O_WRONLY, 0600);
    saved_out_ = ::dup(1);
    saved_err_ = ::dup(2);
    ::dup2(fd, 1);
    ::dup2(fd, 2);
    ::close(fd);
  }
  ~TerminalCapture() { release(); }
  /// Restores the terminal and returns what was written meanwhile.
  std::string release() {
    if (saved_out_ >= 0) {
      flush_all();
      ::dup2(saved_out_, 1);
      ::dup2(saved_err_, 2);
      ::close(saved_out_);
      ::close(saved_err_);
      saved_out_ = saved_err_ = -1;
    }
    std::ifstream in(file_, std::ios::binary);
    std::ostringstream text;
    text << in.rdbuf();
    return text.str();
  }

 private:
  static void flush_all() {
    std::cout.flush();
    std::cerr.flush();
    std::clog.flush();
    std::fflush(nullptr);
  }
  fs::path file_;
  int saved_out_ = -1;
  int saved_err_ = -1;
};

}  // namespace

// ====================================================================== reading back

TEST_CASE("ASCII PLY keeps double precision, with and without normals and faces", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(30, 1);
  for (const bool normals : {false, true})
    for (const bool faces : {false, true}) {
      INFO("normals " << normals << ", faces " << faces);
      const fs::path file = folder.write("scan.ply", write_ply(cloud, normals, PlyEncoding::ascii, true, faces));
      const PointCloud read = cylzone::read_points(file);
      REQUIRE(read.size() == 30);
      // %.17g round-trips a double, so nothing less than equality is right (brief: 1e-12).
      CHECK(max_relative_difference(read.points, cloud.points) == 0.0);
      CHECK(read.has_vectors() == normals);
      if (normals) CHECK(max_relative_difference(read.vectors, normalised(cloud.normals)) <= 4e-16);
    }
}

TEST_CASE("binary PLY: double and float, both byte orders, mesh or cloud", "[read][mesh]") {
  // With faces the file goes through the structure scan and OpenMesh; without (a cloud, no list
  // property) the scan copies the values straight from the bytes: the same values either way.
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(24, 2);
  for (const PlyEncoding encoding : {PlyEncoding::little_endian, PlyEncoding::big_endian})
    for (const bool doubles : {true, false})
      for (const bool normals : {false, true})
        for (const bool faces : {true, false}) {
          INFO("big endian " << (encoding == PlyEncoding::big_endian) << ", doubles " << doubles
                             << ", normals " << normals << ", faces " << faces);
          const fs::path file = folder.write("scan.ply", write_ply(cloud, normals, encoding, doubles, faces));
          const PointCloud read = cylzone::read_points(file);
          REQUIRE(read.size() == 24);
          CHECK(read.points == (doubles ? cloud.points : as_floats(cloud.points)));
          REQUIRE(read.has_vectors() == normals);
          if (normals) {
            const Eigen::Matrix3Xd written = doubles ? cloud.normals : as_floats(cloud.normals);
            CHECK(max_relative_difference(read.vectors, normalised(written)) <= 4e-16);
          }
        }
}

TEST_CASE("a vertex-only PLY cloud (no face element) loads", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(1000, 3);
  const fs::path file =
      folder.write("cloud.ply", write_ply(cloud, false, PlyEncoding::little_endian, false, false));
  const PointCloud read = cylzone::read_points(file);
  CHECK(read.size() == 1000);
  CHECK(read.points == as_floats(cloud.points));
  CHECK_FALSE(read.has_vectors());
}

TEST_CASE("binary PLY clouds (no faces): any property order, read exactly from the bytes", "[read][mesh]") {
  // Turk's PLY description: binary items are the properties' values in declaration order, in
  // the declared byte order; properties may come in any order and elements before the vertex
  // element are skipped. A cloud has no list property, so it takes the fixed-record path, here
  // with a vertex element whose roles are shuffled among extra values of other types.
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(37, 5);
  for (const bool big : {false, true}) {
    INFO("big endian " << big);
    // Roles shuffled, mixed float and double, an element before and one after the vertices.
    std::string bytes = std::string("ply\nformat ") +
                        (big ? "binary_big_endian" : "binary_little_endian") +
                        " 1.0\nelement camera 2\nproperty short id\nproperty float zoom\n"
                        "element vertex 37\nproperty uchar q\nproperty double nz\n"
                        "property float z\nproperty int w\nproperty double x\nproperty float nx\n"
                        "property double y\nproperty double ny\nelement tag 1\nproperty uint t\n"
                        "end_header\n";
    for (int c = 0; c < 2; ++c) {
      put_binary(bytes, static_cast<std::int16_t>(c), big);
      put_binary(bytes, 1.5f, big);
    }
    for (int i = 0; i < 37; ++i) {
      put_binary(bytes, static_cast<std::uint8_t>(i), big);
      put_binary(bytes, cloud.normals(2, i), big);
      put_binary(bytes, static_cast<float>(cloud.points(2, i)), big);
      put_binary(bytes, static_cast<std::int32_t>(-i), big);
      put_binary(bytes, cloud.points(0, i), big);
      put_binary(bytes, static_cast<float>(cloud.normals(0, i)), big);
      put_binary(bytes, cloud.points(1, i), big);
      put_binary(bytes, cloud.normals(1, i), big);
    }
    put_binary(bytes, static_cast<std::uint32_t>(9), big);
    const PointCloud read = cylzone::read_points(folder.write("shuffled.ply", bytes));
    Eigen::Matrix3Xd points = cloud.points, normals = cloud.normals;
    points.row(2) = as_floats(cloud.points).row(2);
    normals.row(0) = as_floats(cloud.normals).row(0);
    REQUIRE(read.size() == 37);
    CHECK(read.points == points);
    REQUIRE(read.has_vectors());
    CHECK(max_relative_difference(read.vectors, normalised(normals)) <= 4e-16);
    // Cut short in the element after the vertices, in the vertices, and in the element before
    // (there the count bound of the header, line 6, refuses the vertices before any walk).
    const std::size_t data = bytes.find("end_header\n") + 11;
    const std::string kind = big ? "binary big-endian PLY" : "binary little-endian PLY";
    struct Cut {
      std::size_t size, line;
      std::string problem;
    };
    for (const Cut& cut :
         {Cut{bytes.size() - 1, 0, kind + " data ends in tag 1 of 1 (truncated?)"},
          Cut{data + 12 + 36 * 45 + 44, 0, kind + " data ends in vertex 37 of 37 (truncated?)"},
          Cut{data + 12 + 29 * 45 + 3, 0, kind + " data ends in vertex 30 of 37 (truncated?)"},
          Cut{data + 7, 6, "PLY header declares 37 vertices but only 7 bytes of data follow"}}) {
      const fs::path file = folder.write("cut.ply", bytes.substr(0, cut.size));
      expect_input_error([&] { cylzone::read_points(file); }, file.string(), cut.line, cut.problem);
    }
  }
}

TEST_CASE("binary PLY of x y z doubles, little-endian: the one-copy layout gives the same bits as every other layout", "[read][mesh]") {
  // Turk's PLY description: a binary vertex is its properties' values in declaration order. With
  // exactly "double x, double y, double z" little-endian the vertex data is the column-major
  // layout of the point matrix, and the reader copies it in one piece; any other layout
  // (big-endian, floats, an extra property, normals, another property order, faces) is read
  // value by value. Both must give the written doubles bit for bit. 45,000 points (1.08 MB of
  // coordinates) so that the readers' buffers are large enough to be populated before they are
  // written (io/detail/populate_pages.hpp).
  TemporaryFolder folder("read-mesh");
  const int n = 45000;
  const Cloud cloud = random_cloud(n, 11);
  struct Layout {
    const char* label;
    bool big = false;
    bool extra = false;    // a uchar property after z
    bool normals = false;  // nx ny nz after z
    bool reversed = false; // z y x in the header and in each vertex
    bool faces = false;    // a face element (a list property: the general walk and OpenMesh)
  };
  const Layout layouts[] = {{"x y z double LE (one copy)"},
                            {"big-endian", true},
                            {"extra property", false, true},
                            {"normals", false, false, true},
                            {"z y x", false, false, false, true},
                            {"faces", false, false, false, false, true},
                            {"normals and faces", false, false, true, false, true}};
  for (const Layout& layout : layouts) {
    INFO(layout.label);
    const int count = layout.faces ? 200 : n;  // OpenMesh also reads a file with faces: kept small
    std::string bytes = std::string("ply\nformat ") +
                        (layout.big ? "binary_big_endian" : "binary_little_endian") +
                        " 1.0\nelement vertex " + std::to_string(count) + "\n";
    for (const char* name : {"x", "y", "z"}) {
      const char* written = layout.reversed ? (name[0] == 'x' ? "z" : name[0] == 'z' ? "x" : "y") : name;
      bytes += std::string("property double ") + written + "\n";
    }
    if (layout.extra) bytes += "property uchar q\n";
    if (layout.normals) bytes += "property double nx\nproperty double ny\nproperty double nz\n";
    const auto triangles = fan(count);
    if (layout.faces)
      bytes += "element face " + std::to_string(triangles.size()) + "\nproperty list uchar int vertex_indices\n";
    bytes += "end_header\n";
    for (int i = 0; i < count; ++i) {
      for (int k = 0; k < 3; ++k) put_binary(bytes, cloud.points(layout.reversed ? 2 - k : k, i), layout.big);
      if (layout.extra) put_binary(bytes, static_cast<std::uint8_t>(i), layout.big);
      if (layout.normals)
        for (int k = 0; k < 3; ++k) put_binary(bytes, cloud.normals(k, i), layout.big);
    }
    for (const auto& t : layout.faces ? triangles : std::vector<std::array<int, 3>>{}) {
      put_binary(bytes, static_cast<std::uint8_t>(3), layout.big);
      for (int v : t) put_binary(bytes, static_cast<std::int32_t>(v), layout.big);
    }
    const PointCloud read = cylzone::read_points(folder.write("layout.ply", bytes));
    REQUIRE(read.size() == static_cast<std::size_t>(count));
    // Bit for bit: memcmp, so that -0.0 against 0.0 or a NaN's payload would also show.
    CHECK(std::memcmp(read.points.data(), cloud.points.data(), sizeof(double) * 3 * static_cast<std::size_t>(count)) == 0);
    CHECK(read.has_vectors() == layout.normals);
    // Unit normals: within a few units in the last place of 1 of the written ones normalised
    // (the reader scales by the largest component first; componentwise relative error is no
    // measure for a component near zero among 45,000 random directions), and bit for bit what
    // the out-of-place normalisation the reader used before gives (the reader now normalises
    // the scanned array in place when nothing else needs the raw normals, a copy otherwise).
    if (layout.normals) {
      const Eigen::Matrix3Xd written = cloud.normals.leftCols(count);
      CHECK((read.vectors - normalised(written)).cwiseAbs().maxCoeff() <= 1e-15);
      const Eigen::Matrix3Xd before = unit_normals_out_of_place(written);
      CHECK(std::memcmp(read.vectors.data(), before.data(), sizeof(double) * 3 * static_cast<std::size_t>(count)) == 0);
    }
  }
}

TEST_CASE("fixture: hand-written ASCII PLY cloud with normals", "[read][mesh]") {
  const fs::path file = fs::path(CYLZONE_TEST_DATA_DIR) / "input" / "cloud_vertices.ply";
  const PointCloud read = cylzone::read_points(file);
  REQUIRE(read.size() == 4);
  REQUIRE(read.has_vectors());
  CHECK(read.points.col(1) == Eigen::Vector3d(0, 12.5, -3.25));
  CHECK(read.vectors.col(1) == Eigen::Vector3d(0, 1, 0));
  CHECK(read.vectors.col(3).isApprox(Eigen::Vector3d(0, -std::sqrt(0.5), std::sqrt(0.5)), 1e-15));
}

TEST_CASE("PLY elements before the vertex element are skipped", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  const std::string text =
      "ply\nformat ascii 1.0\nelement camera 2\nproperty float view\nproperty float zoom\n"
      "element vertex 2\nproperty float w\nproperty double x\nproperty double y\nproperty double z\n"
      "end_header\n1.5 2\n2.5 0\n9 0.125 -1e-3 1234.5678901234567\n9 1 2 3\n";
  const PointCloud read = cylzone::read_points(folder.write("cam.ply", text));
  REQUIRE(read.size() == 2);
  CHECK(read.points.col(0) == Eigen::Vector3d(0.125, -1e-3, 1234.5678901234567));
  CHECK(read.points.col(1) == Eigen::Vector3d(1, 2, 3));
}

TEST_CASE("OBJ with vn keeps double coordinates and gets its normals", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(20, 4);
  const PointCloud with = cylzone::read_points(folder.write("part.obj", write_obj(cloud, true)));
  REQUIRE(with.size() == 20);
  CHECK(max_relative_difference(with.points, cloud.points) == 0.0);
  REQUIRE(with.has_vectors());
  // OpenMesh stores OBJ normals in single precision; direction agrees to float rounding.
  CHECK(max_relative_difference(with.vectors, normalised(cloud.normals)) <= 1e-6);
  const PointCloud without = cylzone::read_points(folder.write("plain.obj", write_obj(cloud, false)));
  CHECK(without.points == cloud.points);
  CHECK_FALSE(without.has_vectors());
}

TEST_CASE("OBJ normals are used only when every vertex gets one", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  const auto read = [&](const std::string& text) {
    return cylzone::read_points(folder.write("n.obj", text));
  };
  // Every vertex named with a normal by some face corner, relative and v/t/n forms included.
  const PointCloud all = read("v 1 0 0\nv 0 1 0\nv 0 0 1\nvt 0 0\nvn 0 0 2\nvn 0 3 0\n"
                              "f -3//1 -2/1/2 -1//1\n");
  REQUIRE(all.has_vectors());
  CHECK(all.vectors.col(1) == Eigen::Vector3d(0, 1, 0));
  CHECK(all.vectors.col(2) == Eigen::Vector3d(0, 0, 1));
  // No faces: the n-th vn belongs to the n-th vertex when the counts match.
  CHECK(read("v 1 0 0\nv 0 1 0\nvn 1 0 0\nvn 0 1 0\n").has_vectors());
  // Otherwise some vertex would have no normal: no vectors at all, points still read.
  const PointCloud partial = read("v 1 0 0\nv 0 1 0\nv 0 0 1\nv 5 5 5\nvn 0 0 1\nf 1//1 2//1 3//1\n");
  CHECK(partial.size() == 4);
  CHECK_FALSE(partial.has_vectors());
  CHECK_FALSE(read("v 1 0 0\nv 0 1 0\nv 0 0 1\nvn 0 0 1\n").has_vectors());
  CHECK_FALSE(read("v 1 0 0\nv 0 1 0\nv 0 0 1\nvn 0 0 1\nvn 0 1 0\nvn 1 0 0\nf 1 2 3\n").has_vectors());
}

TEST_CASE("OFF and NOFF keep double coordinates", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(15, 5);
  const PointCloud plain = cylzone::read_points(folder.write("part.off", write_off(cloud, false)));
  CHECK(plain.points == cloud.points);
  CHECK_FALSE(plain.has_vectors());
  const PointCloud with = cylzone::read_points(folder.write("normals.off", write_off(cloud, true)));
  CHECK(with.points == cloud.points);
  REQUIRE(with.has_vectors());
  CHECK(max_relative_difference(with.vectors, normalised(cloud.normals)) <= 4e-16);
}

TEST_CASE("OFF comments, counts on the keyword line and any file name read exactly", "[read][mesh]") {
  // Geomview "OFF files": '#' starts a comment anywhere; the counts may follow the keyword on its
  // line. OpenMesh 9 misread all of these; the OFF reader is now our own.
  TemporaryFolder folder("read-mesh");
  const Eigen::Matrix3Xd expected =
      (Eigen::Matrix3Xd(3, 3) << 1, 4, 7, 2, 5, 8, 3, 6, 9.25).finished();
  for (const char* text : {"OFF\n# c\n3 0 0\n1 2 3\n4 5 6\n7 8 9.25\n",
                           "# c\nOFF\n3 0 0\n1 2 3\n4 5 6\n7 8 9.25\n",
                           "OFF\n3 0 0\n# c\n1 2 3 # trailing\n4 5 6\n7 8 9.25\n",
                           "OFF 3 1 0\n1 2 3\n4 5 6\n7 8 9.25\n3 0 1 2\n"}) {
    INFO(text);
    CHECK(cylzone::read_points(folder.write("c.off", text)).points == expected);
  }
  ReadOptions forced;
  forced.format = cylzone::PointFileFormat::off;
  CHECK(cylzone::read_points(folder.write("points.txt", "OFF\n3 0 0\n1 2 3\n4 5 6\n7 8 9.25\n"),
                             forced).points == expected);
}

TEST_CASE("binary OFF (float32, machine byte order) loads", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(6, 6);
  std::string bytes = "OFF BINARY\n";
  for (const std::int32_t count : {6, 0, 0}) put_binary(bytes, count, false);
  for (int i = 0; i < 6; ++i)
    for (int k = 0; k < 3; ++k) put_binary(bytes, static_cast<float>(cloud.points(k, i)), false);
  const PointCloud read = cylzone::read_points(folder.write("binary.off", bytes));
  CHECK(read.points == as_floats(cloud.points));
}

TEST_CASE("ASCII and binary STL: the distinct facet corners become points", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(12, 7);  // 10 fan triangles, 30 corners, 12 vertices
  const auto expected = sorted_columns(as_floats(cloud.points));
  for (const bool binary : {false, true}) {
    INFO("binary " << binary);
    const PointCloud read = cylzone::read_points(folder.write("part.stl", write_stl(cloud, binary)));
    CHECK(read.size() == 12);
    CHECK(sorted_columns(read.points) == expected);
    CHECK_FALSE(read.has_vectors());  // STL has facet normals only
  }
}

TEST_CASE("a forced mesh format works under any name", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(9, 8);
  ReadOptions options;
  options.format = cylzone::PointFileFormat::ply;
  CHECK(cylzone::read_points(folder.write("scan.dat", write_ply(cloud, true, PlyEncoding::big_endian, true, true)),
                             options).points == cloud.points);
  options.format = cylzone::PointFileFormat::stl;
  CHECK(cylzone::read_points(folder.write("scan.bin", write_stl(cloud, true)), options).size() == 9);
  options.format = cylzone::PointFileFormat::obj;
  CHECK(cylzone::read_points(folder.write("scan.txt", write_obj(cloud, false)), options).points == cloud.points);
}

TEST_CASE("mesh files in inches are converted to mm", "[read][mesh]") {
  // 25.4 mm per inch exactly (international inch, 1959; common practice).
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(5, 9);
  ReadOptions inch;
  inch.unit = cylzone::LengthUnit::inch;
  const PointCloud read =
      cylzone::read_points(folder.write("scan.ply", write_ply(cloud, true, PlyEncoding::ascii, true, false)), inch);
  CHECK(read.file_unit == cylzone::LengthUnit::inch);
  CHECK(read.points == cloud.points * 25.4);
  CHECK(max_relative_difference(read.vectors, normalised(cloud.normals)) <= 4e-16);
}

// ====================================================================== bad input

namespace {

struct BadMesh {
  std::string name;
  std::string bytes;
  std::size_t line;
  std::string problem;
  std::optional<cylzone::PointFileFormat> format = std::nullopt;
};

std::vector<BadMesh> bad_meshes() {
  const Cloud cloud = random_cloud(10, 10);
  const std::string binary_ply = write_ply(cloud, false, PlyEncoding::little_endian, true, true);
  const std::string ascii_ply = write_ply(cloud, false, PlyEncoding::ascii, true, false);
  const std::size_t header_end = binary_ply.find("end_header\n") + 11;
  const std::string ascii_header = ascii_ply.substr(0, ascii_ply.find("end_header\n") + 11);
  // Vertex k (1-based) of the ASCII file is on line header_lines + k.
  const auto header_lines = static_cast<std::size_t>(std::count(ascii_header.begin(), ascii_header.end(), '\n'));
  std::string ascii_nan = ascii_header;
  ascii_nan += "1 2 3 7\n4 nan 6 7\n";
  ascii_nan.replace(ascii_nan.find("vertex 10"), 9, "vertex 2");
  std::string binary_nan = binary_ply;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  std::memcpy(&binary_nan[header_end + 3 * 25 + 8], &nan, sizeof nan);  // vertex 4, y
  std::string zero_normal =
      "ply\nformat ascii 1.0\nelement vertex 2\nproperty float x\nproperty float y\n"
      "property float z\nproperty float nx\nproperty float ny\nproperty float nz\nend_header\n"
      "1 2 3 0 0 1\n4 5 6 0 0 0\n";
  const std::string binary_stl = write_stl(cloud, true);
  const std::string ascii_stl = write_stl(cloud, false);
  std::mt19937_64 rng(11);
  std::string noise(3000, '\0');
  for (char& c : noise) c = static_cast<char>(rng() & 0xff);

  return {
      // PLY
      {"cut-vertices.ply", binary_ply.substr(0, header_end + 5 * 25 + 7), 0,
       "binary little-endian PLY data ends in vertex 6 of 10 (truncated?)"},
      // Cut in the last face: the structure scan walks every element, so OpenMesh never sees it.
      {"cut-faces.ply", binary_ply.substr(0, binary_ply.size() - 6), 0,
       "binary little-endian PLY data ends in face 8 of 8 (truncated?)"},
      {"cut-ascii.ply", ascii_ply.substr(0, ascii_ply.size() - 30), header_lines + 10,
       "ASCII PLY data ends in vertex 10 of 10 (truncated?)"},
      {"cut-header.ply", ascii_ply.substr(0, 60), 4, "unknown PLY header keyword 'el'"},
      {"no-end-header.ply", ascii_header.substr(0, ascii_header.size() - 11), header_lines - 1,
       "PLY header has no 'end_header' line"},
      {"no-vertex.ply", "ply\nformat ascii 1.0\nelement point 1\nproperty float x\nend_header\n1\n", 0,
       "PLY file has no 'vertex' element"},
      {"no-z.ply", "ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\nproperty float y\nend_header\n1 2\n",
       0, "PLY vertex element has no property 'z'"},
      {"not-ply.ply", "solid nothing\nendsolid\n", 1, "not a PLY file"},
      {"noise.ply", noise, 1, "not a PLY file"},
      {"nan.ply", ascii_nan, header_lines + 2, "ASCII PLY vertex 2: property 'y' is NaN or infinite: 'nan'"},
      {"nan-binary.ply", binary_nan, 0, "binary little-endian PLY vertex 4 has a NaN or infinite coordinate"},
      {"zero.ply", "ply\nformat ascii 1.0\nelement vertex 0\nproperty float x\nproperty float y\n"
                   "property float z\nend_header\n", 0, "declares 0 vertices"},
      {"huge.ply", "ply\nformat binary_little_endian 1.0\nelement vertex 4000000000\nproperty float x\n"
                   "property float y\nproperty float z\nend_header\n" + std::string(24, '\0'), 3,
       "declares 4000000000 vertices but only 24 bytes"},
      {"zero-normal.ply", zero_normal, 12, "vertex 2 has a zero-length normal"},
      {"unknown-type.ply", "ply\nformat ascii 1.0\nelement vertex 1\nproperty float128 x\nend_header\n", 4,
       "unknown PLY property type 'float128'"},
      {"empty.ply", "", 0, "the file is empty"},
      // Valid PLY that OpenMesh 9 misreads (a list property outside the face element).
      {"vertex-list.ply", "ply\nformat ascii 1.0\nelement vertex 2\nproperty double x\nproperty double y\n"
                          "property double z\nproperty list uchar float k\nend_header\n"
                          "0.5 -1 2 2 7 7\n1 2 3 0\n", 10,
       "ASCII PLY vertex 2: coordinate read as 7 by OpenMesh but 1 by the structure "
       "scan (OpenMesh's PLY reader supports list properties only in the face element)"},
      // OBJ
      {"noise.obj", noise, 0, "looks like binary data; not OBJ text"},
      {"short.obj", "v 1 2 3\nv 4 5\n", 2, "OBJ vertex 2 needs x y z, found 2 values"},
      {"nan.obj", "# c\nv 1 2 3\nv 4 5 inf\n", 3, "OBJ vertex 2: z is NaN or infinite: 'inf'"},
      {"novertex.obj", "# only normals\nvn 0 0 1\n", 0, "no points: the OBJ file has no 'v' lines"},
      {"empty.obj", "", 0, "the file is empty"},
      // OFF
      {"cut.off", "OFF\n3 0 0\n1 2 3\n4 5 6\n", 4, "OFF file ends after 2 of 3 vertices (truncated?)"},
      {"short.off", "OFF\n3 0 0\n1 2 3\n4 5\n7 8 9\n", 4, "OFF vertex 2 has 2 values, needs x y z"},
      {"nan.off", "OFF\n# comment\n2 0 0\n1 2 3\nnan 5 6\n", 5, "ASCII OFF vertex 2: x is NaN or infinite"},
      {"not.off", "ply\n3 0 0\n", 1, "not an OFF file: it starts with 'ply'"},
      {"noise.off", noise, 0, "looks like binary data; not OFF"},
      {"zero.off", "OFF\n0 0 0\n", 2, "declares 0 vertices"},
      {"face-index.off", "OFF\n3 1 0\n1 2 3\n4 5 6\n7 8 9\n3 0 1 3\n", 6,
       "OFF face 1: vertex index '3' is not one of 0..2"},
      {"face-short.off", "OFF\n3 1 0\n1 2 3\n4 5 6\n7 8 9\n3 0 1\n", 6,
       "OFF face 1 must start with its number of corners"},
      {"faces-cut.off", "OFF\n3 2 0\n1 2 3\n4 5 6\n7 8 9\n3 0 1 2\n", 6,
       "OFF file ends after 1 of 2 faces (truncated?)"},
      // STL
      {"cut.stl", binary_stl.substr(0, binary_stl.size() - 20), 0,
       "binary STL header declares 8 facets (484 bytes) but the file has 464 bytes"},
      {"cut-ascii.stl", ascii_stl.substr(0, ascii_stl.size() / 2), 0,
       "ASCII STL does not end with an 'endsolid' line (truncated?)"},
      {"tiny.stl", "abc", 0, "not an STL file"},
      {"empty.stl", "", 0, "the file is empty"},
      {"no-facets.stl", std::string(80, 'h') + std::string(4, '\0'), 0, "the binary STL has 0 facets"},
      {"nan.stl", "solid s\nfacet normal 0 0 1\nouter loop\nvertex 0 0 0\nvertex 1 0 nan\nvertex 0 1 0\n"
                  "endloop\nendfacet\nendsolid s\n", 5, "ASCII STL facet corner 2: z is NaN or infinite: 'nan'"},
  };
}

}  // namespace

TEST_CASE("bad mesh files give one InputError naming file, line and problem", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  for (const BadMesh& bad : bad_meshes()) {
    INFO("file " << bad.name);
    const fs::path file = folder.write(bad.name, bad.bytes);
    ReadOptions options;
    options.format = bad.format;
    expect_input_error([&] { cylzone::read_points(file, options); }, file.string(), bad.line,
                       bad.problem);
  }
}

TEST_CASE("nothing reaches the terminal while meshes are read, good or bad", "[read][mesh]") {
  TemporaryFolder folder("read-mesh");
  const Cloud cloud = random_cloud(10, 12);
  std::vector<fs::path> files;
  for (const BadMesh& bad : bad_meshes()) files.push_back(folder.write(bad.name, bad.bytes));
  // Faces OpenMesh refuses (a repeated vertex, an index out of range) make it complain on its
  // log stream while the vertices still load.
  files.push_back(folder.write("odd-faces.ply",
                               "ply\nformat ascii 1.0\nelement vertex 3\nproperty float x\nproperty float y\n"
                               "property float z\nelement face 2\nproperty list uchar int vertex_indices\n"
                               "end_header\n0 0 0\n1 0 0\n0 1 0\n3 0 0 1\n3 0 1 9\n"));
  files.push_back(folder.write("good.ply", write_ply(cloud, true, PlyEncoding::big_endian, true, true)));
  files.push_back(folder.write("good.obj", write_obj(cloud, true)));
  files.push_back(folder.write("good.stl", write_stl(cloud, false)));

  std::vector<std::string> outcomes;
  std::string printed;
  {
    TerminalCapture capture(folder.path() / "terminal.txt");
    for (const fs::path& file : files) {
      try {
        outcomes.push_back("read " + std::to_string(cylzone::read_points(file).size()));
      } catch (const cylzone::InputError& e) {
        outcomes.push_back(std::string("InputError ") + e.what());
      } catch (const std::exception& e) {
        outcomes.push_back(std::string("other exception ") + e.what());
      }
    }
    printed = capture.release();
  }
  CHECK(printed.empty());
  INFO("printed: " << printed);
  REQUIRE(outcomes.size() == files.size());
  const std::size_t bad_count = bad_meshes().size();
  for (std::size_t i = 0; i < outcomes.size(); ++i) {
    INFO(files[i].filename().string() << ": " << outcomes[i]);
    CHECK(outcomes[i].rfind(i < bad_count ? "InputError " : "read ", 0) == 0);
  }
  CHECK(outcomes[outcomes.size() - 4] == "read 3");
}

// ====================================================================== hostile input

TEST_CASE("a mesh is parsed from the bytes given, never from the file again", "[read][mesh]") {
  // The caller hashes exactly these bytes: a path that does not exist must not matter.
  const Cloud cloud = random_cloud(7, 21);
  ReadOptions options;
  for (const auto& [format, bytes] :
       {std::pair{cylzone::PointFileFormat::ply, write_ply(cloud, true, PlyEncoding::little_endian, true, true)},
        std::pair{cylzone::PointFileFormat::obj, write_obj(cloud, false)},
        std::pair{cylzone::PointFileFormat::off, write_off(cloud, false)}}) {
    const PointCloud read = cylzone::detail::read_mesh_points("/nonexistent/dir/x.mesh", bytes, format,
                                                              options, "memory");
    CHECK(read.points == cloud.points);
  }
  const PointCloud stl = cylzone::detail::read_mesh_points(
      "/nonexistent/dir/x.mesh", write_stl(cloud, true), cylzone::PointFileFormat::stl, options, "memory");
  CHECK(sorted_columns(stl.points) == sorted_columns(as_floats(cloud.points)));
}

namespace {

std::string le_double_bytes(std::initializer_list<double> values) {
  std::string out;
  for (const double v : values) put_binary(out, v, false);
  return out;
}

const std::string xyz_double = "property double x\nproperty double y\nproperty double z\n";

}  // namespace

TEST_CASE("hostile meshes are refused before anything is allocated or handed on", "[read][mesh]") {
  // Each case once crashed, hung, exhausted memory or returned NaN; the layouts follow the format
  // descriptions named at the top of this file.
  TemporaryFolder folder("read-mesh");
  const std::string huge = "18446744073709551615";  // 2^64 - 1
  std::string nan_count_face = "ply\nformat binary_little_endian 1.0\nelement vertex 1\n" + xyz_double +
                               "element face 1\nproperty list float int vertex_indices\nend_header\n" +
                               le_double_bytes({1, 2, 3});
  put_binary(nan_count_face, std::numeric_limits<float>::quiet_NaN(), false);
  nan_count_face += std::string(12, '\0');
  std::string binary_off_faces = "OFF BINARY\n";
  for (const std::int32_t count : {3, 2000000000, 0}) put_binary(binary_off_faces, count, false);
  for (int k = 0; k < 9; ++k) put_binary(binary_off_faces, static_cast<float>(k % 2), false);
  std::string nan_normal = "ply\nformat binary_little_endian 1.0\nelement vertex 1\n" + xyz_double +
                           "property double nx\nproperty double ny\nproperty double nz\nend_header\n" +
                           le_double_bytes({1, 2, 3, 0, std::numeric_limits<double>::quiet_NaN(), 1});
  const std::vector<BadMesh> cases = {
      {"nan-count.ply", nan_count_face, 8, "PLY list count type 'float' is not an integer type"},
      {"corner.obj", "v 0 8 1\nf /5\n", 2, "OBJ face has 1 corners, needs at least 3"},
      {"corner3.obj", "v 0 8 1\nf /5 1 1\n", 2, "OBJ face corner '/5' names no vertex"},
      {"ahead.obj", "v 0 0 0\nf 1 2 3\nv 1 0 0\nv 0 1 0\n", 2,
       "OBJ face corner '2' names no vertex among the 1 defined before it"},
      {"empty-element.ply",
       "ply\nformat ascii 1.0\nelement junk " + huge + "\nelement vertex 1\nproperty float x\n"
       "property float y\nproperty float z\nend_header\n1 2 3\n",
       3, "PLY element 'junk' declares 18446744073709551615 items but no properties"},
      {"empty-element-cloud.ply",
       "ply\nformat binary_little_endian 1.0\nelement junk 0\nelement vertex 1\n" + xyz_double +
           "property double w\nend_header\n" + le_double_bytes({1, 2}),
       0, "binary little-endian PLY data ends in vertex 1 of 1 (truncated?)"},
      {"empty-element-binary.ply",
       "ply\nformat binary_little_endian 1.0\nelement junk " + huge + "\nelement vertex 1\n" + xyz_double +
           "end_header\n" + le_double_bytes({1, 2, 3}),
       3, "PLY element 'junk' declares 18446744073709551615 items but no properties"},
      {"version.ply", "ply\nformat ascii x\nelement vertex 1\nproperty float x\nend_header\n1\n", 2,
       "PLY format version 'x' is not supported (only 1.0)"},
      {"faces.ply",
       "ply\nformat binary_little_endian 1.0\nelement vertex 1\n" + xyz_double + "element face " + huge +
           "\nproperty list uchar int vertex_indices\nend_header\n" + le_double_bytes({1, 2, 3}),
       7, "PLY header declares 18446744073709551615 'face' items but only 24 bytes of data follow"},
      {"faces.off", "OFF\n3 2000000000 0\n0 0 0\n1 0 0\n0 1 0\n", 2,
       "OFF header declares 2000000000 faces but only"},
      {"faces-binary.off", binary_off_faces, 0, "binary OFF declares 2000000000 faces but only 0 bytes"},
      {"missing-ny.ply",
       "ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\nproperty float y\nproperty float z\n"
       "property float nx\nproperty float nz\nend_header\n1 2 3 0 1\n",
       3, "PLY vertex element has normal components 'nx' 'nz' but no 'ny'"},
      {"nan-normal.ply", nan_normal, 0,
       "binary little-endian PLY vertex 1 has a NaN or infinite normal component"},
      {"float-range.ply",
       "ply\nformat ascii 1.0\nelement vertex 2\nproperty float x\nproperty float y\nproperty float z\n"
       "end_header\n0 0 0\n0 1e308 0\n",
       9, "ASCII PLY vertex 2: property 'y' is declared float but holds '1e308'"},
      {"float-count.ply", "ply\nformat ascii 1.0\nelement vertex 1e3\nend_header\n", 3,
       "PLY 'element' line needs a name and a count"},
      // Found by fuzzing: OpenMesh reads OBJ values as float and skips one it cannot hold, so
      // its faces then wrote normals past its vertices (heap overflow).
      {"float-overflow.obj", "v 0 0 0\nv " + std::string(120, '3') + " 0 0\nv 0 1 0\nvn 0 0 1\nf 1//1 2//1 3//1\n",
       2, "OBJ vertex 2: x '3333333333333333333333333333333333333333...' is beyond the range of a float"},
      {"int-range.ply",
       "ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\nproperty float y\nproperty float z\n"
       "property uchar q\nend_header\n1 2 3 256\n",
       9, "ASCII PLY vertex 1: property 'q' '256' is outside the range of its type (0 to 255)"},
      {"ascii-word.ply",
       "ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\nproperty float y\nproperty float z\n"
       "property float q\nend_header\n1 2 3 abc\n",
       9, "ASCII PLY vertex 1: property 'q' is not a number: 'abc'"},
  };
  for (const BadMesh& bad : cases) {
    INFO("file " << bad.name);
    const fs::path file = folder.write(bad.name, bad.bytes);
    expect_input_error([&] { cylzone::read_points(file); }, file.string(), bad.line, bad.problem);
  }
}
