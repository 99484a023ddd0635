// Speed of the position search with datum mobility (best_frame_motion): a pattern of tilted
// bores, 40 mm deep, each a few micrometres off its true position, placed on a 60 mm grid
// (bores per pattern: 3 .. 48), for the mobilities that search most: datum B at MMB with a free
// rotation (a disk of shifts and a turn), A|B (a turn alone), A alone (free translation and
// rotation, where the Newton polish of the minimax conditions runs after the searches). The
// bores are built as evaluate_bore leaves them (zone, straight axis, position result). Each
// case runs 5 times; best and median wall clock are printed, with the rotations examined.
//
// Usage: bench_frame_motion [--sizes 3,12,48]
#include <cmath>
#include <cstdio>
#include <cstring>
#include <sstream>
#include <string>
#include <vector>

#include "bench_timing.hpp"
#include "cylzone/evaluate/datum_mobility.hpp"

namespace {

struct Bore {
  cylzone::PlanBore plan;
  cylzone::BoreResult result;
};

Bore tilted_bore(int k, const Eigen::Vector2d& basic) {
  using namespace cylzone;
  Bore b;
  b.plan.id = "T" + std::to_string(k);
  b.plan.basic_location = basic;
  PlanTolerance t;
  t.tolerance = 0.030 + 0.005 * (k % 3);
  t.datums = {{'A', MaterialBoundary::rmb}};
  b.plan.position = t;
  b.result.id = b.plan.id;
  b.result.zone = ZoneFrame::at(basic, Eigen::Vector3d::UnitZ());
  // Off position and tilted by a few micrometres, differently for every bore.
  const Eigen::Vector2d top = basic + 0.004 * Eigen::Vector2d(std::sin(1.7 * k), std::cos(2.3 * k));
  const Eigen::Vector2d tilt = 0.006 * Eigen::Vector2d(std::cos(0.9 * k + 1.0), std::sin(1.3 * k));
  b.result.axis.point = Eigen::Vector3d(top.x(), top.y(), 0.0);
  b.result.axis.direction = Eigen::Vector3d(-tilt.x(), -tilt.y(), 40.0).normalized();
  b.result.axis_in_zone = StraightAxis::from_axis(b.result.axis, b.result.zone);
  PositionResult p;
  p.spec = t;
  p.range_top = 0.0;
  p.range_bottom = -40.0;
  p.allowed = t.tolerance;
  b.result.position = p;
  b.result.position = position_after_frame_motion(b.result, b.plan, FrameMotion{});
  return b;
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<int> sizes = {3, 12, 48};
  if (argc == 3 && std::strcmp(argv[1], "--sizes") == 0) {
    sizes.clear();
    std::stringstream in(argv[2]);
    std::string item;
    while (std::getline(in, item, ',')) sizes.push_back(std::stoi(item));
  }
  std::printf("%6s %10s %12s %12s %10s %12s\n", "bores", "mobility", "best ms", "median ms",
              "rotations", "worst ratio");
  for (int n : sizes) {
    std::vector<Bore> bores;
    for (int k = 0; k < n; ++k)
      bores.push_back(tilted_bore(k, Eigen::Vector2d(60.0 * (k % 7) - 150.0, 60.0 * (k / 7) - 90.0)));
    std::vector<const cylzone::BoreResult*> results;
    std::vector<const cylzone::PlanBore*> plans;
    for (const Bore& b : bores) {
      results.push_back(&b.result);
      plans.push_back(&b.plan);
    }
    for (const char* kind : {"disk+rot", "rot", "free"}) {
      cylzone::FrameMobility m;
      m.shift_allowance = std::strcmp(kind, "disk+rot") == 0 ? 0.010 : 0.0;
      m.rotation_free = true;
      m.translation_free = std::strcmp(kind, "free") == 0;
      cylzone::MobilityResult result;
      const cylzone::bench::Timing t = cylzone::bench::time_runs(
          5, [&] { result = cylzone::best_frame_motion(results, plans, m); });
      std::printf("%6d %10s %12.2f %12.2f %10d %12.9f\n", n, kind, t.best_ms, t.median_ms,
                  result.iterations, result.worst_ratio);
    }
  }
  return 0;
}
