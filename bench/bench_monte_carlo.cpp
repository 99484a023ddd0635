// Cost of the whole-chain Monte Carlo study (uncertainty/monte_carlo.hpp) on a part held in
// memory: 2,000 trials (the goal: under 1.5 s on a 2-core machine) on one thread and on the
// default thread count, trials per second, and the check that both thread counts give the same
// bits (every characteristic's u and interval). The unperturbed full evaluation is included in
// each run. Each row is the best and median of 3 runs (one run from 1,000 trials up: a run is
// then tens of seconds on a shared machine), the best process CPU time (user + sys, all
// threads) and the CPU time per trial: (CPU of the study - CPU of a 2-trial study) / (trials - 2),
// the fixed cost (the unperturbed full evaluation, the weak-determination probe) taken out.
// Last, the fits of one lean trial evaluation (the unperturbed points): which Chebyshev fits a
// trial runs and their sequential-LP iterations.
//
// Usage: bench_monte_carlo [PLAN [TRIALS [cold]]]   (default: the demo part, 2000 trials;
// `cold`: every trial's fits from their own starts, MonteCarloOptions::warm_start off, the
// figures before the starts from the unperturbed fits)
#include <cstdio>
#include <cstdlib>
#include <string>

#include "cylzone/evaluate/bore_evaluation.hpp"

#include "cylzone/check/evaluate_part.hpp"
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
  const bool warm = !(argc > 3 && std::string(argv[3]) == "cold");
  const int runs = trials >= 1000 ? 1 : 3;
  std::printf("# monte_carlo_uncertainty on %s (%zu bores), %zu trials, sigma 0.001 mm\n",
              file.c_str(), plan.bores.size(), trials);
  std::printf("# %8s %10s %10s %12s %10s %14s\n", "threads", "best s", "median s", "trials/s",
              "CPU s", "CPU ms/trial");
  cylzone::MonteCarloSummary first;
  for (const std::size_t threads : {std::size_t{1}, cylzone::hardware_threads()}) {
    cylzone::MonteCarloOptions options;
    options.trials = 2;
    options.threads = threads;
    options.warm_start = warm;
    const cylzone::bench::Timing fixed = cylzone::bench::time_runs(
        runs, [&] { cylzone::monte_carlo_uncertainty(plan, inputs, options); });
    options.trials = trials;
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
    std::printf("  %8zu %10.3f %10.3f %12.0f %10.3f %14.2f\n", threads, t.best_ms / 1000.0,
                t.median_ms / 1000.0, 1000.0 * static_cast<double>(trials) / t.best_ms,
                t.best_cpu_ms / 1000.0,
                (t.best_cpu_ms - fixed.best_cpu_ms) / static_cast<double>(trials - 2));
  }
  std::printf("# %s; %zu characteristics, %zu trials failed\n", first.message.c_str(),
              first.characteristics.size(), first.failed_trials);
  std::printf("# %s\n", cylzone::warm_start_text(first).c_str());

  // The fits one trial runs (lean profile, unperturbed points): SLP iterations of each.
  cylzone::EvaluationOptions lean;
  lean.threads = 1;
  lean.profile = cylzone::lean_profile();
  const cylzone::PartEvaluation e = cylzone::evaluate_part(plan, inputs, lean);
  std::printf("# one trial's bore fits, iterations (-: skipped by the lean profile)\n");
  std::printf("# %6s %14s %14s %14s %14s %14s\n", "bore", "least squares", "mating env.",
              "related env.", "min. material", "minimum zone");
  const auto its = [](const cylzone::CylinderFit& f) {
    return f.summary.point_count == 0 ? std::string("-") : std::to_string(f.summary.iterations);
  };
  for (const cylzone::BoreResult& b : e.bores)
    if (b.evaluated())
      std::printf("  %6s %14s %14s %14s %14s %14s\n", b.id.c_str(), its(b.least_squares).c_str(),
                  its(b.mating_envelope).c_str(), its(b.related_envelope).c_str(),
                  its(b.minimum_material).c_str(), its(b.minimum_zone).c_str());
  return 0;
}
