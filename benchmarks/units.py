"""Benchmark: every index on weighted unit records in many groups, and the bootstrap.

    python benchmarks/units.py            # 10 million records in 10,000 groups
    python benchmarks/units.py --quick    # 1 million records in 1,000 groups

Prints each figure as a ratio to baselines timed in the same run: one ``np.lexsort`` of
the same keys (the floor any sort-based method pays), a plain pandas groupby-apply on a
subsample scaled to the full size, and for the bootstrap the same replicates done by
resampling, re-sorting and recomputing. Times are CPU seconds. The last line is one JSON
object.
"""

from __future__ import annotations

import argparse
import json
import resource
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from explorer.stats.intervals import bootstrap  # noqa: E402
from explorer.stats.measures import STANDARD_INDICES, compute, sort_units  # noqa: E402


def records(n: int, groups: int, seed: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Invented incomes: lognormal with a spread and level per group, in random order."""
    rng = np.random.default_rng(seed)
    codes = rng.integers(0, groups, n)
    sigma = rng.uniform(0.4, 1.0, groups)[codes]
    level = rng.uniform(9.0, 10.5, groups)[codes]
    values = np.exp(level + sigma * rng.standard_normal(n))
    weights = rng.uniform(50.0, 400.0, n)
    return values, weights, codes


def plain_indices(frame: pd.DataFrame) -> pd.Series:
    """One group's indices written the plain way: sort, then sums (the baseline)."""
    frame = frame.sort_values("income")
    y, w = frame["income"].to_numpy(), frame["weight"].to_numpy()
    W = w.sum()
    mu = (w * y).sum() / W
    r = y / mu
    c = np.cumsum(w)
    P = np.concatenate(([0.0], c / W))
    L = np.concatenate(([0.0], np.cumsum(w * y) / (W * mu)))

    def lorenz(p):
        return np.interp(p, P, L)

    out = {
        "gini": (w * y * (2 * c - w)).sum() / (W * W * mu) - 1,
        "theil_t": (w * r * np.log(r)).sum() / W,
        "mld": -(w * np.log(r)).sum() / W,
        "ge_2": ((w * r**2).sum() / W - 1) / 2,
        "atkinson_0.5": 1 - ((w * np.sqrt(r)).sum() / W) ** 2,
        "atkinson_1": 1 - np.exp((w * np.log(r)).sum() / W),
        "atkinson_2": 1 - 1 / ((w / r).sum() / W),
        "cv": np.sqrt((w * (r - 1) ** 2).sum() / W),
        "palma": (1 - lorenz(0.9)) / lorenz(0.4),
        "s80_s20": (1 - lorenz(0.8)) / lorenz(0.2),
        "top10_share": 1 - lorenz(0.9),
        "bottom40_share": lorenz(0.4),
    }
    return pd.Series(out)


def timed(function, *args, **kwargs):
    """CPU seconds of one call (the cores are shared, so CPU time is the fairer clock;
    every step here is single-threaded NumPy, so it matches wall time on an idle machine)."""
    start = time.process_time()
    result = function(*args, **kwargs)
    return time.process_time() - start, result


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="a short run (10x smaller)")
    args = parser.parse_args(argv)
    n, groups = (1_000_000, 1_000) if args.quick else (10_000_000, 10_000)
    boot_n, boot_groups, reps = (100_000, 100, 99) if args.quick else (1_000_000, 1_000, 99)
    indices = STANDARD_INDICES

    values, weights, codes = records(n, groups, seed=1)
    # The same keys sort_units sorts: incomes and the group codes in their narrowest type.
    compact = codes.astype(np.min_scalar_type(groups - 1))
    lexsort_seconds, _ = timed(np.lexsort, (values, compact))
    lexsort64_seconds, _ = timed(np.lexsort, (values, codes))
    sort_seconds, units = timed(sort_units, values, weights, codes)
    compute_seconds, result = timed(compute, units, indices)
    ours = sort_seconds + compute_seconds

    # The plain pandas way on a subsample of whole groups, scaled by the group count.
    sample_groups = max(20, groups // 100)
    keep = codes < sample_groups
    frame = pd.DataFrame({"group": codes[keep], "income": values[keep], "weight": weights[keep]})
    pandas_seconds, table = timed(
        lambda data: data.groupby("group")[["income", "weight"]].apply(plain_indices), frame
    )
    pandas_scaled = pandas_seconds * groups / sample_groups
    # The baseline is also a correctness check: the same numbers, group by group.
    for key in indices:
        np.testing.assert_allclose(
            result[key].value[:sample_groups], table[key].to_numpy(), rtol=1e-8
        )

    print(f"{n:,} records in {groups:,} groups, {len(indices)} indices")
    print(f"  one np.lexsort of (income, group): {lexsort_seconds:8.3f} s")
    print(f"    (with int64 group codes:          {lexsort64_seconds:8.3f} s)")
    print(f"  sort_units:                        {sort_seconds:8.3f} s")
    print(f"  compute (all indices):             {compute_seconds:8.3f} s")
    print(f"  total / one lexsort:               {ours / lexsort_seconds:8.2f}  (aim <= 2)")
    print(
        f"  pandas groupby-apply, {sample_groups} groups: {pandas_seconds:.3f} s, "
        f"scaled {pandas_scaled:.1f} s; speed-up {pandas_scaled / ours:.1f} x  (aim >= 30)"
    )
    # Any method that sorts the records once pays at least the lexsort: the speed-up
    # over this baseline cannot exceed pandas / lexsort.
    print(f"  bound on any one-sort method:      {pandas_scaled / lexsort_seconds:8.1f} x")

    del values, weights, codes, compact, units, result, frame
    values, weights, codes = records(boot_n, boot_groups, seed=2)
    small = sort_units(values, weights, codes)
    point_seconds, _ = timed(compute, small, indices)
    boot_seconds, _ = timed(bootstrap, small, indices, reps=reps, seed=0)
    # The plain way: per replicate draw, rebuild the sample, sort and compute again.
    rng = np.random.default_rng(0)
    naive_reps = 3

    def resort_replicates():
        for _ in range(naive_reps):
            picks = np.concatenate(
                [
                    rng.choice(idx, size=len(idx))
                    for idx in np.split(
                        np.argsort(codes, kind="stable"), np.cumsum(np.bincount(codes))[:-1]
                    )
                ]
            )
            compute(sort_units(values[picks], weights[picks], codes[picks]), indices)

    naive_seconds, _ = timed(resort_replicates)
    naive_scaled = naive_seconds * reps / naive_reps
    print(f"bootstrap: {reps} replicates of {boot_n:,} records in {boot_groups:,} groups")
    print(f"  bootstrap:                         {boot_seconds:8.3f} s")
    print(f"  per replicate / one point compute: {boot_seconds / reps / point_seconds:8.2f}")
    print(
        f"  resample + re-sort each replicate: scaled {naive_scaled:.1f} s; "
        f"speed-up {naive_scaled / boot_seconds:.1f} x"
    )

    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    summary = {
        "name": "units" + ("-quick" if args.quick else ""),
        "seconds": round(ours, 3),
        "peak_memory_mb": round(peak, 1),
        "ratios": {
            "to_one_lexsort": round(ours / lexsort_seconds, 3),
            "to_one_lexsort_int64_codes": round(ours / lexsort64_seconds, 3),
            "pandas_groupby_apply_over_ours": round(pandas_scaled / ours, 1),
            "pandas_groupby_apply_over_one_lexsort": round(pandas_scaled / lexsort_seconds, 1),
            "bootstrap_replicate_to_point_compute": round(boot_seconds / reps / point_seconds, 3),
            "resort_bootstrap_over_ours": round(naive_scaled / boot_seconds, 1),
        },
    }
    print(json.dumps(summary))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
