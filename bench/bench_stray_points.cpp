// Speed of the stray-point screen (find_stray_points: KD-tree over the points, k = 8 nearest
// neighbours of every point, medians, MAD) on scanned bores of 10^4 .. 10^6 points, against the
// least-squares cylinder fit that produces its residuals and the whole evaluate_bore (which
// runs the screen), on the same points in the same run: screening must not dominate the
// evaluation of a bore. The bore is a 10 mm hole in the datum frame at (40, 25), tilted 0.5
// mrad, 314 points per row (0.1 mm apart) on rows 0.1 mm apart, 1 um noise and ten spikes.
// The screen is also timed on the same cloud in random order. Each size runs 7 times (3 at 10^6
// points); best and median wall clock and the best CPU time (all threads together) are printed.
// The screen runs on StrayPointOptions::threads (default: the machine's cores) and once more on
// one thread (column 1thread), whose report must be identical.
// A second table splits the one-thread screen into its parts, each timed alone: every point's
// k nearest as the screen finds them (all_nearest: the grid, the KD-tree for the points it does
// not certify; with the share certified by the 3x3x3 block, by a wider block, by the tree),
// and the rest (medians, MAD, flagging) as the screen minus that; then the KD-tree alone for
// comparison: building the neighbour index, the queries of every point through it
// (NeighbourIndex::nearest_in_order over the locality order in chunks of 4096), and the same
// queries one at a time (Query::of_point, unbounded at the start). The neighbours' cost bounds
// what any faster median or statistics pass can gain. The parts are CPU times (they do not
// count the waits of a loaded machine).
//
// Usage: bench_stray_points [--sizes 10000,100000,1000000] [--screen-only]
//   --screen-only  skips the least-squares cylinder and evaluate_bore timings (the cylinder is
//                  fitted once for the residuals), so large sizes run in a minute.
#include <Eigen/Geometry>
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "cylzone/evaluate/bore_evaluation.hpp"
#include "cylzone/fit/fit_cylinder.hpp"
#include "cylzone/prepare/neighbour_index.hpp"
#include "cylzone/prepare/stray_points.hpp"
#include "bench_timing.hpp"

namespace {

using cylzone::bench::Timing;
using cylzone::bench::time_runs;

/// A scanned bore of `count` points (see file comment), from 1 mm below datum A downwards.
Eigen::Matrix3Xd scanned_bore(std::size_t count) {
  constexpr double pi = 3.14159265358979323846;
  const std::size_t per_row = 314;
  const Eigen::Vector3d w(std::sin(0.5e-3), 0.0, std::cos(0.5e-3));
  const Eigen::Vector3d u = w.unitOrthogonal(), v = w.cross(u);
  const Eigen::Vector3d origin(40.0, 25.0, -1.0);
  std::mt19937_64 rng(5);
  std::normal_distribution<double> noise(0.0, 0.001);
  Eigen::Matrix3Xd p(3, static_cast<Eigen::Index>(count));
  for (std::size_t i = 0; i < count; ++i) {
    const double row = static_cast<double>(i / per_row);
    const double a = 2.0 * pi * static_cast<double>(i % per_row) / static_cast<double>(per_row);
    const double r = 5.0 + noise(rng);
    p.col(static_cast<Eigen::Index>(i)) =
        origin - (0.1 * row) * w + r * (std::cos(a) * u + std::sin(a) * v);
  }
  for (int s = 0; s < 10; ++s) {
    const Eigen::Index i = static_cast<Eigen::Index>((2 * s + 1) * count / 21);
    const Eigen::Vector3d q = p.col(i) - origin;
    const Eigen::Vector3d radial = (q - q.dot(w) * w).normalized();
    p.col(i) -= 0.02 * radial;
  }
  return p;
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<std::size_t> sizes = {10000, 100000, 1000000};
  bool screen_only = false;
  for (int a = 1; a < argc; ++a) {
    const std::string arg = argv[a];
    if (arg == "--sizes" && a + 1 < argc) {
      sizes.clear();
      std::stringstream list(argv[++a]);
      std::string item;
      while (std::getline(list, item, ',')) sizes.push_back(std::stoul(item));
    } else if (arg == "--screen-only") {
      screen_only = true;
    } else {
      std::fprintf(stderr,
                   "usage: bench_stray_points [--sizes 10000,100000,1000000] [--screen-only]\n");
      return 2;
    }
  }
  cylzone::PlanBore plan;
  plan.id = "H1";
  plan.basic_location = {40.0, 25.0};
  plan.size = cylzone::SizeLimits{10.0, 10.015};
  std::printf("# stray-point screen (k = 8), least-squares cylinder and evaluate_bore; ms\n");
  std::printf("# %9s %9s %9s %9s %9s %9s %9s %9s %9s %9s %11s %11s %11s %7s\n", "points",
              "screen", "median", "ns/point", "cpu", "cpu_ns/pt", "1thread", "1t_ns/pt",
              "1t_cpu/pt", "shuffled", "ls_cylinder", "evaluate", "eval_median", "share");
  struct Parts {
    std::size_t n;
    double screen_ms, grid_ms, index_ms, queries_ms, single_ms;
    cylzone::AllNearestSummary grid;
  };
  std::vector<Parts> parts;
  for (const std::size_t n : sizes) {
    const Eigen::Matrix3Xd points = scanned_bore(n);
    const int runs = n >= 1000000 ? 3 : 7;
    cylzone::CylinderFit fit;
    const Timing fit_time = time_runs(screen_only ? 1 : runs, [&] {
      fit = cylzone::fit_cylinder_least_squares(points);
    });
    cylzone::StrayPointReport report;
    const Timing screen_time = time_runs(
        runs, [&] { report = cylzone::find_stray_points(points, fit.residuals.values); });
    cylzone::StrayPointOptions one_thread;
    one_thread.threads = 1;
    cylzone::StrayPointReport serial;
    const Timing serial_time = time_runs(runs, [&] {
      serial = cylzone::find_stray_points(points, fit.residuals.values, one_thread);
    });
    bool identical = serial.robust_scale == report.robust_scale &&
                     serial.points.size() == report.points.size();
    for (std::size_t i = 0; identical && i < serial.points.size(); ++i)
      identical = serial.points[i].index == report.points[i].index &&
                  serial.points[i].excess == report.points[i].excess;
    if (!identical) {
      std::fprintf(stderr, "bench_stray_points: 1 thread and %zu threads differ\n",
                   cylzone::StrayPointOptions{}.threads);
      return 1;
    }
    // The same cloud in random order (a scanner export need not be in scan order).
    Eigen::Matrix3Xd shuffled(3, points.cols());
    Eigen::VectorXd shuffled_residuals(points.cols());
    {
      std::vector<Eigen::Index> perm(static_cast<std::size_t>(points.cols()));
      for (std::size_t i = 0; i < perm.size(); ++i) perm[i] = static_cast<Eigen::Index>(i);
      std::shuffle(perm.begin(), perm.end(), std::mt19937_64(9));
      for (Eigen::Index i = 0; i < points.cols(); ++i) {
        shuffled.col(i) = points.col(perm[static_cast<std::size_t>(i)]);
        shuffled_residuals(i) = fit.residuals.values(perm[static_cast<std::size_t>(i)]);
      }
    }
    const Timing shuffled_time = time_runs(
        runs, [&] { cylzone::find_stray_points(shuffled, shuffled_residuals); });
    cylzone::BoreResult bore;
    Timing bore_time;
    if (!screen_only)
      bore_time = time_runs(runs, [&] { bore = cylzone::evaluate_bore(plan, points); });
    const double per = 1e6 / static_cast<double>(n);  // ms -> ns per point
    std::printf("  %9zu %9.2f %9.2f %9.1f %9.2f %9.1f %9.2f %9.1f %9.1f %9.2f %11.2f %11.2f %11.2f "
                "%6.0f%%   (%zu flagged)\n",
                n, screen_time.best_ms, screen_time.median_ms, per * screen_time.best_ms,
                screen_time.best_cpu_ms, per * screen_time.best_cpu_ms, serial_time.best_ms,
                per * serial_time.best_ms, per * serial_time.best_cpu_ms, shuffled_time.best_ms,
                fit_time.best_ms, bore_time.best_ms, bore_time.median_ms,
                screen_only ? 0.0 : 100.0 * screen_time.best_ms / bore_time.best_ms,
                report.points.size());
    // The one-thread screen's parts, each alone.
    cylzone::AllNearestSummary grid;
    std::uint64_t found_grid = 0;
    const Timing grid_time = time_runs(runs, [&] {
      found_grid = 0;
      grid = cylzone::all_nearest(points, 8, 1,
                                  [&](std::size_t, std::size_t count, const std::uint32_t*,
                                      const std::uint32_t* rows) {
                                    for (std::size_t j = 0; j < 8 * count; ++j) found_grid += rows[j];
                                  });
    });
    const Timing index_time = time_runs(runs, [&] { cylzone::NeighbourIndex index(points, 1); });
    const cylzone::NeighbourIndex index(points, 1);
    std::uint64_t found = 0, found_single = 0;
    const Timing query_time = time_runs(runs, [&] {
      std::vector<std::uint32_t> rows;
      found = 0;
      for (std::size_t first = 0; first < n; first += 4096) {
        index.nearest_in_order(8, first, std::min(n, first + 4096), rows);
        for (const std::uint32_t j : rows) found += j;
      }
    });
    const Timing single_time = time_runs(runs, [&] {
      cylzone::NeighbourIndex::Query query(8);
      found_single = 0;
      for (const std::uint32_t i : index.locality_order())
        for (const std::uint32_t j : query.of_point(index, i)) found_single += j;
    });
    if (found != found_single || found != found_grid) {  // a checksum: the searches are exact
      std::fprintf(stderr, "bench_stray_points: the grid, batch and single searches differ\n");
      return 1;
    }
    parts.push_back({n, serial_time.best_cpu_ms, grid_time.best_cpu_ms, index_time.best_cpu_ms,
                     query_time.best_cpu_ms, single_time.best_cpu_ms, grid});
  }
  std::printf("# one thread, each part alone: best CPU time of the runs, ns per point\n");
  std::printf("# %9s %9s %9s %9s %7s %7s %7s %8s | %9s %9s %9s\n", "points", "screen", "nearest",
              "rest", "grid%", "wider%", "tree%", "cell_mm", "index", "queries", "single");
  for (const Parts& p : parts) {
    const double per = 1e6 / static_cast<double>(p.n), share = 100.0 / static_cast<double>(p.n);
    std::printf("  %9zu %9.1f %9.1f %9.1f %7.3f %7.3f %7.3f %8.4f | %9.1f %9.1f %9.1f\n", p.n,
                per * p.screen_ms, per * p.grid_ms, per * (p.screen_ms - p.grid_ms),
                share * static_cast<double>(p.grid.certified),
                share * static_cast<double>(p.grid.widened), share * static_cast<double>(p.grid.tree),
                p.grid.cell, per * p.index_ms, per * p.queries_ms, per * p.single_ms);
  }
  std::printf("# shuffled = the screen on the same cloud in random order; share = screen best /\n"
              "# evaluate_bore best (evaluate_bore includes the screen); nearest = all_nearest;\n"
              "# rest = screen - nearest (medians, MAD, checks, flagging); grid%%, wider%%, tree%%\n"
              "# = points answered by the 3x3x3 block, a wider block, the tree; index, queries =\n"
              "# the KD-tree alone; single = its queries one at a time (Query::of_point);\n"
              "# screen-only runs print 0 for ls_cylinder and evaluate\n");
  return 0;
}
