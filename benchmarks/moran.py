"""Moran's I with 999 permutations on 5,000 districts: batched against a per-permutation loop.

Run ``python benchmarks/moran.py`` (a 50 x 100 grid of square districts, rook contiguity)
or ``--quick`` (20 x 50). The baselines are measured in the same run: one sparse
matrix-vector product, and the same permutations done one at a time in a Python loop.
The last line is one JSON object: name, seconds, peak_memory_mb, ratios.
"""

from __future__ import annotations

import argparse
import json
import resource
import time

import geopandas as gpd
import numpy as np
import shapely

from explorer.stats import spatial


def best_of(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="1,000 districts instead of 5,000")
    args = parser.parse_args()
    rows, cols = (20, 50) if args.quick else (50, 100)
    n, permutations = rows * cols, 999
    x, y = np.tile(np.arange(cols), rows), np.repeat(np.arange(rows), cols)
    frame = gpd.GeoDataFrame(
        {"region": [f"d{i}" for i in range(n)]},
        geometry=shapely.box(x, y, x + 1, y + 1),
        crs="EPSG:3857",
    )
    rng = np.random.default_rng(0)
    values = rng.lognormal(size=n) + np.linspace(0, 2, n)  # a mild trend: I > 0

    graph_s = best_of(lambda: spatial.neighbours(frame, "rook"), 1)
    graph = spatial.neighbours(frame, "rook")
    w = graph.matrix.multiply(1.0 / graph.cardinalities()[:, None]).tocsr()
    z = values - values.mean()
    matvec_s = best_of(lambda: w @ z, 20)

    def loop():
        loop_rng = np.random.default_rng(1)
        zz = z @ z
        out = np.empty(permutations)
        for r in range(permutations):
            p = loop_rng.permutation(z)
            out[r] = (p @ (w @ p)) / zz  # n / S0 = 1 for row-standardised weights
        return out

    def shuffles_only():
        shuffle_rng = np.random.default_rng(1)
        return [shuffle_rng.permutation(z) for _ in range(permutations)]

    batched_s = best_of(lambda: spatial.moran(values, graph, permutations, seed=1), 3)
    shuffle_s = best_of(shuffles_only, 3)
    loop_s = best_of(loop, 1)
    local_s = best_of(lambda: spatial.local_moran(values, graph, permutations, seed=1), 1)
    result = spatial.moran(values, graph, permutations, seed=1)
    print(f"districts {n:,}, rook contiguity, {permutations} permutations")
    print(f"neighbour graph (STRtree)     {graph_s:8.3f} s")
    print(f"one sparse mat-vec            {matvec_s * 1000:8.3f} ms")
    print(
        f"global Moran, batched         {batched_s:8.3f} s "
        f"({batched_s / matvec_s:,.0f} mat-vecs; {loop_s / batched_s:.1f} x faster than the loop)"
    )
    print(f"global Moran, loop            {loop_s:8.3f} s")
    print(
        f"the {permutations} shuffles alone      {shuffle_s:8.3f} s (the floor for any exact test)"
    )
    print(f"local Moran, all districts    {local_s:8.3f} s")
    print(
        f"I = {result.i:.4f}, E[I] = {result.expected:.5f}, z = {result.z:.2f}, "
        f"p = {result.p_value:.4f}"
    )
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(
        json.dumps(
            {
                "name": "moran",
                "seconds": round(batched_s, 4),
                "peak_memory_mb": round(peak, 1),
                "ratios": {
                    "to_one_matvec": round(batched_s / matvec_s, 1),
                    "loop_over_batched": round(loop_s / batched_s, 2),
                    "local_to_global": round(local_s / batched_s, 2),
                    "batched_to_shuffles_alone": round(batched_s / shuffle_s, 2),
                },
            }
        )
    )


if __name__ == "__main__":
    main()
