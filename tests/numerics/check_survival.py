#!/usr/bin/python3
"""Kaplan-Meier survival, Greenwood's standard error and the Brookmeyer-Crowley interval of the
median (stats/survival.hpp) against an independent computation from the published formulas,
on synthetic censored samples.

Formulas (published): Kaplan & Meier (1958) J. Am. Stat. Assoc. 53, 457, the product-limit
estimate S(t) = prod_{t_j <= t} (1 - d_j / n_j) with n_j the units at risk just before t_j
(censored units at risk at their own time); Greenwood (1926), Var S(t) = S(t)^2
sum_{t_j <= t} d_j / (n_j (n_j - d_j)); Brookmeyer & Crowley (1982) Biometrics 38, 29, the
median's interval {t : |S(t) - 1/2| <= z se(t)}, z = 1.959964, read at the failure times as
the first time where S - z se (lower end) and S + z se (upper end) reach 1/2.

Here the computation runs unit by unit over the sorted samples (not from counts per time, as
the C++ code does), with S in exact rational arithmetic (Python's fractions), and the two must
agree to rounding (1e-12: the products and sums are the
same few hundred operations in another order).
Usage: check_survival.py SURVIVAL_PROBE
"""
import subprocess
import sys
from fractions import Fraction

import numpy as np

Z = 1.959963984540054  # scipy.stats.norm.ppf(0.975)


def reference(times, failed):
    """S, se at each distinct time, from the individual samples; and median, low, high."""
    order = np.argsort(times, kind="stable")
    times, failed = times[order], failed[order]
    grid = np.unique(times)
    S, g = Fraction(1), 0.0
    exact, surv, se = [], [], []
    for t in grid:
        at_risk = int(np.sum(times >= t))
        d = int(np.sum((times == t) & failed))
        if d > 0:
            S *= 1 - Fraction(d, at_risk)
            if at_risk > d:
                g += d / (at_risk * (at_risk - d))
        exact.append(S)
        surv.append(float(S))
        se.append(float(S) * np.sqrt(g) if S > 0 else 0.0)
    surv, se = np.array(surv), np.array(se)

    def first(mask):
        hits = np.nonzero(mask)[0]
        return grid[hits[0]] if hits.size else np.nan

    median = first(np.array([s <= Fraction(1, 2) for s in exact]))
    return grid, surv, se, (median, first(surv - Z * se <= 0.5), first(surv + Z * se <= 0.5))


def probe(program, grid, times, failed):
    lines = []
    for t in grid:
        at = times == t
        lines.append(f"{t!r} {np.sum(at & failed)} {np.sum(at & ~failed)}")
    out = subprocess.run([program], input="\n".join(lines) + "\n", capture_output=True,
                         text=True, check=True).stdout.split("\n")
    rows = np.array([[float(v) for v in line.split()] for line in out[:len(grid)]])
    median = [float(v) for v in out[len(grid)].split()[1:]]
    return rows[:, 1], rows[:, 2], median


def check(name, program, times, failed):
    grid, surv, se, median = reference(times, failed)
    got_s, got_se, got_median = probe(program, grid, times, failed)
    assert np.allclose(got_s, surv, rtol=1e-12, atol=1e-15), (name, got_s, surv)
    assert np.allclose(got_se, se, rtol=1e-12, atol=1e-15), (name, got_se, se)
    for a, b in zip(got_median, median):
        assert (np.isnan(a) and np.isnan(b)) or a == b, (name, got_median, median)
    print(f"{name}: {len(times)} units, {failed.sum()} failures, {len(grid)} times; "
          f"median {median[0]:.4g} [{median[1]:.4g}, {median[2]:.4g}] agrees")
    return median


def main():
    program = sys.argv[1]
    rng = np.random.default_rng(20261204)
    # Random censoring: exponential failure and censoring times on a grid of 0.1 (ties).
    fail = np.round(rng.exponential(10.0, 300), 1)
    cens = np.round(rng.exponential(25.0, 300), 1)
    times = np.minimum(fail, cens)
    check("random censoring", program, times, fail <= cens)
    # Censoring only at the end of a window, as for twin pairs never separated.
    fail = np.round(rng.normal(80.0, 15.0, 256), 1)
    times = np.minimum(fail, 100.0)
    m = check("censored at the window's end", program, times, fail < 100.0)
    assert np.isfinite(m[0])
    # Most units censored: no median, an interval that is open above.
    fail = np.round(rng.normal(150.0, 30.0, 200), 1)
    times = np.minimum(fail, 100.0)
    m = check("mostly censored", program, times, fail < 100.0)
    assert np.isnan(m[0]) and np.isnan(m[2])
    # One failure at each time 1..24, no censoring: S(12) is 1/2 exactly (the median is 12, the
    # 12th order statistic), which a running product of ratios rounds a few ulps above 1/2.
    times = np.arange(1, 25, dtype=float)
    m = check("a survival of exactly one half", program, times, np.ones(24, dtype=bool))
    assert m[0] == 12.0, m
    # Small sample with heavy ties and a failure at the last time.
    times = np.array([1, 1, 2, 2, 2, 3, 4, 4, 5, 5], dtype=float)
    failed = np.array([1, 0, 1, 1, 0, 1, 0, 1, 1, 1], dtype=bool)
    check("ties", program, times, failed)


if __name__ == "__main__":
    main()
