// Cost of the whole-chain Monte Carlo study (uncertainty/monte_carlo.hpp) on a part held in
// memory: 2,000 trials (the goal: under 1.5 s on a 2-core machine) on one thread and on the
// default thread count, trials per second, and the check that both thread counts give the same
// bits (every characteristic's u and interval). The unperturbed full evaluation is included in
// each run. Each row is the best and median of 3 runs (one run from 1,000 trials up: a run is
// then tens of seconds on a shared machine).
//
// Usage: bench_monte_carlo [PLAN [TRIALS]]   (default: the demo part, 2000 trials)
#include <cstdio>
#include <cstdlib>
#include <string>

#include "cylzone/check/part_inputs.hpp"
#include "cylzone/plan/plan.hpp"
#include "cylzone/uncertainty/monte_carlo.hpp"
#include "bench_timing.hpp"

int main(int argc, char** argv) {
  const std::string file =
      argc > 1 ? argv[1] : std::string(CYLZONE_SOURCE_DIR) + "/point-clouds/valve-manifold/plan.toml";
  const std::size_t trials = argc > 2 ? std::strtoul(argv[2], nullptr, 10) : 2000;
  const cylzone::PartPlan plan = cylzone::read_plan(file);
  const cylzone::PartInputs inputs = cylzone::load_part_inputs(plan);
  const int runs = trials >= 1000 ? 1 : 3;
  std::printf("# monte_carlo_uncertainty on %s (%zu bores), %zu trials, sigma 0.001 mm\n",
              file.c_str(), plan.bores.size(), trials);
  std::printf("# %8s %10s %10s %12s\n", "threads", "best s", "median s", "trials/s");
  cylzone::MonteCarloSummary first;
  for (const std::size_t threads : {std::size_t{1}, cylzone::hardware_threads()}) {
    cylzone::MonteCarloOptions options;
    options.trials = trials;
    options.threads = threads;
    cylzone::MonteCarloSummary s;
    const cylzone::bench::Timing t = cylzone::bench::time_runs(
        runs, [&] { s = cylzone::monte_carlo_uncertainty(plan, inputs, options); });
    if (threads == 1) first = s;
    for (std::size_t i = 0; i < s.characteristics.size(); ++i)
      if (s.characteristics[i].statistics.standard_uncertainty !=
              first.characteristics[i].statistics.standard_uncertainty ||
          s.characteristics[i].interval.low != first.characteristics[i].interval.low ||
          s.characteristics[i].interval.high != first.characteristics[i].interval.high) {
        std::fprintf(stderr, "bench_monte_carlo: 1 and %zu threads differ\n", threads);
        return 1;
      }
    std::printf("  %8zu %10.3f %10.3f %12.0f\n", threads, t.best_ms / 1000.0,
                t.median_ms / 1000.0, 1000.0 * static_cast<double>(trials) / t.best_ms);
  }
  std::printf("# %s; %zu characteristics, %zu trials failed\n", first.message.c_str(),
              first.characteristics.size(), first.failed_trials);
  return 0;
}
