"""Unit-record engines on generated Parquet: peak memory and time, DuckDB and Dask vs memory.

Usage:
    python benchmarks/engines.py [--records 2e6] [--groups 2000] [--files 4]
                                 [--dask-records 1e6] [--memory-max 2e7]

The full-size run (10^8 records in 10^4 district-years; the memory engine only on the
largest input that fits, here 2 * 10^7):
    python benchmarks/engines.py --records 1e8 --groups 1e4 --files 50 \\
        --dask-records 1e7 --memory-max 2e7

Every measurement runs in a fresh process, so its peak resident memory (``ru_maxrss``) is
its own. Measured: the DuckDB engine on the whole input, the memory engine (when the
input is at most ``--memory-max`` records, otherwise on the first files up to that size,
and DuckDB once more on those same files), one DuckDB sort of the data by district-year
written to Parquet (the floor for any engine that must bring groups together), and the
Dask engine on a local two-worker loopback cluster on ``--dask-records`` records against
the memory engine on the same records, with the largest difference between their tables.
The generated records are invented (district codes like ``QZ0001``). The last line is one
JSON object: name, seconds, peak_memory_mb, ratios, max_difference.
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

INDICES = "gini,theil_t,mld,atkinson_1,palma"
CHUNK = 1_000_000  # records generated and written at a time: the generator's memory bound


def generate(folder: Path, records: int, groups: int, files: int, seed: int) -> list[Path]:
    """Invented lognormal incomes; every district-year spread over every file."""
    import numpy as np
    import pyarrow as pa
    import pyarrow.parquet as pq

    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    names = pa.array([f"QZ{g // 10:04d}" for g in range(groups)])
    years = np.array([2000 + g % 10 for g in range(groups)], dtype=np.int64)
    per_file = -(-records // files)
    paths = []
    for f in range(files):
        path = folder / f"part{f:03d}.parquet"
        todo = min(per_file, records - f * per_file)
        with pq.ParquetWriter(path, _schema()) as writer:
            while todo > 0:
                n = min(CHUNK, todo)
                code = rng.integers(0, groups, n)
                writer.write_table(
                    pa.table(
                        {
                            "region": names.take(pa.array(code)),
                            "year": years[code],
                            "income": rng.lognormal(7.5, 0.7, n),
                            "weight": rng.uniform(0.5, 3.0, n),
                        },
                        schema=_schema(),
                    )
                )
                todo -= n
        paths.append(path)
    return paths


def _schema():
    import pyarrow as pa

    return pa.schema(
        [
            ("region", pa.string()),
            ("year", pa.int64()),
            ("income", pa.float64()),
            ("weight", pa.float64()),
        ]
    )


# ---------------------------------------------------------------------------- child side


def _child(args) -> None:
    """One measurement in this process: prints seconds and peak memory as JSON."""
    files = [Path(p) for p in args.paths]
    start = time.perf_counter()
    if args.child == "sort":
        import duckdb

        con = duckdb.connect(config={"memory_limit": args.memory_limit, "threads": 2})
        con.execute("SET enable_progress_bar = false")
        listed = ", ".join(f"'{p}'" for p in files)
        con.execute(
            f"COPY (SELECT * FROM read_parquet([{listed}]) ORDER BY region, year) "
            f"TO '{args.out}' (FORMAT parquet)"
        )
    else:
        from explorer.stats import engines

        table = engines.compute_units(
            files,
            args.child,
            args.indices.split(","),
            batch_rows=args.batch_rows,
            memory_limit=args.memory_limit,
        )
        table.to_parquet(args.out)
    seconds = time.perf_counter() - start
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(json.dumps({"seconds": seconds, "peak_memory_mb": peak}))


def _measure(what: str, files: list[Path], out: Path, args) -> dict:
    command = [sys.executable, __file__, "--child", what, "--out", str(out)]
    command += ["--indices", args.indices, "--batch-rows", str(args.batch_rows)]
    command += ["--memory-limit", args.memory_limit, "--paths", *map(str, files)]
    done = subprocess.run(command, capture_output=True, text=True, cwd=ROOT)
    if done.returncode:
        sys.exit(f"{what} failed:\n{done.stderr[-3000:]}")
    got = json.loads([line for line in done.stdout.splitlines() if line.startswith("{")][-1])
    print(f"{what:>16}: {got['seconds']:8.2f} s, peak {got['peak_memory_mb']:8.0f} MB")
    return got


def _difference(a: Path, b: Path) -> float:
    import numpy as np
    import pandas as pd

    x, y = pd.read_parquet(a), pd.read_parquet(b)
    if len(x) != len(y) or (x["region"].to_numpy() != y["region"].to_numpy()).any():
        return float("inf")
    diff = np.abs(x["value"].to_numpy() - y["value"].to_numpy())
    same_nan = np.isnan(x["value"].to_numpy()) == np.isnan(y["value"].to_numpy())
    return float(np.nanmax(diff)) if same_nan.all() else float("inf")


def _count(files: list[Path]) -> int:
    import pyarrow.parquet as pq

    return sum(pq.read_metadata(p).num_rows for p in files)


def _prefix(files: list[Path], limit: int) -> list[Path]:
    """The first files holding at most ``limit`` records (at least one file)."""
    import pyarrow.parquet as pq

    chosen, total = [], 0
    for path in files:
        n = pq.read_metadata(path).num_rows
        if chosen and total + n > limit:
            break
        chosen.append(path)
        total += n
    return chosen


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--records", type=float, default=2e6)
    parser.add_argument("--groups", type=float, default=2000)
    parser.add_argument("--files", type=int, default=4)
    parser.add_argument("--dask-records", type=float, default=1e6)
    parser.add_argument("--memory-max", type=float, default=2e7)
    parser.add_argument("--batch-rows", type=int, default=500_000)
    parser.add_argument("--memory-limit", default="1GB")
    parser.add_argument("--indices", default=INDICES)
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument("--folder", help="where to write the data (a temporary folder by default)")
    parser.add_argument("--child", help=argparse.SUPPRESS)
    parser.add_argument("--out", help=argparse.SUPPRESS)
    parser.add_argument("--paths", nargs="*", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        _child(args)
        return
    with tempfile.TemporaryDirectory(prefix="rift-bench-", dir=args.folder) as scratch:
        run(Path(scratch), args)


def run(folder: Path, args) -> None:
    """Generate the data, measure each engine in its own process, print ratios and JSON."""
    records, groups = int(args.records), int(args.groups)
    files = generate(folder / "big", records, groups, args.files, args.seed)
    size_mb = sum(p.stat().st_size for p in files) / 2**20
    print(f"{records:,} records, {groups:,} district-years, {len(files)} files, {size_mb:.0f} MB")
    got = {"duckdb": _measure("duckdb", files, folder / "duckdb.parquet", args)}
    got["sort"] = _measure("sort", files, folder / "sorted.parquet", args)
    fits = files if records <= args.memory_max else _prefix(files, int(args.memory_max))
    got["memory"] = _measure("memory", fits, folder / "memory.parquet", args)
    if fits == files:
        got["duckdb_same"] = got["duckdb"]
        same_as_memory = _difference(folder / "duckdb.parquet", folder / "memory.parquet")
    else:  # DuckDB once more on the input the memory engine could hold
        got["duckdb_same"] = _measure("duckdb", fits, folder / "duckdb_same.parquet", args)
        same_as_memory = _difference(folder / "duckdb_same.parquet", folder / "memory.parquet")
    dask_records = int(args.dask_records)
    small = generate(folder / "dask", dask_records, max(1, groups // 10), 4, args.seed + 1)
    got["dask"] = _measure("dask", small, folder / "dask.parquet", args)
    got["dask_memory"] = _measure("memory", small, folder / "dask_memory.parquet", args)
    dask_diff = _difference(folder / "dask.parquet", folder / "dask_memory.parquet")
    ratios = {
        "duckdb_vs_memory_time": got["duckdb_same"]["seconds"] / got["memory"]["seconds"],
        "duckdb_vs_memory_peak": got["duckdb_same"]["peak_memory_mb"]
        / got["memory"]["peak_memory_mb"],
        "duckdb_vs_one_sort_time": got["duckdb"]["seconds"] / got["sort"]["seconds"],
        "dask_vs_memory_time": got["dask"]["seconds"] / got["dask_memory"]["seconds"],
    }
    for key, value in ratios.items():
        print(f"{key:>26}: {value:6.2f}")
    print(f"{'max |duckdb - memory|':>26}: {same_as_memory:.3g}")
    print(f"{'max |dask - memory|':>26}: {dask_diff:.3g}")
    summary = {
        "name": "engines",
        "records": records,
        "groups": groups,
        "memory_records": _count(fits),
        "dask_records": dask_records,
        "seconds": {k: v["seconds"] for k, v in got.items()},
        "peak_memory_mb": {k: v["peak_memory_mb"] for k, v in got.items()},
        "ratios": ratios,
        "max_difference": {"duckdb_memory": same_as_memory, "dask_memory": dask_diff},
    }
    print(json.dumps(summary))


if __name__ == "__main__":
    main()
