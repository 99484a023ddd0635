#!/usr/bin/python3
"""Cross-check of the Monte Carlo study's normal deviates (uncertainty/monte_carlo.hpp,
standard_normals: Marsaglia's polar method) against scipy.stats.norm, independently of the
library.

Usage: /usr/bin/python3 crosscheck_normal.py DEVIATES.txt

DEVIATES.txt is written by the hidden Catch2 case "[normal-cases]" of test_monte_carlo (ctest
runs it first, as a fixture): 100,000 deviates, one a line, drawn in blocks of 303 (a feature of
101 points, x, y, z each).

References: scipy.stats.kstest against scipy.stats.norm (the Kolmogorov-Smirnov statistic must
not reject at the 0.1 % level); the sample mean, variance, skewness and excess kurtosis
(scipy.stats.describe) within 4.5 of their standard errors under the normal law (sqrt(1/M),
sqrt(2/M), sqrt(6/M), sqrt(24/M): the large-sample variances of the moments of a normal sample,
e.g. Cramer, Mathematical Methods of Statistics, 1946, section 27.7, from memory); the empirical
0.1 %, 2.5 %, 50 %, 97.5 % and 99.9 % quantiles within 4.5 standard errors
(sqrt(p (1 - p) / M) / pdf(x_p)) of scipy.stats.norm.ppf. Exits non-zero and lists each
disagreement otherwise.
"""
import math
import sys

import numpy as np
from scipy import stats

values = []
with open(sys.argv[1]) as f:
    for line in f:
        if line.startswith("#") or not line.strip():
            continue
        values.append(float(line))
z = np.array(values)
m = len(z)
failures = []
if m != 100000:
    failures.append(f"expected 100000 deviates, read {m}")
if not np.all(np.isfinite(z)):
    failures.append("a deviate is not finite")

ks = stats.kstest(z, "norm")
if ks.pvalue < 1e-3:
    failures.append(f"Kolmogorov-Smirnov against N(0, 1): D = {ks.statistic:.5f}, p = {ks.pvalue:.2e}")

d = stats.describe(z)
for name, value, expected, se in (
        ("mean", d.mean, 0.0, math.sqrt(1.0 / m)),
        ("variance", d.variance, 1.0, math.sqrt(2.0 / m)),
        ("skewness", d.skewness, 0.0, math.sqrt(6.0 / m)),
        ("excess kurtosis", d.kurtosis, 0.0, math.sqrt(24.0 / m))):
    if abs(value - expected) > 4.5 * se:
        failures.append(f"{name} {value:.5f}, normal law {expected} (se {se:.2g})")

for p in (0.001, 0.025, 0.5, 0.975, 0.999):
    x = stats.norm.ppf(p)
    se = math.sqrt(p * (1 - p) / m) / stats.norm.pdf(x)
    q = float(np.quantile(z, p))
    if abs(q - x) > 4.5 * se:
        failures.append(f"quantile {p}: {q:.5f}, scipy {x:.5f} (se {se:.2g})")

if failures:
    print("normal deviates disagree with scipy.stats.norm:")
    for failure in failures:
        print("  " + failure)
    sys.exit(1)
print(f"{m} deviates agree with scipy.stats.norm (KS p = {ks.pvalue:.3f})")
