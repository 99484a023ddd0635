#!/usr/bin/python3
"""Cross-check of the probing advice's simulation and of the forecast comparison's binomial
interval against scipy, independently of the library.

Usage: /usr/bin/python3 crosscheck_probing.py CASES.txt

CASES.txt is written by a hidden Catch2 case (ctest runs it first, as a fixture). One case per
line:
  rayleigh N u mean q95   the simulated positional diameter (2 x the radius of the fitted axis's
                          offset) of a perfect bore from N trials, with u the per-axis standard
                          uncertainty of the linear propagation at that height
                          (docs/probing-advice.md): the radius is Rayleigh with scale u, so the
                          diameter is Rayleigh with scale 2u: scipy.stats.rayleigh(scale=2u).
                          Monte Carlo tolerances: the mean within 5 standard errors
                          (sd / sqrt(N)); the quantile within 5 standard errors of a sample
                          quantile, sqrt(p (1 - p) / N) / f(q) (common practice: the asymptotic
                          variance of a sample quantile), plus 2 % for the linear propagation's
                          first-order error at 5 points per section.
  clopper x n conf lower upper
                          the Clopper-Pearson interval (Clopper & Pearson, Biometrika 26, 1934)
                          of x events in n trials at confidence conf: lower =
                          beta.ppf((1 - conf) / 2, x, n - x + 1) (0 for x = 0), upper =
                          beta.ppf((1 + conf) / 2, x + 1, n - x) (1 for x = n), to 1e-9.

Exits non-zero and lists each disagreement otherwise.
"""
import math
import sys

from scipy import stats

failures = []
count = 0
with open(sys.argv[1]) as f:
    for line in f:
        parts = line.split()
        if not parts:
            continue
        count += 1
        if parts[0] == "rayleigh":
            n, u, mean, q95 = int(parts[1]), *map(float, parts[2:5])
            law = stats.rayleigh(scale=2.0 * u)
            se_mean = law.std() / math.sqrt(n)
            if abs(mean - law.mean()) > 5 * se_mean + 0.02 * law.mean():
                failures.append(f"{line.strip()}: mean {mean} against scipy {law.mean()}")
            q_ref = law.ppf(0.95)
            se_q = math.sqrt(0.95 * 0.05 / n) / law.pdf(q_ref)
            if abs(q95 - q_ref) > 5 * se_q + 0.02 * q_ref:
                failures.append(f"{line.strip()}: 95 % quantile {q95} against scipy {q_ref}")
        elif parts[0] == "clopper":
            x, n = int(parts[1]), int(parts[2])
            conf, lower, upper = map(float, parts[3:6])
            a = 1.0 - conf
            ref_lower = 0.0 if x == 0 else stats.beta.ppf(a / 2, x, n - x + 1)
            ref_upper = 1.0 if x == n else stats.beta.ppf(1 - a / 2, x + 1, n - x)
            if abs(lower - ref_lower) > 1e-9 or abs(upper - ref_upper) > 1e-9:
                failures.append(f"{line.strip()}: scipy gives [{ref_lower}, {ref_upper}]")
        else:
            failures.append(f"unknown case {line.strip()!r}")

if count == 0:
    failures.append("no cases")
for f in failures:
    print("DISAGREES:", f)
print(f"{count} cases, {len(failures)} disagreements")
sys.exit(1 if failures else 0)
