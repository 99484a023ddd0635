#!/usr/bin/python3
"""Cross-check of the Monte Carlo study's radial figures against scipy.stats, independently of
the library.

Usage: /usr/bin/python3 crosscheck_monte_carlo.py CASES.txt

CASES.txt is written by the hidden Catch2 case "[rice-cases]" of test_monte_carlo (ctest runs
it first, as a fixture): a bore at `offset_over_u` x u from its true position, u the standard
uncertainty of its axis' offset per coordinate (normal, from the linear part of the model), and
the Monte Carlo's positional diameters (2 |offset|) over `trials` trials: their mean, their
empirical 2.5 %, 50 %, 95 % and 97.5 % quantiles, the study's probabilistically symmetric and
shortest 95 % intervals, and the simulated u of dx and dy.

References: |offset| / u is Rayleigh (offset 0: scipy.stats.rayleigh) or Rice with shape
b = offset / u (scipy.stats.rice), so the diameter's mean is 2 u rice.mean(b) (2 u sqrt(pi/2) =
2.5066 u for b = 0) and its p quantile 2 u rice.ppf(p, b). Each empirical figure must agree
within 4.5 of its Monte Carlo standard errors: the mean's sd / sqrt(M); a quantile's
sqrt(p (1 - p) / M) / f(x_p) (the asymptotic variance of a sample quantile, e.g. Cramer,
Mathematical Methods of Statistics, 1946, section 28.5, from memory); the shortest interval's
coverage, scipy's cdf(high) - cdf(low), within 4.5 sqrt(p (1 - p) / M) of 0.95.
Exits non-zero and lists each disagreement otherwise.
"""
import math
import sys

from scipy import stats

failures = []
cases = 0
with open(sys.argv[1]) as f:
    for number, line in enumerate(f, 1):
        if line.startswith("#") or not line.strip():
            continue
        v = [float(x) for x in line.split()]
        b, u, m = v[0], v[1], v[2]
        mean, quantiles = v[3], dict(zip((0.025, 0.5, 0.95, 0.975), v[4:8]))
        sym_low, sym_high, short_low, short_high, u_dx, u_dy = v[8:14]
        dist = stats.rice(b, scale=2 * u) if b > 0 else stats.rayleigh(scale=2 * u)
        cases += 1
        se = dist.std() / math.sqrt(m)
        if abs(mean - dist.mean()) > 4.5 * se:
            failures.append(f"line {number}: mean diameter {mean!r}, scipy {dist.mean()!r} (se {se:.3g})")
        if b == 0 and abs(dist.mean() / (2 * u) - 2.5066 / 2) > 1e-4:
            failures.append("rayleigh mean is not u sqrt(pi/2)")
        for p, value in quantiles.items():
            x = dist.ppf(p)
            se = math.sqrt(p * (1 - p) / m) / dist.pdf(x)
            if abs(value - x) > 4.5 * se:
                failures.append(f"line {number}: quantile {p}: {value!r}, scipy {x!r} (se {se:.3g})")
        for p, value in ((0.025, sym_low), (0.975, sym_high)):
            x = dist.ppf(p)
            se = math.sqrt(p * (1 - p) / m) / dist.pdf(x)
            if abs(value - x) > 4.5 * se:
                failures.append(f"line {number}: symmetric interval end {p}: {value!r}, scipy {x!r}")
        coverage = dist.cdf(short_high) - dist.cdf(short_low)
        if abs(coverage - 0.95) > 4.5 * math.sqrt(0.95 * 0.05 / m):
            failures.append(f"line {number}: the shortest interval covers {coverage:.4f} under scipy's law")
        if not short_high - short_low <= sym_high - sym_low + 1e-15:
            failures.append(f"line {number}: the shortest interval is wider than the symmetric one")
        for name, value in (("dx", u_dx), ("dy", u_dy)):
            if abs(value - u) > 4.5 * u / math.sqrt(2 * (m - 1)):
                failures.append(f"line {number}: u({name}) {value!r}, expected {u!r}")
if cases != 3:
    failures.append(f"{cases} cases, expected 3")
if failures:
    print("\n".join(failures))
    sys.exit(1)
print(f"monte carlo: {cases} radial cases agree with scipy.stats rayleigh / rice")
