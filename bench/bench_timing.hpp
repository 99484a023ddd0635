#pragma once
// Timing of repeated runs for the benchmarks: best and median wall clock, and the best process
// CPU time (all threads together: what a run costs when the machine is shared).

#include <algorithm>
#include <chrono>
#include <ctime>
#include <functional>
#include <vector>

namespace cylzone::bench {

struct Timing {
  double best_ms = 0.0;      ///< wall clock
  double median_ms = 0.0;    ///< wall clock
  double best_cpu_ms = 0.0;  ///< process CPU time
};

inline Timing time_runs(int runs, const std::function<void()>& run) {
  std::vector<double> wall, cpu;
  for (int i = 0; i < runs; ++i) {
    const auto start = std::chrono::steady_clock::now();
    const std::clock_t cpu_start = std::clock();
    run();
    cpu.push_back(1e3 * static_cast<double>(std::clock() - cpu_start) / CLOCKS_PER_SEC);
    wall.push_back(
        std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - start).count());
  }
  std::sort(wall.begin(), wall.end());
  std::sort(cpu.begin(), cpu.end());
  return {wall.front(), wall[wall.size() / 2], cpu.front()};
}

}  // namespace cylzone::bench
