"""Dagum's Gini decomposition on many units: time against one sort and against brute force.

Run ``python benchmarks/dagum.py`` (1,000,000 units in 50 groups) or ``--quick``
(100,000 units). The last line is one JSON object: name, seconds, peak_memory_mb, ratios.
"""

from __future__ import annotations

import argparse
import json
import resource
import time

import numpy as np

from explorer.stats.decompose import dagum_split


def best_of(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def brute_force(y: np.ndarray, w: np.ndarray, g: np.ndarray, k: int) -> np.ndarray:
    """Every pair of units: the k x k matrix of weighted absolute differences."""
    diff = np.abs(y[:, None] - y[None, :]) * np.outer(w, w)
    onehot = np.eye(k)[g]
    return onehot.T @ diff @ onehot


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="100,000 units instead of 1,000,000")
    args = parser.parse_args()
    n = 100_000 if args.quick else 1_000_000
    k, sub = 50, 4_000
    rng = np.random.default_rng(0)
    y = rng.lognormal(0.0, 0.8, n) * rng.uniform(0.5, 2.0, k)[rng.integers(0, k, n)]
    w = rng.integers(1, 5, n).astype(float)
    g = rng.integers(0, k, n)

    repeat = 3
    sort_s = best_of(lambda: np.sort(y), repeat)
    dagum_s = best_of(lambda: dagum_split(y, w, g), repeat)
    brute_sub_s = best_of(lambda: brute_force(y[:sub], w[:sub], g[:sub], k), 1)
    fast_sub_s = best_of(lambda: dagum_split(y[:sub], w[:sub], g[:sub]), repeat)
    brute_scaled = brute_sub_s * (n / sub) ** 2  # pairs grow with n squared

    split = dagum_split(y, w, g)
    print(f"units {n:,} in {k} groups")
    print(f"one np.sort            {sort_s:8.3f} s")
    print(f"dagum_split            {dagum_s:8.3f} s   ({dagum_s / sort_s:.2f} x the sort)")
    print(f"brute force, {sub:,} units {brute_sub_s:8.3f} s (dagum_split there {fast_sub_s:.4f} s)")
    print(
        f"brute force scaled to n {brute_scaled:8.1f} s   ({brute_scaled / dagum_s:,.0f} x slower)"
    )
    print(
        f"Gini {split.total:.6f} = within {split.within:.6f} + between {split.between:.6f}"
        f" + overlap {split.overlap:.6f}"
    )
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(
        json.dumps(
            {
                "name": "dagum",
                "seconds": round(dagum_s, 4),
                "peak_memory_mb": round(peak, 1),
                "ratios": {
                    "to_one_sort": round(dagum_s / sort_s, 2),
                    "brute_force_scaled_to_this": round(brute_scaled / dagum_s, 1),
                },
            }
        )
    )


if __name__ == "__main__":
    main()
