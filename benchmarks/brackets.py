"""Batched Lorenz fits and indices on many district-years, as ratios to a per-row loop.

Usage: python benchmarks/brackets.py [--quick]

200,000 district-years of decile shares (20,000 with --quick), drawn from lognormal
curves with random sigma. For every Lorenz method the batched path (``fit_points`` plus
every default index) is timed on all rows; the baseline does the same work one row at a
time with the usual per-row tools (scipy's PchipInterpolator, numpy.linalg.lstsq,
scipy.optimize.least_squares, numpy on each row's grid) on a subsample, and is scaled to
the full size. It also times the whole tidy table (``indices.compute`` with ``auto``, bounds
and notes included) against the batched fit alone. The last line is one JSON object: name,
seconds, peak_memory_mb, ratios (per method: per-row baseline CPU time / batched CPU time,
higher is better; ``table_over_fit_auto``: table time / fit time, lower is better).
"""

from __future__ import annotations

import argparse
import json
import resource
import sys
import time
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
from scipy import interpolate, optimize, special

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from explorer.stats import indices, lorenz  # noqa: E402

KEYS = indices.DEFAULT_INDICES
GRID = lorenz.PROBIT_GRID


def decile_points(n: int, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """Exact decile points of lognormal curves, sigma uniform on (0.3, 1.2)."""
    sigma = np.random.default_rng(seed).uniform(0.3, 1.2, n)
    P = np.linspace(0, 1, 11)
    L = special.ndtr(special.ndtri(P)[None, :] - sigma[:, None])
    L[:, 0], L[:, -1] = 0.0, 1.0
    return np.broadcast_to(P, L.shape).copy(), L


# ------------------------------------------------------------------ per-row baseline


def _row_indices(y, w, share_at):
    """Every default index of one row from relative incomes on a grid (plain numpy)."""
    out = {}
    with np.errstate(divide="ignore", invalid="ignore"):
        out["theil_t"] = np.sum(w * special.xlogy(y, y))
        out["mld"] = -np.sum(w * np.log(y))
        out["ge_2"] = (np.sum(w * y * y) - 1) / 2
        out["atkinson_0.5"] = 1 - np.sum(w * np.sqrt(y)) ** 2
        out["atkinson_1"] = 1 - np.exp(np.sum(w * np.log(y)))
        out["atkinson_2"] = 1 - 1 / np.sum(w / y)
        out["cv"] = np.sqrt(np.sum(w * (y - 1) ** 2))
    s = share_at(np.array([0.2, 0.4, 0.8, 0.9]))
    out["palma"] = (1 - s[3]) / s[1]
    out["s80_s20"] = (1 - s[2]) / s[0]
    out["top10_share"] = 1 - s[3]
    out["bottom40_share"] = s[1]
    return out


def baseline_row(method: str, P: np.ndarray, L: np.ndarray) -> dict:
    """One row's fit and indices the ordinary way."""
    p, q = GRID.p, GRID.q
    if method == "linear":
        s = np.diff(L) / np.diff(P)
        out = _row_indices(s, np.diff(P), lambda x: np.interp(x, P, L))
        out["gini"] = 1 - np.sum(np.diff(P) * (L[1:] + L[:-1]))
        return out
    if method == "upper":
        s = np.diff(L) / np.diff(P)
        k = len(s)
        lengths, slopes = [], []
        for i in range(k):  # per bracket: left chord slope, then right chord slope
            left = s[i - 1] if i > 0 else 0.0
            right = s[i + 1] if i < k - 1 else np.inf
            x = (P[i + 1] - P[i]) * (1.0 if np.isinf(right) else (right - s[i]) / (right - left))
            lengths += [x, P[i + 1] - P[i] - x]
            slopes += [left, right if np.isfinite(right) else 1.0]
        out = _row_indices(np.array(slopes), np.array(lengths), lambda x: np.interp(x, P, L))
        out["gini"] = np.nan
        return out
    if method == "pchip":
        curve = interpolate.PchipInterpolator(P, L)
        slope = curve.derivative()
        t, wt = np.polynomial.legendre.leggauss(16)
        nodes = (P[:-1, None] + np.diff(P)[:, None] * (t + 1) / 2).ravel()
        weights = (np.diff(P)[:, None] * wt / 2).ravel()
        out = _row_indices(slope(nodes), weights, curve)
        out["gini"] = 1 - 2 * curve.integrate(0, 1)
        return out
    if method in ("gq", "beta"):
        pi, li = P[1:-1], L[1:-1]
        if method == "gq":
            X = np.column_stack([pi * pi - li, li * (pi - 1), pi - li])
            a, b, c = np.linalg.lstsq(X, li * (1 - li), rcond=None)[0]
            e, m, n = -(a + b + c + 1), b * b - 4 * a, 2 * b * (-(a + b + c + 1)) - 4 * c
            root = np.sqrt(np.maximum(m * p * p + n * p + e * e, 0))
            y = -(b + (2 * m * p + n) / (2 * root)) / 2

            def share(x):
                return -(b * x + e + np.sqrt(m * x * x + n * x + e * e)) / 2
        else:
            X = np.column_stack([np.ones_like(pi), np.log(pi), np.log1p(-pi)])
            coef = np.linalg.lstsq(X, np.log(pi - li), rcond=None)[0]
            theta, g, d = np.exp(coef[0]), coef[1], coef[2]
            y = 1 - theta * p**g * q**d * (g / p - d / q)

            def share(x):
                return x - theta * x**g * (1 - x) ** d

        out = _row_indices(np.maximum(y, 0), GRID.weights, share)
        out["gini"] = 1 - 2 * np.sum(GRID.weights * share(p))
        return out
    if method == "quadratic":
        a = np.linalg.lstsq((P * P - P)[:, None], L - P, rcond=None)[0][0]
        out = _row_indices(1 - a + 2 * a * p, GRID.weights, lambda x: (1 - a) * x + a * x * x)
        out["gini"] = a / 3
        return out
    if method == "lognormal":
        z, target = special.ndtri(P[1:-1]), L[1:-1]
        sigma = optimize.least_squares(
            lambda s: special.ndtr(z - s[0]) - target, x0=[0.5], bounds=(0, np.inf)
        ).x[0]
        out = _row_indices(np.exp(sigma * GRID.z - sigma**2 / 2), GRID.weights, lambda x: x)
        out["gini"] = 2 * special.ndtr(sigma / np.sqrt(2)) - 1
        return out
    # auto: every candidate, then the choice
    return [baseline_row(m, P, L) for m in ("gq", "beta", "lognormal", "quadratic", "pchip")]


def timed(action, repeats: int = 1) -> float:
    """Best CPU time of this process over ``repeats`` runs.

    CPU time rather than wall time: the machine is shared, and waiting for a core is not
    the code's cost. Both sides of every ratio are measured the same way.
    """
    best = np.inf
    for _ in range(repeats):
        start = time.process_time()
        action()
        best = min(best, time.process_time() - start)
    return best


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="20,000 district-years")
    args = parser.parse_args()
    n = 20_000 if args.quick else 200_000
    sub = 100 if args.quick else 300
    P, L = decile_points(n)
    started = time.perf_counter()
    ratios, lines = {}, []
    print(f"{n:,} district-years of deciles, {len(KEYS)} indices; CPU seconds", flush=True)
    for method in lorenz.METHODS:
        batched = timed(lambda m=method: lorenz.fit_points(P, L, m).indices(KEYS), repeats=2)
        per_row = timed(lambda m=method: [baseline_row(m, P[i], L[i]) for i in range(sub)])
        scaled = per_row / sub * n
        ratios[method] = round(scaled / batched, 1)
        lines.append(
            f"{method:>10}: batched {batched:7.2f} s for {n:,} rows "
            f"({batched / n * 1e6:6.1f} us/row); per-row loop {per_row / sub * 1e6:8.1f} us/row "
            f"-> {ratios[method]:>7.1f} x"
        )
        print(lines[-1], flush=True)
    # The whole tidy table for auto (panel -> fits -> bounds -> DataFrame), against the
    # batched fit and indices alone: the cost of the bounds, notes and table building.
    k = P.shape[1] - 1
    data = pd.DataFrame(
        {
            "region": np.repeat([f"D{i:06d}" for i in range(n)], k),
            "year": 2020,
            "bracket": np.tile(np.arange(1, k + 1), n),
            "pop_share": np.diff(P, axis=1).ravel(),
            "income_share": np.diff(L, axis=1).ravel(),
        }
    )
    panel = SimpleNamespace(kind="brackets", data=data)
    table_time = timed(lambda: indices.compute(panel, methods=("auto",)))
    fit_time = timed(lambda: lorenz.fit_points(P, L, "auto").indices(KEYS))
    ratios["table_over_fit_auto"] = round(table_time / fit_time, 2)
    print(
        f"indices.compute(auto) table of {n * len(KEYS):,} rows: {table_time:.2f} s "
        f"({ratios['table_over_fit_auto']} x the batched fit and indices alone)"
    )
    total = time.perf_counter() - started
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(
        json.dumps(
            {
                "name": "brackets",
                "rows": n,
                "seconds": round(total, 2),
                "peak_memory_mb": round(peak, 1),
                "ratios": ratios,
            }
        )
    )


if __name__ == "__main__":
    main()
