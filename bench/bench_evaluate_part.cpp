// Cost of one evaluation of a part held in memory (evaluate_part: prepare, datum frame, every
// bore, datum mobility; no file IO), as a Monte Carlo study repeats it once per trial: the
// full profile and a lean one (no ambiguity walks, no stray-point screen, no two-point sizes),
// each on one thread and on the default thread count, and the whole check_part (loading and
// the sensitivity study included) for comparison. The results of one and of N threads must be
// identical (checked on every bore's position value). Each row is the best and median of 9 runs.
//
// Usage: bench_evaluate_part [PLAN]   (default: the demo part)
#include <cstdio>
#include <string>

#include "cylzone/check/part_check.hpp"
#include "cylzone/plan/plan.hpp"
#include "bench_timing.hpp"

int main(int argc, char** argv) {
  const std::string file =
      argc > 1 ? argv[1] : std::string(CYLZONE_SOURCE_DIR) + "/point-clouds/valve-manifold/plan.toml";
  const cylzone::PartPlan plan = cylzone::read_plan(file);
  const cylzone::PartInputs inputs = cylzone::load_part_inputs(plan);
  constexpr int runs = 9;
  std::printf("# evaluate_part on %s (%zu bores), ms\n", file.c_str(), plan.bores.size());
  std::printf("# %-28s %8s %9s %9s\n", "profile", "threads", "best", "median");
  for (const bool lean : {false, true}) {
    cylzone::EvaluationOptions options;
    options.profile.ambiguity = options.profile.stray_screen = options.profile.two_point_sizes = !lean;
    cylzone::PartEvaluation first;
    for (const std::size_t threads : {std::size_t{1}, cylzone::hardware_threads()}) {
      options.threads = threads;
      cylzone::PartEvaluation e;
      const cylzone::bench::Timing t =
          cylzone::bench::time_runs(runs, [&] { e = cylzone::evaluate_part(plan, inputs, options); });
      if (threads == 1) first = e;
      for (std::size_t i = 0; i < e.bores.size(); ++i)
        if (e.bores[i].position && e.bores[i].position->value != first.bores[i].position->value) {
          std::fprintf(stderr, "bench_evaluate_part: 1 and %zu threads differ\n", threads);
          return 1;
        }
      std::printf("  %-28s %8zu %9.2f %9.2f\n", lean ? "lean (figures only)" : "full", threads,
                  t.best_ms, t.median_ms);
    }
  }
  const cylzone::bench::Timing whole =
      cylzone::bench::time_runs(runs, [&] { cylzone::check_part(plan); });
  std::printf("  %-28s %8zu %9.2f %9.2f\n", "check_part (load, sensitivity)",
              cylzone::hardware_threads(), whole.best_ms, whole.median_ms);
  return 0;
}
