// Benchmark: least-squares cylinder on 1e3 .. 1e6 points of a tilted bore off the origin (full
// circle, random angles and heights, 1 um Gaussian radial noise, fixed seed). Prints one line
// per size: points, best and median wall time of several runs, and ns per point; the same
// geometry is timed with scipy by bench/scipy_fit_cylinder.py (bench/run_benchmarks.sh runs both).
// Columns floor_ms and ratio: a hand-written Gauss-Newton fit with nothing but the iterations
// (gauss_newton_floor below) on the same points, and the library's best time over it.
//
//   bench_fit_cylinder [--sizes 1000,10000,...] [--runs N]
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <random>
#include <ctime>
#include <string>
#include <vector>

#include <Eigen/Eigenvalues>
#include <Eigen/Geometry>

#include "cylzone/fit/fit_cylinder.hpp"

namespace {

constexpr double pi = 3.14159265358979323846;

struct Bore {
  Eigen::Vector3d point{412.5, -237.25, 88.0};  // mm
  Eigen::Vector3d direction;
  double radius = 12.5;
  double length = 40.0;
  double noise = 0.001;  // 1 um
};

Eigen::Matrix3Xd make_bore(const Bore& bore, Eigen::Index n, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  std::normal_distribution<double> gauss(0.0, 1.0);
  const Eigen::Vector3d w = bore.direction.normalized();
  const Eigen::Vector3d u = w.cross(Eigen::Vector3d::UnitZ()).normalized();
  const Eigen::Vector3d v = w.cross(u);
  Eigen::Matrix3Xd p(3, n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const double a = 2.0 * pi * unit(rng);
    const double t = bore.length * unit(rng);
    const double r = bore.radius + bore.noise * gauss(rng);
    p.col(i) = bore.point + t * w + r * (std::cos(a) * u + std::sin(a) * v);
  }
  return p;
}

// CPU time of the whole process (all threads), in ms: on a shared machine it shows the work
// done, where the wall time also shows the waiting for a core.
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

/// The floor: a hand-written Gauss-Newton least-squares cylinder with nothing but the
/// iterations (Forbes 1989, NPL DITC 140/89, section 6: the same parameters, shift and tilt of
/// the axis in its own frame and the radius). One start (the principal axis of largest spread,
/// right for this long bore, the radius the mean distance from it), one pass per iteration
/// building J^T J and J^T d, a 5x5 LDLT solve, stopped when the step is below 1e-12 mm. No
/// degeneracy checks, no multiple starts, no residual statistics, coverage or covariance: what
/// any least-squares cylinder must at least spend.
struct FloorFit {
  Eigen::Vector3d point, direction;
  double radius = 0.0;
};

FloorFit gauss_newton_floor(const Eigen::Matrix3Xd& p) {
  using Matrix5d = Eigen::Matrix<double, 5, 5>;
  using Vector5d = Eigen::Matrix<double, 5, 1>;
  const Eigen::Index n = p.cols();
  const Eigen::Vector3d c = p.rowwise().mean();
  Eigen::Matrix3d scatter = Eigen::Matrix3d::Zero();
  for (Eigen::Index i = 0; i < n; ++i) scatter.noalias() += (p.col(i) - c) * (p.col(i) - c).transpose();
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> eigen(scatter);
  FloorFit f{c, eigen.eigenvectors().col(2), 0.0};
  for (Eigen::Index i = 0; i < n; ++i) {
    const Eigen::Vector3d d = p.col(i) - c;
    f.radius += (d - d.dot(f.direction) * f.direction).norm();
  }
  f.radius /= static_cast<double>(n);
  for (int iteration = 0; iteration < 50; ++iteration) {
    const Eigen::Vector3d u = f.direction.unitOrthogonal(), v = f.direction.cross(u);
    // The 15 distinct sums of J^T J and the 5 of J^T d in plain scalars, one pass (the
    // Jacobian row (-x/rho, -y/rho, -x z/rho, -y z/rho, -1) needs only a, b, z).
    double s_aa = 0, s_ab = 0, s_bb = 0, s_aaz = 0, s_abz = 0, s_bbz = 0, s_aazz = 0, s_abzz = 0,
           s_bbzz = 0, s_a = 0, s_b = 0, s_az = 0, s_bz = 0, t_a = 0, t_b = 0, t_az = 0, t_bz = 0,
           t = 0;
    const double* xyz = p.data();
    for (Eigen::Index i = 0; i < n; ++i, xyz += 3) {
      const double dx = xyz[0] - f.point.x(), dy = xyz[1] - f.point.y(), dz = xyz[2] - f.point.z();
      const double x = dx * u.x() + dy * u.y() + dz * u.z();
      const double y = dx * v.x() + dy * v.y() + dz * v.z();
      const double z = dx * f.direction.x() + dy * f.direction.y() + dz * f.direction.z();
      const double rho = std::sqrt(x * x + y * y), a = x / rho, b = y / rho, r = rho - f.radius;
      s_aa += a * a, s_ab += a * b, s_bb += b * b;
      s_aaz += a * a * z, s_abz += a * b * z, s_bbz += b * b * z;
      s_aazz += a * a * z * z, s_abzz += a * b * z * z, s_bbzz += b * b * z * z;
      s_a += a, s_b += b, s_az += a * z, s_bz += b * z;
      t_a += a * r, t_b += b * r, t_az += a * z * r, t_bz += b * z * r, t += r;
    }
    Matrix5d jtj;
    jtj << s_aa, s_ab, s_aaz, s_abz, s_a,  //
        s_ab, s_bb, s_abz, s_bbz, s_b,      //
        s_aaz, s_abz, s_aazz, s_abzz, s_az,  //
        s_abz, s_bbz, s_abzz, s_bbzz, s_bz,  //
        s_a, s_b, s_az, s_bz, static_cast<double>(n);
    Vector5d jtd;
    jtd << -t_a, -t_b, -t_az, -t_bz, -t;
    const Vector5d step = -jtj.ldlt().solve(jtd);
    f.point += step(0) * u + step(1) * v;
    f.direction = (f.direction + step(2) * u + step(3) * v).normalized();
    f.radius += step(4);
    if (step.head<2>().norm() + step.segment<2>(2).norm() * 40.0 + std::abs(step(4)) < 1e-12) break;
  }
  return f;
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<Eigen::Index> sizes = {1000, 10000, 100000, 1000000};
  int runs = 0;
  for (int i = 1; i < argc; ++i) {
    if (!std::strcmp(argv[i], "--sizes") && i + 1 < argc) {
      sizes.clear();
      for (char* s = std::strtok(argv[++i], ","); s; s = std::strtok(nullptr, ","))
        sizes.push_back(std::atol(s));
    } else if (!std::strcmp(argv[i], "--runs") && i + 1 < argc) {
      runs = std::atoi(argv[++i]);
    } else {
      std::fprintf(stderr, "usage: bench_fit_cylinder [--sizes N,N,...] [--runs N]\n");
      return 2;
    }
  }
  Bore bore;
  bore.direction = Eigen::Vector3d(std::sin(0.12) * std::cos(0.6), std::sin(0.12) * std::sin(0.6),
                                   std::cos(0.12));
  std::printf("# least-squares cylinder, tilted bore off the origin, 1 um noise\n");
  std::printf("# %10s %10s %10s %10s %12s %12s %12s %10s %8s\n", "points", "best_ms", "median_ms",
              "ns/point", "cpu_med_ms", "axis_err_mm", "radius_err_mm", "floor_ms", "ratio");
  for (const Eigen::Index n : sizes) {
    const Eigen::Matrix3Xd points = make_bore(bore, n, 20240611u + static_cast<std::uint64_t>(n));
    const int repeat = runs > 0 ? runs : (n >= 1000000 ? 9 : n >= 100000 ? 15 : 41);
    std::vector<double> ms, cpu;
    cylzone::CylinderFit fit;
    for (int r = 0; r < repeat; ++r) {
      const double c0 = process_cpu_ms();
      const auto t0 = std::chrono::steady_clock::now();
      fit = cylzone::fit_cylinder_least_squares(points);
      const auto t1 = std::chrono::steady_clock::now();
      cpu.push_back(process_cpu_ms() - c0);
      ms.push_back(std::chrono::duration<double, std::milli>(t1 - t0).count());
    }
    std::vector<double> floor_ms;
    FloorFit floor;
    for (int r = 0; r < repeat; ++r) {
      const auto t0 = std::chrono::steady_clock::now();
      floor = gauss_newton_floor(points);
      floor_ms.push_back(std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - t0).count());
    }
    if (std::abs(floor.radius - fit.radius) > 1e-9) {
      std::fprintf(stderr, "bench_fit_cylinder: the floor fit disagrees (radius %.12f, %.12f)\n",
                   floor.radius, fit.radius);
      return 1;
    }
    const double floor_best = *std::min_element(floor_ms.begin(), floor_ms.end());
    // Sanity, not a test: distance of the true axis point from the fitted axis, radius error.
    const Eigen::Vector3d d = bore.point - fit.axis.point;
    const double axis_err = (d - d.dot(fit.axis.direction) * fit.axis.direction).norm();
    const double best = *std::min_element(ms.begin(), ms.end());
    std::printf("  %10ld %10.3f %10.3f %10.2f %12.3f %12.2e %12.2e %10.3f %7.2fx\n",
                static_cast<long>(n), best, median(ms), 1e6 * best / static_cast<double>(n),
                median(cpu), axis_err, std::abs(fit.radius - bore.radius), floor_best,
                best / floor_best);
  }
  return 0;
}
