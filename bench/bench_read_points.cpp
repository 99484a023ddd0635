// Reading speed of the point readers on a large probe export: a 1,000,000-point CSV ("x,y,z"
// with 10 significant digits, about 37 MB) and the same cloud as binary PLY (float64 little- and
// big-endian, with normals, and float32). Each file is written to the temporary directory, read
// 5 times (best and median reported) and removed. Three figures per file:
//  - "read_points": load() (one read into a buffer) and the parse, as `cylzone fit` reads a file;
//  - "+ SHA-256": load, SHA-256 of that buffer and the parse, as a part check reads each input
//    (check/part_inputs.cpp): the input's whole cost;
//  - "load only": load(), the one read of the file into a fresh buffer;
//  - "parse only": parse_points() on bytes already in memory.
// For scale: SHA-256 alone (OpenSSL; the floor of the hashed read), memcpy of the bytes (the
// floor of a binary PLY of doubles: it is a copy), and a bare std::from_chars loop over the CSV
// bytes (the floor any delimited reader built on from_chars can reach on this machine).
// Wall-clock figures suffer when other processes share the cores; the CPU time does much less.
//
// Usage: bench_read_points [points]   (default 1000000)
#include <algorithm>
#include <charconv>
#include <chrono>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <functional>
#include <memory>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "bench_timing.hpp"
#include "cylzone/io/load.hpp"
#include "cylzone/io/read_points.hpp"
#include "io/detail/file_digest.hpp"

namespace fs = std::filesystem;

namespace {

using cylzone::bench::Timing;
using cylzone::bench::time_runs;

void report(const char* what, std::size_t points, std::size_t bytes, const Timing& t) {
  const double mb = static_cast<double>(bytes) / 1e6;
  std::printf("%-40s %8zu points %6.1f MB  best %6.1f ms  median %6.1f ms  %5.0f MB/s  (cpu %6.1f ms)\n",
              what, points, mb, t.best_ms, t.median_ms, mb / (t.best_ms / 1e3), t.best_cpu_ms);
}

std::string read_file(const fs::path& file) {
  std::ifstream in(file, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

/// A bare from_chars pass over the CSV: no checks, no header, no comments, no messages.
std::size_t bare_from_chars(const std::string& text, std::vector<double>& out) {
  out.clear();
  const char* p = text.data();
  const char* const end = p + text.size();
  while (p < end) {
    double v = 0.0;
    const auto r = std::from_chars(p, end, v);
    if (r.ec != std::errc()) break;
    out.push_back(v);
    p = r.ptr + 1;  // skip ',' or '\n'
  }
  return out.size() / 3;
}

template <class T>
void put(std::string& out, T value, bool big_endian) {
  unsigned char b[sizeof(T)];
  std::memcpy(b, &value, sizeof(T));
  if (big_endian) std::reverse(b, b + sizeof(T));  // x86-64 is little-endian
  out.append(reinterpret_cast<const char*>(b), sizeof(T));
}

/// A binary PLY cloud (Turk's format description): x y z [nx ny nz] of one type per vertex.
template <class T>
std::string ply_cloud(const std::vector<double>& xyz, bool normals, bool big_endian) {
  const std::size_t n = xyz.size() / 3;
  const char* type = sizeof(T) == 8 ? "double" : "float";
  std::string out = std::string("ply\nformat ") +
                    (big_endian ? "binary_big_endian" : "binary_little_endian") +
                    " 1.0\nelement vertex " + std::to_string(n) + "\n";
  for (const char* name : {"x", "y", "z", "nx", "ny", "nz"}) {
    if (!normals && name[0] == 'n') break;
    out += std::string("property ") + type + " " + name + "\n";
  }
  out += "end_header\n";
  out.reserve(out.size() + n * (normals ? 6 : 3) * sizeof(T));
  for (std::size_t i = 0; i < n; ++i) {
    for (int k = 0; k < 3; ++k) put(out, static_cast<T>(xyz[3 * i + k]), big_endian);
    if (normals)
      for (int k = 0; k < 3; ++k) put(out, static_cast<T>(k == 2 ? 1.0 : 0.0), big_endian);
  }
  return out;
}

struct Input {
  const char* label;
  fs::path file;
};

void time_input(const Input& input, int runs) {
  std::size_t points = 0;
  const std::size_t size = fs::file_size(input.file);
  const std::string label = input.label;
  const Timing read = time_runs(runs, [&] { points = cylzone::read_points(input.file).size(); });
  report((label + ", read_points").c_str(), points, size, read);
  const auto format = cylzone::format_from_extension(input.file);
  const Timing hashed = time_runs(runs, [&] {
    const cylzone::LoadedFile loaded = cylzone::load(input.file);
    const std::string digest = cylzone::detail::sha256_of_bytes(loaded.bytes());
    points = cylzone::parse_points(loaded.bytes(), input.file.string(), format).size();
    if (digest.size() != 64) std::abort();
  });
  report((label + ", read + SHA-256").c_str(), points, size, hashed);
  const Timing load = time_runs(runs, [&] {
    if (cylzone::load(input.file).bytes().size() != size) std::abort();
  });
  report((label + ", load only").c_str(), points, size, load);
  const std::string bytes = read_file(input.file);
  const Timing parse = time_runs(runs, [&] {
    points = cylzone::parse_points(bytes, input.file.string(), format).size();
  });
  report((label + ", parse only").c_str(), points, size, parse);
}

}  // namespace

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? std::strtoull(argv[1], nullptr, 10) : 1000000;
  const int runs = 5;
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> coordinate(-400.0, 400.0);

  const fs::path folder = fs::temp_directory_path();
  const std::string stem = "cylzone-bench-read-" + std::to_string(std::random_device()());
  const std::vector<Input> inputs = {
      {"CSV", folder / (stem + ".csv")},
      {"PLY float64 LE", folder / (stem + "-le.ply")},
      {"PLY float64 LE + normals", folder / (stem + "-normals.ply")},
      {"PLY float64 BE", folder / (stem + "-be.ply")},
      {"PLY float32 LE", folder / (stem + "-f32.ply")},
  };

  std::vector<double> xyz(3 * n);
  for (double& v : xyz) v = coordinate(rng);
  {
    std::string text;
    text.reserve(n * 40);
    char line[96];
    for (std::size_t i = 0; i < n; ++i) {
      const int len = std::snprintf(line, sizeof line, "%.10g,%.10g,%.10g\n", xyz[3 * i],
                                    xyz[3 * i + 1], xyz[3 * i + 2]);
      text.append(line, static_cast<std::size_t>(len));
    }
    std::ofstream(inputs[0].file, std::ios::binary) << text;
    std::ofstream(inputs[1].file, std::ios::binary) << ply_cloud<double>(xyz, false, false);
    std::ofstream(inputs[2].file, std::ios::binary) << ply_cloud<double>(xyz, true, false);
    std::ofstream(inputs[3].file, std::ios::binary) << ply_cloud<double>(xyz, false, true);
    std::ofstream(inputs[4].file, std::ios::binary) << ply_cloud<float>(xyz, false, false);
  }

  int status = 0;
  try {
    for (const Input& input : inputs) time_input(input, runs);

    std::size_t points = 0;
    const std::string csv = read_file(inputs[0].file);
    std::vector<double> values;
    values.reserve(3 * n);
    const Timing bare = time_runs(runs, [&] { points = bare_from_chars(csv, values); });
    report("floor: bare from_chars loop over the CSV", points, csv.size(), bare);

    const std::string ply = read_file(inputs[1].file);
    const Timing hash = time_runs(runs, [&] {
      if (cylzone::detail::sha256_of_bytes(ply).size() != 64) std::abort();
    });
    report("floor: SHA-256 of the PLY bytes", n, ply.size(), hash);
    const Timing copy = time_runs(runs, [&] {
      // A fresh buffer each time, as a reader's result is: the page faults are part of a copy.
      std::unique_ptr<char[]> target(new char[ply.size()]);
      std::memcpy(target.get(), ply.data(), ply.size());
      if (target[ply.size() / 2] != ply[ply.size() / 2]) std::abort();
    });
    report("floor: memcpy of the PLY bytes", n, ply.size(), copy);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "bench_read_points: %s\n", e.what());
    status = 1;
  }
  std::error_code ec;
  for (const Input& input : inputs) fs::remove(input.file, ec);
  return status;
}
