// Benchmark: Chebyshev cylinders (minimum zone, maximum inscribed, minimum circumscribed) on
// 1e3 .. 1e5 points of a tilted bore off the origin with form error: a 3 um three-lobed
// profile twisting along the bore plus 1 um Gaussian radial noise (fixed seed). Each timing
// includes the least-squares start, which is timed on its own for comparison. Prints one line
// per size and method: best and median wall time, process CPU time, linear programmes solved,
// and the largest linear programme (rows) of the constraint-generation working set.
//
//   bench_fit_chebyshev [--sizes 1000,10000,...] [--runs N]
#include <Eigen/Geometry>
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <ctime>
#include <functional>
#include <random>
#include <string>
#include <vector>

#include "cylzone/fit_cylinder.hpp"

namespace {

constexpr double pi = 3.14159265358979323846;

Eigen::Matrix3Xd make_lobed_bore(Eigen::Index n, std::uint64_t seed) {
  const Eigen::Vector3d point(-152.0, 318.5, 47.25);  // mm
  const Eigen::Vector3d w = Eigen::Vector3d(0.05, -0.03, 1.0).normalized();
  const Eigen::Vector3d u = w.cross(Eigen::Vector3d::UnitX()).normalized();
  const Eigen::Vector3d v = w.cross(u);
  const double radius = 12.5, length = 40.0, lobe = 0.003, noise = 0.001;
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::normal_distribution<double> gauss(0.0, 1.0);
  Eigen::Matrix3Xd p(3, n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const double a = 2.0 * pi * unit(rng), t = length * unit(rng);
    const double r = radius + lobe * std::cos(3.0 * a + 0.02 * t) + noise * gauss(rng);
    p.col(i) = point + t * w + r * (std::cos(a) * u + std::sin(a) * v);
  }
  return p;
}

double process_cpu_ms() {
  timespec t;
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
  return 1e3 * static_cast<double>(t.tv_sec) + 1e-6 * static_cast<double>(t.tv_nsec);
}

double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  const std::size_t m = v.size() / 2;
  return v.size() % 2 ? v[m] : 0.5 * (v[m - 1] + v[m]);
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<Eigen::Index> sizes = {1000, 10000, 100000};
  int runs = 5;
  for (int i = 1; i < argc; ++i) {
    if (!std::strcmp(argv[i], "--sizes") && i + 1 < argc) {
      sizes.clear();
      for (char* s = std::strtok(argv[++i], ","); s; s = std::strtok(nullptr, ","))
        sizes.push_back(std::atol(s));
    } else if (!std::strcmp(argv[i], "--runs") && i + 1 < argc) {
      runs = std::max(1, std::atoi(argv[++i]));
    } else {
      std::fprintf(stderr, "usage: bench_fit_chebyshev [--sizes N,N,...] [--runs N]\n");
      return 2;
    }
  }

  using Fit = std::function<cylzone::CylinderFit(const Eigen::Matrix3Xd&)>;
  const std::vector<std::pair<const char*, Fit>> methods = {
      {"least-squares", [](const Eigen::Matrix3Xd& p) { return cylzone::fit_cylinder_least_squares(p); }},
      {"minimum-zone", [](const Eigen::Matrix3Xd& p) { return cylzone::fit_cylinder_minimum_zone(p); }},
      {"max-inscribed", [](const Eigen::Matrix3Xd& p) { return cylzone::fit_cylinder_maximum_inscribed(p); }},
      {"min-circumscribed",
       [](const Eigen::Matrix3Xd& p) { return cylzone::fit_cylinder_minimum_circumscribed(p); }},
  };

  std::printf("%9s  %-17s %10s %10s %10s %5s  %s\n", "points", "method", "best ms", "median ms",
              "cpu ms", "iter", "form mm / message");
  for (Eigen::Index n : sizes) {
    const Eigen::Matrix3Xd points = make_lobed_bore(n, 42);
    for (const auto& [name, fit] : methods) {
      std::vector<double> wall;
      cylzone::CylinderFit last;
      const double cpu0 = process_cpu_ms();
      for (int r = 0; r < runs; ++r) {
        const auto t0 = std::chrono::steady_clock::now();
        last = fit(points);
        wall.push_back(std::chrono::duration<double, std::milli>(
                           std::chrono::steady_clock::now() - t0)
                           .count());
      }
      const double cpu = (process_cpu_ms() - cpu0) / runs;
      std::printf("%9ld  %-17s %10.2f %10.2f %10.2f %5d  %.6f / %s\n", static_cast<long>(n), name,
                  *std::min_element(wall.begin(), wall.end()), median(wall), cpu,
                  last.summary.iterations, last.residuals.form, last.summary.message.c_str());
    }
  }
  return 0;
}
