"""Benchmark: peak memory of ``python3 -m explorer check FILE --kind units`` on a large CSV.

    python benchmarks/csv_memory.py            # a file at the 200 MB upload limit
    python benchmarks/csv_memory.py --quick    # a 20 MB file
    python benchmarks/csv_memory.py --mb 50    # any size, in MB of 2**20 bytes

Writes (seeded) a CSV of unit records laid out as a statistics office exports a survey
file (the demo's ``households.csv`` columns ``region, year, county, income, weight`` plus
a household id, a person number and sex and age-group text columns), then runs the
check in a fresh process and reads the process's peak resident memory (the kernel's
``VmHWM``, see :mod:`benchmarks.peak`). The same command on the built-in demo, in the same
run, is the baseline, and the same check of the file's first 2,000 lines what the
imports and a small file alone cost. Prints the peak, its ratio to the file's size, the
peak above each baseline and the seconds; the last line is one JSON
object. Nothing here is asserted; the machine's cores are shared, so seconds move with
the load.
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from peak import peak_of  # noqa: E402

from explorer.data.files import MAX_FILE_BYTES  # noqa: E402

MB = 1024 * 1024
#: Invented counties of an invented country; each holds a run of district codes.
COUNTIES = ("Orrindale", "Vask Hollow", "Merrowfen", "Tarn Ashby", "Cullavey", "Brisk Moor")
SEXES = np.array(["F", "M"])
AGE_GROUPS = np.array(["0-14", "15-24", "25-44", "45-64", "65+"])
YEARS = np.array([2012, 2015, 2018, 2021, 2024])
HEADER = "region,year,county,household_id,person,sex,age_group,income,weight\n"


def _chunk(rng: np.random.Generator, n: int, first_household: int, districts: int) -> str:
    """``n`` rows of records as CSV text: households of 1-6 people in one district-year."""
    sizes = rng.integers(1, 7, n)  # at least n people in these households
    sizes = sizes[: np.searchsorted(np.cumsum(sizes), n) + 1]
    households = len(sizes)
    hh = np.repeat(np.arange(first_household, first_household + households), sizes)[:n]
    person = (np.arange(n) - np.repeat(np.cumsum(sizes) - sizes, sizes)[:n]) + 1
    district = np.repeat(rng.integers(0, districts, households), sizes)[:n]
    year = np.repeat(rng.choice(YEARS, households), sizes)[:n]
    level = 9.4 + 0.6 * np.sin(district * 0.37) + 0.015 * (year - YEARS[0])
    income = np.round(np.exp(level + 0.8 * rng.standard_normal(n)), 2)
    weight = np.round(rng.uniform(40.0, 420.0, n), 3)
    county = np.array(COUNTIES)[district % len(COUNTIES)]
    code = np.char.add("QZ", np.char.zfill(district.astype(str), 4))
    columns = [
        code,
        year.astype(str),
        county,
        hh.astype(str),
        person.astype(str),
        SEXES[rng.integers(0, 2, n)],
        AGE_GROUPS[rng.integers(0, len(AGE_GROUPS), n)],
        np.char.mod("%.2f", income),
        np.char.mod("%.3f", weight),
    ]
    rows = columns[0]
    for column in columns[1:]:
        rows = np.char.add(np.char.add(rows, ","), column)
    return "\n".join(rows.tolist()) + "\n"


def write_units(path: Path, size: int, seed: int = 7, districts: int = 600) -> int:
    """Write records until the file is just under ``size`` bytes; returns the row count."""
    rng = np.random.default_rng(seed)
    rows, household = 0, 1
    with path.open("w", encoding="utf-8", newline="") as out:
        out.write(HEADER)
        written = len(HEADER)
        while True:
            text = _chunk(rng, 100_000, household, districts)
            household = int(text.rsplit("\n", 2)[-2].split(",")[3]) + 1
            if written + len(text) > size:
                lines = text.splitlines(keepends=True)
                room = size - written
                lengths = np.cumsum([len(line) for line in lines])
                take = int(np.searchsorted(lengths, room, side="right"))
                out.write("".join(lines[:take]))
                return rows + take
            out.write(text)
            written += len(text)
            rows += 100_000


def check(target: str) -> dict:
    """Peak memory (MB) and wall seconds of the units check on ``target`` (a path or demo)."""
    start = time.perf_counter()
    rc, peak, output = peak_of("explorer", ["check", target, "--kind", "units"], cwd=ROOT)
    seconds = time.perf_counter() - start
    if rc not in (0, 2):  # 2: some district-years set aside, still a reading
        raise SystemExit(f"the check failed ({rc}):\n{output[-2000:]}")
    return {"peak_mb": peak / MB, "seconds": seconds}


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="a 20 MB file")
    parser.add_argument("--mb", type=float, help="file size in MB (default: the upload limit)")
    parser.add_argument(
        "--keep", type=Path, help="write the file here and keep it (an existing one is reused)"
    )
    args = parser.parse_args(argv)
    size = int((args.mb or (20 if args.quick else MAX_FILE_BYTES / MB)) * MB)
    size = min(size, MAX_FILE_BYTES)
    with tempfile.TemporaryDirectory() as folder:
        path = args.keep or Path(folder) / "units.csv"
        t0 = time.perf_counter()
        if args.keep and path.exists():
            with path.open("rb") as handle:
                rows = sum(1 for _ in handle) - 1
        else:
            rows = write_units(path, size)
        file_mb = path.stat().st_size / MB
        print(f"{rows:,} records, {file_mb:.1f} MB in {time.perf_counter() - t0:.0f} s")
        base = check("demo")
        print(f"baseline (the demo): peak {base['peak_mb']:.0f} MB, {base['seconds']:.1f} s")
        head = Path(folder) / "head.csv"
        with path.open("rb") as whole, head.open("wb") as out:
            out.writelines(line for _, line in zip(range(2_000), whole, strict=False))
        bare = check(str(head))
        print(
            f"bare (its first 2,000 lines): peak {bare['peak_mb']:.0f} MB, {bare['seconds']:.1f} s"
        )
        run = check(str(path))
    above = run["peak_mb"] - base["peak_mb"]
    ratio = run["peak_mb"] / file_mb
    over_bare = run["peak_mb"] - bare["peak_mb"]
    print(
        f"check of {file_mb:.0f} MB: peak {run['peak_mb']:.0f} MB ({ratio:.2f}x the file), "
        f"{above:.0f} MB above the demo ({above / file_mb:.2f}x), "
        f"{over_bare:.0f} MB above the bare run ({over_bare / file_mb:.2f}x), {run['seconds']:.1f} s"
    )
    result = {
        "name": "csv_memory",
        "seconds": round(run["seconds"], 2),
        "peak_memory_mb": round(run["peak_mb"], 1),
        "file_mb": round(file_mb, 1),
        "rows": rows,
        "baseline_peak_mb": round(base["peak_mb"], 1),
        "bare_peak_mb": round(bare["peak_mb"], 1),
        "ratios": {
            "peak_to_file": round(ratio, 2),
            "above_baseline_to_file": round(above / file_mb, 2),
            "above_bare_to_file": round(over_bare / file_mb, 2),
            "seconds_to_baseline": round(run["seconds"] / base["seconds"], 2),
        },
    }
    print(json.dumps(result))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
