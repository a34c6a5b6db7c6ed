"""Batched poverty measures of many district-years of deciles, as ratios to a per-row loop.

Usage: python benchmarks/poverty.py [--quick]

200,000 district-years of decile shares (20,000 with --quick), drawn from lognormal curves
with random sigma, and a line at a random fraction of each mean. For each Lorenz method the
batched path (:func:`explorer.stats.poverty_curves.from_points`: the fit and every poverty
measure, plus the bounds) is timed on all rows; the baseline runs the same function one row
at a time, in a Python loop, on a subsample, scaled to the full size. Rank intervals from
bounds are timed for 5,000 districts. The last line is one JSON object: name, seconds,
peak_memory_mb, ratios (per method: per-row CPU time / batched CPU time, higher is
better) and rank_seconds.
"""

from __future__ import annotations

import argparse
import json
import resource
import sys
import time
import warnings
from pathlib import Path

import numpy as np
from scipy import integrate, optimize, special

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from explorer.stats import lorenz, poverty_curves, ranks  # noqa: E402

METHODS = ("lognormal", "gq", "beta", "quadratic", "pchip", "linear", "upper", "auto")


def decile_points(n: int, seed: int = 0):
    """Exact decile points of lognormal curves, sigma uniform on (0.3, 1.2), and lines."""
    rng = np.random.default_rng(seed)
    sigma = rng.uniform(0.3, 1.2, n)
    P = np.linspace(0, 1, 11)
    L = special.ndtr(special.ndtri(P)[None, :] - sigma[:, None])
    L[:, 0], L[:, -1] = 0.0, 1.0
    return np.broadcast_to(P, L.shape).copy(), L, rng.uniform(0.3, 1.0, n)


def cpu(action) -> float:
    start = time.process_time()
    action()
    return time.process_time() - start


def batched(P, L, r, method):
    poverty_curves.from_points(P, L, r, method)
    poverty_curves.bounds(P, L, r)


def scipy_row(P, L, r, method):
    """One row with the usual per-row tools: root finding and adaptive quadrature."""
    fits = lorenz.fit_points(P, L, method)

    def slope(p):
        return float(fits.slope([p])[0, 0])

    if not fits.valid[0] or slope(1e-9) >= r or slope(1 - 1e-9) <= r:
        return None
    h = optimize.brentq(lambda p: slope(p) - r, 1e-9, 1 - 1e-9)
    fgt1 = h - float(fits.evaluate([h])[0, 0]) / r
    fgt2 = integrate.quad(lambda p: (1 - max(slope(p), 0) / r) ** 2, 0, h)[0]
    watts = integrate.quad(lambda p: np.log(r / max(slope(p), 1e-300)), 0, h)[0]
    sen = 2 / h * integrate.quad(lambda p: (h - p) * (1 - max(slope(p), 0) / r), 0, h)[0]
    poverty_curves.bounds(P, L, np.array([r]))
    return h, fgt1, fgt2, watts, sen


def per_row_scipy(P, L, r, method):
    for i in range(P.shape[0]):
        scipy_row(P[i : i + 1], L[i : i + 1], r[i], method)


def per_row(P, L, r, method):
    for i in range(P.shape[0]):
        batched(P[i : i + 1], L[i : i + 1], r[i : i + 1], method)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="20,000 rows instead of 200,000")
    args = parser.parse_args()
    # quad warns at the kinks of piecewise curves; the baseline's accuracy is not measured
    warnings.simplefilter("ignore", integrate.IntegrationWarning)
    n = 20_000 if args.quick else 200_000
    sample = 200 if args.quick else 500
    P, L, r = decile_points(n)
    began = time.perf_counter()
    ratios, same = {}, {}
    rows, few = slice(0, sample), slice(0, sample // 10)
    for method in METHODS:
        fast = cpu(lambda m=method: batched(P, L, r, m))
        loop = cpu(lambda m=method: per_row(P[rows], L[rows], r[rows], m)) * n / sample
        tools = cpu(lambda m=method: per_row_scipy(P[few], L[few], r[few], m)) * n / (sample // 10)
        ratios[method], same[method] = round(tools / fast, 1), round(loop / fast, 1)
        print(
            f"{method:10s} batched {fast:6.2f} s  per-row scipy (scaled) {tools:8.1f} s "
            f"x{tools / fast:6.1f}  same code per row (scaled) {loop:7.1f} s x{loop / fast:5.1f}"
        )
    rng = np.random.default_rng(1)
    v = rng.normal(size=5000)
    half = rng.uniform(0, 0.2, 5000)
    rank_seconds = cpu(lambda: ranks.from_bounds(v, v - half, v + half))
    print(f"rank intervals from bounds, 5,000 districts: {rank_seconds:.4f} s")
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(
        json.dumps(
            {
                "name": "poverty",
                "seconds": round(time.perf_counter() - began, 2),
                "peak_memory_mb": round(peak, 1),
                "ratios": ratios,
                "same_code_ratios": same,
                "rank_seconds": round(rank_seconds, 4),
            }
        )
    )


if __name__ == "__main__":
    main()
