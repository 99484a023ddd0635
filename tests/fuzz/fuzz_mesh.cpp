// libFuzzer target: the mesh readers (PLY, OBJ, OFF, STL). The first byte chooses the format
// (its value modulo 4); the rest is the file's content.
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "cylzone/io/read_points.hpp"
#include "fuzz_contract.hpp"
#include "io/detail/read_mesh.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size == 0) return 0;
  using cylzone::PointFileFormat;
  static const PointFileFormat formats[] = {PointFileFormat::ply, PointFileFormat::obj,
                                            PointFileFormat::off, PointFileFormat::stl};
  static const char* names[] = {"fuzz.ply", "fuzz.obj", "fuzz.off", "fuzz.stl"};
  const unsigned which = data[0] % 4u;
  const std::string_view content(reinterpret_cast<const char*>(data + 1), size - 1);
  cylzone::ReadOptions options;
  options.format = formats[which];
  cylzone::fuzz::expect_contract([&] {
    cylzone::fuzz::check_cloud(cylzone::detail::read_mesh_points(
        names[which], content, formats[which], options, names[which]));
  });
  return 0;
}
