"""Cross-check of the dense dual simplex of the Chebyshev engine (src/fit/detail/dense_lp.hpp)
on random programmes of the engine's shape. The hidden case "[dense-lp-cases]" of
tests/test_dense_lp.cpp writes each programme (distances d, gradients g, trust-region half-width
delta, the objective) with the dense solver's answer: the predicted decrease of the objective and
the step.

The programme, written out here from its definition (docs/chebyshev.md, "Linear programme"),
over every point (no working set, no candidate filter), in the step x (|x_k| <= delta) and the
zone bounds R, r:
  * minimum zone:          minimise R - r  s.t.  r <= d_i + g_i.x <= R
  * maximum inscribed:     maximise r      s.t.  d_i + g_i.x >= r
  * minimum circumscribed: minimise R      s.t.  d_i + g_i.x <= R
The predicted decrease is the current element's objective (x = 0) minus the optimum. It is
solved with scipy.optimize.linprog (method "highs", Huangfu & Hall, Math. Prog. Comp. 10, 2018),
in the variables x / delta (bounds relative to the current extreme distances, also in units of
delta) so that its absolute tolerances (set to 1e-10) apply at every size of delta.

Checks, per programme:
  * the dense step is feasible for the box (|x_k| <= delta (1 + 1e-12));
  * the objective evaluated at the dense step (over every point) equals the current objective
    minus the dense solver's predicted decrease, to 1e-12 of delta plus the rounding of the
    distances (32 ulp of max |d|): the step is what it claims;
  * the reference optimum's decrease equals the dense solver's to 1e-9 of delta (HiGHS's
    tolerances);
  * where the dense optimum is a unique vertex ("unique": its multipliers all positive), the
    reference step equals it to 1e-7 of delta.
Exits non-zero and lists every disagreement otherwise.
"""
import json
import sys

import numpy as np
from scipy.optimize import linprog


def objective_at(kind, values):
    if kind == "minimum-zone":
        return values.max() - values.min()
    if kind == "max-inscribed":
        return -values.min()
    return values.max()


def reference(case):
    d = np.asarray(case["d"], dtype=float)
    g = np.asarray(case["g"], dtype=float)
    delta = float(case["delta"])
    kind = case["objective"]
    n, p = g.shape
    u0, l0 = d.max(), d.min()
    # Variables: y = x / delta (p), then the bounds in units of delta relative to u0 / l0.
    upper = kind != "max-inscribed"
    lower = kind != "min-circumscribed"
    cols = p + int(upper) + int(lower)
    cost = np.zeros(cols)
    rows, rhs = [], []
    col = p
    if upper:
        cost[col] = 1.0
        for i in range(n):  # (d_i - u0)/delta + g_i.y <= R'
            a = np.zeros(cols)
            a[:p] = g[i]
            a[col] = -1.0
            rows.append(a)
            rhs.append(-(d[i] - u0) / delta)
        col += 1
    if lower:
        cost[col] = -1.0
        for i in range(n):  # (d_i - l0)/delta + g_i.y >= r'
            a = np.zeros(cols)
            a[:p] = -g[i]
            a[col] = 1.0
            rows.append(a)
            rhs.append((d[i] - l0) / delta)
    bounds = [(-1.0, 1.0)] * p + [(None, None)] * (cols - p)
    result = linprog(cost, A_ub=np.array(rows), b_ub=np.array(rhs), bounds=bounds,
                     method="highs",
                     options={"primal_feasibility_tolerance": 1e-10,
                              "dual_feasibility_tolerance": 1e-10})
    if result.status != 0:
        raise RuntimeError("linprog failed: " + result.message)
    # The objective in units of delta is the change of the true objective; its negative the
    # decrease.
    return -delta * result.fun, delta * result.x[:p]


def main(path):
    with open(path) as f:
        cases = json.load(f)["cases"]
    failures = []
    unique = 0
    for index, case in enumerate(cases):
        d = np.asarray(case["d"], dtype=float)
        g = np.asarray(case["g"], dtype=float)
        delta = float(case["delta"])
        kind = case["objective"]
        step = np.asarray(case["step"], dtype=float)
        predicted = float(case["predicted"])
        label = "case %d (%s, %s, n %d, p %d, delta %.3g)" % (index, case["kind"], kind, len(d),
                                                              g.shape[1], delta)
        if np.abs(step).max() > delta * (1.0 + 1e-12):
            failures.append("%s: the step leaves the box" % label)
        achieved = objective_at(kind, d) - objective_at(kind, d + g @ step)
        # Rounding: the objective is a difference of distances of size max |d|.
        rounding = 32.0 * np.finfo(float).eps * max(1.0, np.abs(d).max())
        if abs(achieved - predicted) > 1e-12 * delta + rounding:
            failures.append("%s: the step achieves %.17g, the solver claims %.17g"
                            % (label, achieved, predicted))
        ref_predicted, ref_step = reference(case)
        if abs(ref_predicted - predicted) > 1e-9 * delta:
            failures.append("%s: optimum %.17g, reference %.17g" % (label, predicted, ref_predicted))
        if case["unique"]:
            unique += 1
            gap = np.abs(ref_step - step).max()
            if gap > 1e-7 * delta:
                failures.append("%s: step differs from the reference by %.3g delta"
                                % (label, gap / delta))
    if len(cases) < 30 or unique < 10:
        failures.append("too few cases (%d, %d unique): the check would say little"
                        % (len(cases), unique))
    for line in failures:
        print("FAIL:", line)
    print("%d programmes (%d unique vertices) checked against scipy.optimize.linprog (HiGHS)"
          % (len(cases), unique))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
