"""Carrying a panel of deciles across one boundary change, as a ratio to one batched fit.

Usage: python benchmarks/harmonise.py [--quick]

3,000 generated districts x 20 years of decile shares (300 x 20 with --quick), seeded and
synthetic: exact lognormal decile shares with random sigma, means and populations. In the
tenth year a new vintage starts: a tenth of the districts split in two, a fifth merge in
pairs, a fifth lose a tenth of themselves to a neighbour (moved borders), the rest carry
on. The first ten years are carried to the new vintage with
:func:`explorer.stats.harmonise.harmonise` (the later ten are already on it). The baseline
is one batched ``auto`` Lorenz fit of the same panel (``lorenz.fit_panel``), measured in
the same run. The last line is one JSON object: name, seconds, peak_memory_mb, ratios
(``harmonise_over_fit``: harmonise time / fit time, lower is better) and the counts of
district-years carried each way. Target: harmonise under 5 s on the full size.
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
from scipy import special

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from explorer.data.model import Panel, fingerprint  # noqa: E402
from explorer.data.vintages import changes_from_frame  # noqa: E402
from explorer.stats import lorenz  # noqa: E402
from explorer.stats.harmonise import harmonise, way  # noqa: E402

CHANGE = 2010


def _changes(n: int, rng) -> tuple[pd.DataFrame, list[str], list[str]]:
    """Change rows, the old ids and the new ids."""
    old = [f"D{i:05d}" for i in range(n)]
    order = rng.permutation(n)
    splits = order[: n // 10]
    merges = order[n // 10 : n // 10 + n // 5]
    moved = order[n // 10 + n // 5 : n // 10 + 2 * (n // 5)]
    rows = []
    for i in splits:
        share = rng.uniform(0.2, 0.8)
        rows += [(old[i], f"{old[i]}N", share), (old[i], f"{old[i]}S", 1 - share)]
    for a, b in merges.reshape(-1, 2):
        rows += [(old[a], f"M{old[a]}", 1.0), (old[b], f"M{old[a]}", 1.0)]
    for a, b in moved.reshape(-1, 2):
        rows += [(old[a], old[a], 0.9), (old[a], old[b], 0.1)]
    frame = pd.DataFrame(rows, columns=["from", "to", "weight"]).assign(year=CHANGE)
    changed = set(frame["from"])
    new = sorted((set(old) - changed) | set(frame["to"]))
    return frame, old, new


def _deciles(ids: list[str], years: range, rng) -> pd.DataFrame:
    n = len(ids) * len(years)
    sigma = rng.uniform(0.3, 1.0, n)
    p = np.linspace(0, 1, 11)
    curve = special.ndtr(special.ndtri(p)[None, :] - sigma[:, None])
    curve[:, 0], curve[:, -1] = 0.0, 1.0
    shares = np.diff(curve, axis=1)
    region = np.repeat(np.repeat(np.asarray(ids, dtype=object), len(years)), 10)
    year = np.repeat(np.tile(np.asarray(years, dtype=np.int64), len(ids)), 10)
    return pd.DataFrame(
        {
            "region": region,
            "year": year,
            "bracket": np.tile(np.arange(1, 11), n),
            "pop_share": 0.1,
            "income_share": shares.ravel(),
            "population": np.repeat(rng.uniform(1e3, 1e5, n).round(), 10),
            "mean_income": np.repeat(rng.uniform(8e3, 4e4, n), 10),
        }
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    args = parser.parse_args()
    n = 300 if args.quick else 3000
    rng = np.random.default_rng(16)
    frame, old, new = _changes(n, rng)
    data = pd.concat(
        [_deciles(old, range(2000, CHANGE), rng), _deciles(new, range(CHANGE, 2020), rng)],
        ignore_index=True,
    ).sort_values(["region", "year", "bracket"], ignore_index=True)
    hierarchy = pd.DataFrame({"region": pd.unique(data["region"])})
    panel = Panel(
        "brackets", data, hierarchy=hierarchy, fingerprint=fingerprint("brackets", data, hierarchy)
    )
    changes = changes_from_frame(frame, "generated changes")

    small = data[data["region"].isin(set(old[:20]))]
    lorenz.fit_panel(Panel("brackets", small), "auto")  # warm-up: imports and first calls
    start = time.perf_counter()
    lorenz.fit_panel(panel, "auto")
    fit_seconds = time.perf_counter() - start

    start = time.perf_counter()
    result = harmonise(panel, changes, CHANGE)
    seconds = time.perf_counter() - start

    ways = way(result.carried["how"]).value_counts().to_dict()
    print(
        f"districts {n} (old) / {len(new)} (new), years 20, district-years "
        f"{data.groupby(['region', 'year']).ngroups}"
    )
    print(f"one batched auto fit of the panel: {fit_seconds:.2f} s")
    print(
        f"harmonise to the {CHANGE} vintage: {seconds:.2f} s "
        f"({seconds / fit_seconds:.2f} x the fit); carried: {ways}"
    )
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(
        json.dumps(
            {
                "name": "harmonise",
                "seconds": round(seconds, 3),
                "peak_memory_mb": round(peak, 1),
                "ratios": {"harmonise_over_fit": round(seconds / fit_seconds, 3)},
                "fit_seconds": round(fit_seconds, 3),
                "carried": {k: int(v) for k, v in ways.items()},
            }
        )
    )


if __name__ == "__main__":
    main()
