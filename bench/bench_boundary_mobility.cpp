// Speed of the boundary search with datum mobility (best_boundary_motion): a pattern of three
// 10 mm holes at MMC, 40 mm deep, each a few micrometres off its true position with a
// three-lobe form, probed in rings (points per bore: 200 .. 20 000), for the three kinds of
// mobility that cost most: datum B at MMB (a disk of shifts), B at MMB without C (the disk and
// a free rotation, scanned over the whole turn), A alone (free translation and rotation). The
// evaluation's own fits are not timed: the bores are built as evaluate_bore leaves them (zone,
// envelopes, points within the depth). Each case runs 3 times; best and median wall clock are
// printed. The cost grows with the points per bore times the objective's evaluations (about
// 10^5 for a free rotation).
//
// Usage: bench_boundary_mobility [--sizes 200,2000,20000]
#include <Eigen/Geometry>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <sstream>
#include <string>
#include <vector>

#include "bench_timing.hpp"
#include "cylzone/evaluate/datum_mobility.hpp"

namespace {

constexpr double pi = 3.14159265358979323846;

cylzone::BoreResult hole(const Eigen::Vector2d& basic, const Eigen::Vector2d& off, int points) {
  using namespace cylzone;
  BoreResult b;
  b.id = "H";
  b.zone = ZoneFrame::at(basic, Eigen::Vector3d::UnitZ());
  const Eigen::Vector3d axis_point(basic.x() + off.x(), basic.y() + off.y(), 0.0);
  const Eigen::Vector3d direction = Eigen::Vector3d(0.0001, -0.00005, 1.0).normalized();
  b.axis = Axis{axis_point, direction};
  b.mating_envelope.axis = b.axis;
  b.mating_envelope.radius = 5.002;
  b.minimum_material = b.mating_envelope;
  PositionResult p;
  p.range_top = 0.0;
  p.range_bottom = -40.0;
  p.allowed = 0.03;
  b.position = p;
  VirtualConditionResult v;
  v.boundary = 9.970;
  v.basis = "nearest point";
  b.virtual_condition = v;
  const int per_ring = 100;
  const int rings = (points + per_ring - 1) / per_ring;
  b.boundary_points.resize(3, rings * per_ring);
  for (int r = 0; r < rings; ++r)
    for (int k = 0; k < per_ring; ++k) {
      const double z = -2.0 - 36.0 * r / std::max(1, rings - 1);
      const double a = 2.0 * pi * k / per_ring;
      const double radius = 5.004 + 0.002 * std::cos(3.0 * a);
      const Eigen::Vector3d c = axis_point + (z / direction.z()) * direction;
      b.boundary_points.col(r * per_ring + k) =
          Eigen::Vector3d(c.x() + radius * std::cos(a), c.y() + radius * std::sin(a), z);
    }
  return b;
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<int> sizes = {200, 2000, 20000};
  if (argc == 3 && std::strcmp(argv[1], "--sizes") == 0) {
    sizes.clear();
    std::stringstream in(argv[2]);
    std::string item;
    while (std::getline(in, item, ',')) sizes.push_back(std::stoi(item));
  }
  std::printf("%8s %10s %12s %12s %10s %10s\n", "points", "mobility", "best ms", "median ms",
              "rotations", "margin");
  for (int n : sizes) {
    std::vector<cylzone::BoreResult> bores = {hole({50.0, 0.0}, {0.004, -0.003}, n),
                                              hole({-20.0, 45.0}, {-0.006, 0.002}, n),
                                              hole({-35.0, -30.0}, {0.001, 0.005}, n)};
    std::vector<const cylzone::BoreResult*> pattern;
    for (const cylzone::BoreResult& b : bores) pattern.push_back(&b);
    for (const char* kind : {"disk", "disk+rot", "free"}) {
      cylzone::FrameMobility m;
      m.shift_allowance = std::strcmp(kind, "free") == 0 ? 0.0 : 0.010;
      m.rotation_free = std::strcmp(kind, "disk") != 0;
      m.translation_free = std::strcmp(kind, "free") == 0;
      cylzone::BoundaryMobilityResult result;
      const cylzone::bench::Timing t = cylzone::bench::time_runs(
          3, [&] { result = cylzone::best_boundary_motion(pattern, m); });
      std::printf("%8d %10s %12.1f %12.1f %10d %10.6f\n", 3 * n, kind, t.best_ms, t.median_ms,
                  result.iterations, result.worst_margin);
    }
  }
  return 0;
}
