// Reading speed of read_points on a large probe export: a 1,000,000-point CSV ("x,y,z" with 10
// significant digits, about 36 MB) and the same cloud as a binary little-endian PLY (float64).
// Each file is written to the temporary directory, read 5 times (best and median reported) and
// removed. For scale, a bare std::from_chars loop over the same CSV bytes is timed too: it is
// the floor any delimited reader built on from_chars can reach on this machine. Wall-clock
// figures suffer when other processes share the cores; the CPU time does much less.
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
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "bench_timing.hpp"
#include "cylzone/io/read_points.hpp"

namespace fs = std::filesystem;

namespace {

using cylzone::bench::Timing;
using cylzone::bench::time_runs;

void report(const char* what, std::size_t points, std::size_t bytes, const Timing& t) {
  const double mb = static_cast<double>(bytes) / 1e6;
  std::printf("%-34s %8zu points %6.1f MB  best %6.1f ms  median %6.1f ms  %5.0f MB/s  (cpu %6.1f ms)\n",
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

}  // namespace

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? std::strtoull(argv[1], nullptr, 10) : 1000000;
  const int runs = 5;
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> coordinate(-400.0, 400.0);

  const fs::path folder = fs::temp_directory_path();
  const std::string stem = "cylzone-bench-read-" + std::to_string(std::random_device()());
  const fs::path csv = folder / (stem + ".csv");
  const fs::path ply = folder / (stem + ".ply");

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
    std::ofstream(csv, std::ios::binary) << text;
    std::string header = "ply\nformat binary_little_endian 1.0\nelement vertex " +
                         std::to_string(n) +
                         "\nproperty double x\nproperty double y\nproperty double z\nend_header\n";
    std::ofstream out(ply, std::ios::binary);
    out << header;
    out.write(reinterpret_cast<const char*>(xyz.data()), static_cast<std::streamsize>(xyz.size() * sizeof(double)));
  }

  int status = 0;
  try {
    std::size_t points = 0;
    const Timing csv_time = time_runs(runs, [&] { points = cylzone::read_points(csv).size(); });
    report("read_points, CSV", points, fs::file_size(csv), csv_time);

    const std::string bytes = read_file(csv);
    std::vector<double> values;
    values.reserve(3 * n);
    const Timing bare = time_runs(runs, [&] { points = bare_from_chars(bytes, values); });
    report("bare from_chars loop (in memory)", points, bytes.size(), bare);

    const Timing ply_time = time_runs(runs, [&] { points = cylzone::read_points(ply).size(); });
    report("read_points, binary PLY (float64)", points, fs::file_size(ply), ply_time);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "bench_read_points: %s\n", e.what());
    status = 1;
  }
  std::error_code ec;
  fs::remove(csv, ec);
  fs::remove(ply, ec);
  return status;
}
