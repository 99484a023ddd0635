#!/usr/bin/python3
"""Cross-check of the machine-capability forecast's probabilities against scipy, independently
of the library.

Usage: /usr/bin/python3 crosscheck_forecast.py CASES.txt

CASES.txt is written by the hidden Catch2 case "[forecast-cases]" of test_machine_capability
(ctest runs it first, as a fixture). One case per line, lengths in mm:
  disk mx my sx sy r P           P(|N((mx, my), diag(sx^2, sy^2))| <= r)
  both mx my sx sy dx dy tau r P P(|e| <= r and |e + d + tau w| <= r), e as above, w ~ N(0, I)
  top bx by sx sy p median q     diameters: the median and the p quantile of 2 |e|
  perpendicularity nu tau p median q   the median and p quantile of |N((nu, 0), tau^2 I)|

The references, each from a different route than cylzone's (which integrates one coordinate
numerically and the other in closed form through erfc):
  * Rayleigh (b = 0, sx = sy): scipy.stats.rayleigh.cdf(r / s);
  * Rice (b != 0, sx = sy): scipy.stats.rice.cdf(r / s, |b| / s);
  * Hoyt / Nakagami-q (b = 0, sx != sy): the density of Simon & Alouini, Digital Communication
    over Fading Channels (2nd ed., 2005), eq. 2.11 (from memory for the number),
      f(r) = (1 + q^2) r / (q W) exp(-(1 + q^2)^2 r^2 / (4 q^2 W)) I0((1 - q^4) r^2 / (4 q^2 W)),
    q = min/max sigma, W = sx^2 + sy^2, integrated with scipy.integrate.quad;
  * general bivariate normal: its density integrated over the disk in polar coordinates with
    scipy.integrate.dblquad;
  * both ends: dblquad of the density over the lens of the two disks (tau = 0), or over the
    disk times scipy.stats.rice.cdf of the bottom given the mouth (tau > 0);
  * quantiles: the reference CDF evaluated at cylzone's quantile must give p.

Tolerances: probabilities to 1e-8 absolute, quantiles to 1e-7 in probability. Exits non-zero
and lists each disagreement otherwise.
"""
import math
import sys

import numpy as np
from scipy import integrate, special, stats

TOL_P = 1e-8
TOL_Q = 1e-7


def density(x, y, mx, my, sx, sy):
    return math.exp(-0.5 * (((x - mx) / sx) ** 2 + ((y - my) / sy) ** 2)) / (2 * math.pi * sx * sy)


def hoyt_cdf(r, sx, sy):
    q = min(sx, sy) / max(sx, sy)
    w = sx * sx + sy * sy
    a = (1 + q * q) ** 2 / (4 * q * q * w)
    b = (1 - q ** 4) / (4 * q * q * w)

    def pdf(t):
        # exp(-a t^2) I0(b t^2) = exp(-(a - b) t^2) i0e(b t^2)
        return (1 + q * q) * t / (q * w) * math.exp(-(a - b) * t * t) * special.i0e(b * t * t)

    return integrate.quad(pdf, 0.0, r, epsabs=1e-13, epsrel=1e-12, limit=200)[0]


def general_disk(mx, my, sx, sy, r):
    val, _ = integrate.dblquad(
        lambda phi, rho: density(rho * math.cos(phi), rho * math.sin(phi), mx, my, sx, sy) * rho,
        0.0, r, 0.0, 2 * math.pi, epsabs=1e-12, epsrel=1e-11)
    return val


def disk_reference(mx, my, sx, sy, r):
    b = math.hypot(mx, my)
    if sx == sy:
        return stats.rayleigh.cdf(r / sx) if b == 0 else stats.rice.cdf(r / sx, b / sx)
    if b == 0:
        return hoyt_cdf(r, sx, sy)
    return general_disk(mx, my, sx, sy, r)


def both_reference(mx, my, sx, sy, dx, dy, tau, r):
    if tau == 0:
        def lo(x):
            return max(-math.sqrt(max(r * r - x * x, 0)), -dy - math.sqrt(max(r * r - (x + dx) ** 2, 0)))

        def hi(x):
            return max(lo(x), min(math.sqrt(max(r * r - x * x, 0)),
                                  -dy + math.sqrt(max(r * r - (x + dx) ** 2, 0))))

        x0, x1 = max(-r, -dx - r), min(r, -dx + r)
        if x1 <= x0:
            return 0.0
        return integrate.dblquad(lambda y, x: density(x, y, mx, my, sx, sy), x0, x1, lo, hi,
                                 epsabs=1e-12, epsrel=1e-11)[0]

    def integrand(phi, rho):
        x, y = rho * math.cos(phi), rho * math.sin(phi)
        c = math.hypot(x + dx, y + dy)
        return density(x, y, mx, my, sx, sy) * stats.rice.cdf(r / tau, c / tau) * rho

    return integrate.dblquad(integrand, 0.0, r, 0.0, 2 * math.pi, epsabs=1e-11, epsrel=1e-10)[0]


failures = []
counts = {}
with open(sys.argv[1]) as f:
    for number, line in enumerate(f, 1):
        parts = line.split()
        if not parts:
            continue
        kind, v = parts[0], [float(x) for x in parts[1:]]
        counts[kind] = counts.get(kind, 0) + 1
        if kind == "disk":
            mx, my, sx, sy, r, p = v
            ref = disk_reference(mx, my, sx, sy, r)
            if abs(ref - p) > TOL_P:
                failures.append(f"line {number}: disk {p!r} vs scipy {ref!r}")
        elif kind == "both":
            mx, my, sx, sy, dx, dy, tau, r, p = v
            ref = both_reference(mx, my, sx, sy, dx, dy, tau, r)
            if abs(ref - p) > TOL_P:
                failures.append(f"line {number}: both ends {p!r} vs scipy {ref!r}")
        elif kind == "top":
            bx, by, sx, sy, p, median, q = v
            for prob, diameter in ((0.5, median), (p, q)):
                ref = disk_reference(bx, by, sx, sy, diameter / 2)
                if abs(ref - prob) > TOL_Q:
                    failures.append(f"line {number}: top quantile {diameter!r}: scipy CDF {ref!r}, expected {prob}")
        elif kind == "perpendicularity":
            nu, tau, p, median, q = v
            for prob, value in ((0.5, median), (p, q)):
                ref = stats.rice.cdf(value / tau, nu / tau)
                if abs(ref - prob) > TOL_Q:
                    failures.append(f"line {number}: perpendicularity quantile {value!r}: scipy CDF {ref!r}, expected {prob}")
        else:
            failures.append(f"line {number}: unknown kind {kind!r}")

expected = {"disk": 16, "both": 6, "top": 3, "perpendicularity": 3}
if counts != expected:
    failures.append(f"case counts {counts}, expected {expected}")
if failures:
    print("\n".join(failures))
    sys.exit(1)
print(f"forecast: {sum(counts.values())} cases agree with scipy")
