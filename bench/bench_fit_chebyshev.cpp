// Benchmark: Chebyshev cylinders (minimum zone, maximum inscribed, minimum circumscribed) on
// 1e3 .. 1e5 points of a tilted bore off the origin with form error: a 3 um three-lobed
// profile twisting along the bore plus 1 um Gaussian radial noise (fixed seed). Each timing
// includes the least-squares start, which is timed on its own for comparison. Prints one line
// per size and method: best and median wall time, process CPU time, linear programmes solved,
// the ambiguity (0: the optimum was proven unique at no extra cost) and the message (largest
// working set; the linear programmes spent on the ambiguity when it had to be measured).
//
// A last line per size times the costly case: the same bore with a maximum-inscribed
// cylinder that can roll (the construction of tests/test_fit_chebyshev.cpp, 0.05 mm inside
// the bore): two ridges on opposite generatrices, two pads beside one of them at mid-depth
// and two stops at the ends, so the mating envelope is not unique and its ambiguity
// (about 0.5 um) has to be walked out.
//
// A third bore times the exploration of flat optima: a bore bent in one plane (section centres
// x = 0.010 (z/40)^2 mm over 40 mm, D10, 72 points per section at equal angles, as many
// sections as the size allows, no noise), whose maximum-inscribed cylinder has two
// mirror-image optima (tests/test_chebyshev_optimum.cpp), line "max-inscribed/bent", and whose
// minimum zone is flat across the plane of the bend, so that the tie-break settles it (line
// "minimum-zone/bent").
//
// Each Chebyshev line is printed once per linear-programme solver (column "lp": Clp, the
// default, and the dense dual simplex, FitOptions::lp_solver; docs/chebyshev.md, "Solvers");
// `--solver clp` or `--solver dense` prints one, `--lean` turns the uniqueness assessment off as
// the Monte Carlo trials do.
//
//   bench_fit_chebyshev [--sizes 1000,10000,...] [--runs N] [--solver clp|dense|both] [--lean]
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

#include "cylzone/fit/fit_cylinder.hpp"

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

/// The lobed bore plus the rolling construction in its frame (pivot at mid-depth).
Eigen::Matrix3Xd make_rolling_bore(Eigen::Index n, std::uint64_t seed) {
  const Eigen::Matrix3Xd bore = make_lobed_bore(n, seed);
  const Eigen::Vector3d point(-152.0, 318.5, 47.25);
  const Eigen::Vector3d w = Eigen::Vector3d(0.05, -0.03, 1.0).normalized();
  const Eigen::Vector3d u = w.cross(Eigen::Vector3d::UnitX()).normalized();
  const Eigen::Vector3d v = w.cross(u);
  const double r = 12.45, half = 20.0, stop = 5e-4, pad = 2e-3;
  std::vector<Eigen::Vector3d> local;
  for (int k = -4; k <= 4; ++k) {
    local.emplace_back(r, 0.0, 5.0 * k);
    local.emplace_back(-r, 0.0, 5.0 * k);
  }
  local.emplace_back(r * std::cos(pad), r * std::sin(pad), 0.0);
  local.emplace_back(r * std::cos(pad), -r * std::sin(pad), 0.0);
  local.emplace_back(0.0, r + stop, half);
  local.emplace_back(0.0, r + stop, -half);
  Eigen::Matrix3Xd p(3, bore.cols() + static_cast<Eigen::Index>(local.size()));
  p.leftCols(bore.cols()) = bore;
  for (std::size_t i = 0; i < local.size(); ++i)
    p.col(bore.cols() + static_cast<Eigen::Index>(i)) =
        point + (half + local[i].z()) * w + local[i].x() * u + local[i].y() * v;
  return p;
}

/// The bore bent in one plane, n points rounded to whole sections of 72.
Eigen::Matrix3Xd make_bent_bore(Eigen::Index n) {
  const Eigen::Index per = 72, sections = std::max<Eigen::Index>(2, n / per);
  Eigen::Matrix3Xd p(3, per * sections);
  for (Eigen::Index s = 0; s < sections; ++s)
    for (Eigen::Index k = 0; k < per; ++k) {
      const double z = 40.0 * static_cast<double>(s) / static_cast<double>(sections - 1);
      const double a = 2.0 * pi * static_cast<double>(k) / static_cast<double>(per);
      p.col(s * per + k) =
          Eigen::Vector3d(0.010 * (z / 40.0) * (z / 40.0) + 5.0 * std::cos(a), 5.0 * std::sin(a), z);
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
  std::vector<cylzone::LpSolver> solvers = {cylzone::LpSolver::clp, cylzone::LpSolver::dense};
  bool lean = false;
  for (int i = 1; i < argc; ++i) {
    if (!std::strcmp(argv[i], "--sizes") && i + 1 < argc) {
      sizes.clear();
      for (char* s = std::strtok(argv[++i], ","); s; s = std::strtok(nullptr, ","))
        sizes.push_back(std::atol(s));
    } else if (!std::strcmp(argv[i], "--runs") && i + 1 < argc) {
      runs = std::max(1, std::atoi(argv[++i]));
    } else if (!std::strcmp(argv[i], "--solver") && i + 1 < argc) {
      const std::string which = argv[++i];
      if (which == "clp") solvers = {cylzone::LpSolver::clp};
      else if (which == "dense") solvers = {cylzone::LpSolver::dense};
    } else if (!std::strcmp(argv[i], "--lean")) {
      lean = true;
    } else {
      std::fprintf(stderr,
                   "usage: bench_fit_chebyshev [--sizes N,N,...] [--runs N] "
                   "[--solver clp|dense|both] [--lean]\n");
      return 2;
    }
  }

  using Fit = std::function<cylzone::CylinderFit(const Eigen::Matrix3Xd&, const cylzone::FitOptions&)>;
  const Fit inscribed = [](const Eigen::Matrix3Xd& p, const cylzone::FitOptions& o) {
    return cylzone::fit_cylinder_maximum_inscribed(p, o);
  };
  const Fit zone = [](const Eigen::Matrix3Xd& p, const cylzone::FitOptions& o) {
    return cylzone::fit_cylinder_minimum_zone(p, o);
  };
  struct Method {
    const char* name;
    Fit fit;
    int bore;  // 0 the lobed bore, 1 with the rolling construction, 2 the bent bore
    bool chebyshev;
  };
  const std::vector<Method> methods = {
      {"least-squares",
       [](const Eigen::Matrix3Xd& p, const cylzone::FitOptions& o) {
         return cylzone::fit_cylinder_least_squares(p, o);
       },
       0, false},
      {"minimum-zone", zone, 0, true},
      {"max-inscribed", inscribed, 0, true},
      {"min-circumscribed",
       [](const Eigen::Matrix3Xd& p, const cylzone::FitOptions& o) {
         return cylzone::fit_cylinder_minimum_circumscribed(p, o);
       },
       0, true},
      {"max-inscribed/roll", inscribed, 1, true},
      {"max-inscribed/bent", inscribed, 2, true},
      {"minimum-zone/bent", zone, 2, true},
  };

  std::printf("%9s  %-18s %-5s %10s %10s %10s %5s %10s  %s\n", "points", "method", "lp", "best ms",
              "median ms", "cpu ms", "iter", "amb mm", "form mm / message");
  for (Eigen::Index n : sizes) {
    const Eigen::Matrix3Xd lobed = make_lobed_bore(n, 42);
    const Eigen::Matrix3Xd rolling = make_rolling_bore(n, 42);
    const Eigen::Matrix3Xd bent = make_bent_bore(n);
    for (const auto& [name, fit, bore, chebyshev] : methods)
      for (const cylzone::LpSolver solver : solvers) {
        if (!chebyshev && solver != solvers.front()) continue;  // least squares has no LP
        const Eigen::Matrix3Xd& points = bore == 2 ? bent : bore == 1 ? rolling : lobed;
        cylzone::FitOptions options;
        options.lp_solver = solver;
        options.assess_ambiguity = !lean;
        std::vector<double> wall;
        cylzone::CylinderFit last;
        const double cpu0 = process_cpu_ms();
        for (int r = 0; r < runs; ++r) {
          const auto t0 = std::chrono::steady_clock::now();
          last = fit(points, options);
          wall.push_back(std::chrono::duration<double, std::milli>(
                             std::chrono::steady_clock::now() - t0)
                             .count());
        }
        const double cpu = (process_cpu_ms() - cpu0) / runs;
        std::printf("%9ld  %-18s %-5s %10.3f %10.3f %10.3f %5d %10.6f  %.9f / %s\n",
                    static_cast<long>(n), name,
                    !chebyshev ? "-" : solver == cylzone::LpSolver::dense ? "dense" : "clp",
                    *std::min_element(wall.begin(), wall.end()), median(wall), cpu,
                    last.summary.iterations, last.ambiguity, last.residuals.form,
                    last.summary.message.c_str());
      }
  }
  return 0;
}
