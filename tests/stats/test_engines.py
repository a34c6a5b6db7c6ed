"""Tests of explorer.stats.engines: every engine gives the memory engine's table.

References for the checks against outside sources:

* Gini, C. (1912). *Variabilità e mutabilità*: the Gini index as the mean absolute
  difference over twice the mean. For equal-weight incomes 1, ..., n that is
  (n - 1) / (3 n) (a closed form from memory, checked here by the brute-force pairwise
  mean difference).
* Efron, B. and Tibshirani, R. J. (1993). *An Introduction to the Bootstrap*, ch. 13:
  a percentile interval of a resampled statistic lies within the range of the
  statistic's replicates and, for a non-degenerate sample, has positive width
  (common practice).

The generated records are invented (district codes like ``QZ01`` of a fictional land).
"""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from explorer.data import demo
from explorer.data.model import DataError
from explorer.resources import demo_dir
from explorer.stats import engines, indices
from explorer.stats.engines import budget, dask_engine, duckdb_engine, kernel

FEW = ["gini", "theil_t", "mld", "atkinson_1", "palma", "top10_share"]
HOUSEHOLDS = demo_dir() / "households.csv"
REPO = Path(__file__).resolve().parents[2]


def records(groups: dict[tuple[str, int], int], seed: int = 1) -> pd.DataFrame:
    """Invented lognormal incomes with uneven weights, some zero, for the given group sizes."""
    rng = np.random.default_rng(seed)
    parts = []
    for (region, year), size in groups.items():
        weight = rng.uniform(0.5, 3.0, size)
        weight[rng.random(size) < 0.1] = 0.0  # zero weights: present, changing nothing
        parts.append(
            pd.DataFrame(
                {
                    "region": region,
                    "year": year,
                    "income": np.round(rng.lognormal(7.5, 0.6, size), 2),
                    "weight": weight,
                }
            )
        )
    return pd.concat(parts, ignore_index=True)


def assert_same(got: pd.DataFrame, want: pd.DataFrame, bounds: bool = True) -> None:
    assert list(got.columns) == list(want.columns)
    assert len(got) == len(want) > 0
    for column in ("region", "index", "method", "note"):
        assert got[column].astype(str).tolist() == want[column].astype(str).tolist(), column
    assert (got["year"].to_numpy() == want["year"].to_numpy()).all()
    columns = ("value", "lower", "upper") if bounds else ("value",)
    for column in columns:
        np.testing.assert_allclose(got[column], want[column], rtol=1e-12, atol=1e-12)


def split_files(frame: pd.DataFrame, folder: Path, parts: int, kind: str = "parquet"):
    """Records shuffled into ``parts`` files, so district-years are split across files,
    plus one empty file (an empty partition)."""
    folder.mkdir(parents=True, exist_ok=True)
    shuffled = frame.sample(frac=1.0, random_state=3).reset_index(drop=True)
    paths = []
    for i, chunk in enumerate(np.array_split(np.arange(len(shuffled)), parts)):
        paths.append(folder / f"part{i}.{kind}")
        piece = shuffled.iloc[chunk]
        if kind == "parquet":
            # small row groups: several partitions per file for Dask
            pq.write_table(pa.Table.from_pandas(piece, preserve_index=False), paths[-1], 700)
        else:
            piece.to_csv(paths[-1], index=False, float_format="%.17g")
    empty = folder / f"part_empty.{kind}"
    if kind == "parquet":
        pq.write_table(pa.Table.from_pandas(frame.iloc[:0], preserve_index=False), empty)
    else:
        frame.iloc[:0].to_csv(empty, index=False)
    return paths + [empty]


@pytest.fixture(scope="module")
def generated() -> pd.DataFrame:
    groups = {(f"QZ{d:02d}", y): int(s) for d, y, s in [(1, 2020, 40), (1, 2021, 3)]}
    groups.update({(f"QZ{d:02d}", 2020 + d % 3): 30 + 11 * d for d in range(2, 14)})
    groups[("QZ99", 2022)] = 6000  # one huge district
    groups[("QZ50", 2020)] = 1  # a single record: every index undefined, with a note
    return records(groups)


@pytest.fixture(scope="module")
def dask_address():
    """A two-worker Dask cluster on the loopback interface, for this module only."""
    distributed = pytest.importorskip("distributed")
    cluster = distributed.LocalCluster(
        n_workers=2,
        threads_per_worker=1,
        processes=False,
        protocol="tcp",
        host="127.0.0.1",
        scheduler_port=0,
        dashboard_address="127.0.0.1:0",
    )
    try:
        assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")
        yield cluster.scheduler_address
    finally:
        cluster.close()


# ---------------------------------------------------------------------------- memory


def test_memory_engine_is_todays_path_on_the_demo_panel():
    panel = demo.demo_panel("units")
    want = indices.compute(panel)
    got = engines.compute_units(panel, "memory")
    assert_same(got, want, bounds=False)
    assert got.dtypes.equals(want.dtypes)
    assert got.attrs["engine"] == "memory"


def test_kernel_gini_against_the_closed_form():
    n = 40
    income = np.arange(1.0, n + 1)
    pairwise = np.abs(income[:, None] - income[None, :]).mean() / (2 * income.mean())
    closed = (n - 1) / (3 * n)
    assert pairwise == pytest.approx(closed, rel=1e-14)  # the closed form, checked
    frame = pd.DataFrame({"region": "QZ01", "year": 2020, "income": income, "weight": 1.0})
    got = kernel.compute_groups(frame[::-1], ["gini"])
    assert got["value"].iat[0] == pytest.approx(closed, rel=1e-12)


# ---------------------------------------------------------------------------- DuckDB


def test_duckdb_equals_memory_on_the_demo_households():
    want = engines.compute_units(HOUSEHOLDS, "memory", FEW, ci="bootstrap", reps=29)
    got = engines.compute_units(HOUSEHOLDS, "duckdb", FEW, ci="bootstrap", reps=29, batch_rows=2500)
    assert_same(got, want)
    assert got.attrs["engine"] == "duckdb"
    assert np.isfinite(got["lower"]).mean() > 0.9  # the intervals were really computed


@pytest.mark.parametrize("kind", ["parquet", "csv"])
def test_duckdb_equals_memory_with_groups_split_across_files(generated, tmp_path, kind):
    files = split_files(generated, tmp_path, 4, kind)
    want = engines.compute_units(generated, "memory", FEW, ci="bootstrap", reps=19)
    got = engines.compute_units(
        files, "duckdb", FEW, ci="bootstrap", reps=19, batch_rows=500, memory_limit="100MB"
    )
    assert_same(got, want)
    glob_got = engines.compute_units(str(tmp_path / f"*.{kind}"), "duckdb", FEW, batch_rows=500)
    assert_same(glob_got, want, bounds=False)
    single = got[got["region"] == "QZ50"]
    assert single["value"].isna().all() and (single["note"] != "").all()


def test_duckdb_batches_hold_whole_groups_within_the_budget(generated, tmp_path):
    files = split_files(generated, tmp_path, 3)
    budget_rows = 400
    delivered = list(duckdb_engine.batches(files, batch_rows=budget_rows))
    sizes = generated.groupby(["region", "year"]).size()
    seen = []
    for frame in delivered:
        keys = frame.groupby(["region", "year"]).size()
        seen.extend(keys.index)
        # whole groups only, each exactly as large as in the input
        assert (keys == sizes.loc[keys.index]).all()
        # within the budget unless the batch is one group larger than it
        assert len(frame) <= budget_rows or len(keys) == 1
    assert len(seen) == len(set(seen)) == len(sizes)
    assert sum(len(f) for f in delivered) == len(generated)
    assert len(delivered) > (len(generated) - 6000) // budget_rows  # really cut up
    huge = [f for f in delivered if (f["region"] == "QZ99").any()]
    assert len(huge) == 1 and len(huge[0]) == 6000


def test_duckdb_progress_counts_every_record(generated, tmp_path):
    files = split_files(generated, tmp_path, 2)
    done: list[int] = []
    engines.compute_units(files, "duckdb", ["gini"], batch_rows=1000, progress=done.append)
    assert done == sorted(done) and done[-1] == len(generated) and len(done) > 2


# The peak resident memory of this process's own address space (VmHWM). Not getrusage's
# ru_maxrss: Linux carries that over from the parent across exec, so a child started by a
# large test process would report the parent's peak and no growth at all.
_CHILD = textwrap.dedent(
    """
    import sys, json
    from explorer.stats import engines
    from explorer.stats.engines import duckdb_engine, memory
    import duckdb, pyarrow

    def peak_kb():
        with open("/proc/self/status") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1])
        raise RuntimeError("no VmHWM in /proc/self/status")

    path, engine = sys.argv[1], sys.argv[2]
    before = peak_kb()
    if engine == "duckdb":
        table = engines.compute_units(path, "duckdb", ["gini"], batch_rows=50_000,
                                      memory_limit="150MB")
    else:
        table = engines.compute_units(path, "memory", ["gini"])
    after = peak_kb()
    print(json.dumps({"growth_kb": after - before, "groups": len(table)}))
    """
)


def _peak_growth(path: Path, engine: str) -> dict:
    env = dict(os.environ, PYTHONPATH=str(REPO))
    out = subprocess.run(
        [sys.executable, "-c", _CHILD, str(path), engine],
        capture_output=True,
        text=True,
        env=env,
        check=True,
        timeout=600,
    )
    import json

    return json.loads([line for line in out.stdout.splitlines() if line.startswith("{")][-1])


@pytest.mark.slow
def test_duckdb_peak_memory_is_bounded_by_the_batch_budget(tmp_path):
    # 3 million records (about 100 MB as columns, several times that in the memory
    # engine), far beyond the 50,000-record batch budget
    rng = np.random.default_rng(5)
    n, groups = 3_000_000, 600
    path = tmp_path / "big.parquet"
    codes = rng.integers(0, groups, n)
    table = pa.table(
        {
            "region": pa.array([f"QZ{c:03d}" for c in range(groups)]).take(pa.array(codes)),
            "year": np.full(n, 2020, dtype=np.int64),
            "income": rng.lognormal(7.0, 0.7, n),
            "weight": rng.uniform(0.5, 2.0, n),
        }
    )
    pq.write_table(table, path, row_group_size=250_000)
    del table, codes
    streamed = _peak_growth(path, "duckdb")
    whole = _peak_growth(path, "memory")
    assert streamed["groups"] == whole["groups"] == groups
    # generous margins: DuckDB's 150 MB plus the batches, against every record at once
    assert streamed["growth_kb"] < 450 * 1024
    assert streamed["growth_kb"] < 0.6 * whole["growth_kb"]


# ---------------------------------------------------------------------------- Dask


def test_dask_equals_memory_on_a_given_cluster(generated, tmp_path, dask_address):
    files = split_files(generated, tmp_path, 5)
    want = engines.compute_units(generated, "memory", FEW, ci="bootstrap", reps=19)
    got = engines.compute_units(files, "dask", FEW, ci="bootstrap", reps=19, scheduler=dask_address)
    assert_same(got, want)
    assert got.attrs["engine"] == "dask"


def test_dask_local_cluster_equals_memory_on_the_demo_households():
    want = engines.compute_units(HOUSEHOLDS, "memory", FEW)
    got = engines.compute_units(HOUSEHOLDS, "dask", FEW)
    assert_same(got, want, bounds=False)


# ---------------------------------------------------------------------------- kernel


@settings(max_examples=25, deadline=None)
@given(
    sizes=st.lists(st.integers(1, 40), min_size=1, max_size=8),
    cut=st.integers(1, 7),
    seed=st.integers(0, 2**31),
)
def test_kernel_results_do_not_depend_on_batching(sizes, cut, seed):
    frame = records({(f"QZ{i:02d}", 2020 + i % 2): s for i, s in enumerate(sizes)}, seed)
    whole = kernel.compute_groups(frame, ["gini", "ge_2"], ci="bootstrap", reps=9, seed=seed)
    keys = frame[["region", "year"]].drop_duplicates()
    batches = [keys.iloc[i : i + cut] for i in range(0, len(keys), cut)]
    parts = []
    for batch in reversed(batches):  # another order of batches and of records
        mask = frame.set_index(["region", "year"]).index.isin(
            batch.set_index(["region", "year"]).index
        )
        parts.append(
            kernel.compute_groups(
                frame[mask][::-1], ["gini", "ge_2"], ci="bootstrap", reps=9, seed=seed
            )
        )
    joined = pd.concat(parts, ignore_index=True).sort_values(["region", "year", "index"])
    whole = whole.sort_values(["region", "year", "index"])
    # point values: the batch's exact cumulative sums agree to rounding; bounds: each
    # district-year is resampled alone, so they agree bit for bit
    np.testing.assert_allclose(joined["value"], whole["value"], rtol=1e-12, atol=1e-15)
    for column in ("lower", "upper"):
        np.testing.assert_array_equal(joined[column].to_numpy(), whole[column].to_numpy())


def test_bootstrap_bounds_bracket_the_replicates_and_follow_the_seed():
    frame = records({("QZ01", 2020): 300, ("QZ02", 2020): 200})
    a = kernel.compute_groups(frame, ["gini"], ci="bootstrap", reps=99, seed=4)
    b = kernel.compute_groups(frame, ["gini"], ci="bootstrap", reps=99, seed=4)
    c = kernel.compute_groups(frame, ["gini"], ci="bootstrap", reps=99, seed=5)
    assert (a["lower"] < a["value"]).all() and (a["value"] < a["upper"]).all()
    np.testing.assert_array_equal(a["lower"], b["lower"])
    assert (a["lower"] != c["lower"]).any()


# ---------------------------------------------------------------------------- choice


def test_automatic_choice_follows_the_stated_fraction(generated, tmp_path):
    files = split_files(generated, tmp_path, 2)
    need = budget.estimate_bytes(files)
    assert need == len(generated) * budget.BYTES_PER_RECORD
    assert (
        budget.choose_engine(files, memory_bytes=int(need / budget.AUTO_FRACTION) + 1) == "memory"
    )
    assert (
        budget.choose_engine(files, memory_bytes=int(need / budget.AUTO_FRACTION) - 1) == "duckdb"
    )
    assert engines.compute_units(files, "auto", ["gini"]).attrs["engine"] == "memory"


# ---------------------------------------------------------------------------- errors


def test_missing_files_and_columns_are_named(tmp_path, generated):
    with pytest.raises(DataError, match="no file matches"):
        engines.compute_units(tmp_path / "nowhere" / "*.parquet", "duckdb")
    path = tmp_path / "x.parquet"
    pq.write_table(pa.Table.from_pandas(generated.drop(columns="weight")), path)
    for engine in ("memory", "duckdb", "dask"):
        with pytest.raises(DataError, match="'weight' not in the input") as err:
            engines.compute_units(path, engine, ["gini"])
        assert "columns=" in str(err.value)
    unweighted = engines.compute_units(path, "duckdb", ["gini"], columns={"weight": None})
    assert unweighted["value"].notna().any()


def test_bad_records_are_named_by_district_year(tmp_path, generated):
    bad = generated.copy()
    bad.loc[bad.index[5], "weight"] = -1.0
    path = tmp_path / "bad.parquet"
    pq.write_table(pa.Table.from_pandas(bad), path)
    where = f"{bad['region'].iat[5]} {bad['year'].iat[5]}"
    for engine in ("memory", "duckdb"):
        with pytest.raises(DataError, match=where):
            engines.compute_units(path, engine, ["gini"])


def test_unknown_engine_and_missing_packages(monkeypatch):
    with pytest.raises(DataError, match="unknown engine"):
        engines.compute_units(HOUSEHOLDS, "spark")
    monkeypatch.setitem(sys.modules, "duckdb", None)
    with pytest.raises(DataError, match="pip install duckdb"):
        engines.compute_units(HOUSEHOLDS, "duckdb")
    monkeypatch.setitem(sys.modules, "distributed", None)
    with pytest.raises(DataError, match="rift\\[cluster\\]"):
        engines.compute_units(HOUSEHOLDS, "dask")


def test_unreachable_scheduler_is_said_quickly(monkeypatch):
    import socket

    with socket.socket() as s:  # a loopback port nobody listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    monkeypatch.setattr(dask_engine, "CONNECT_TIMEOUT", "1s")
    with pytest.raises(DataError, match="no Dask scheduler answered"):
        engines.compute_units(HOUSEHOLDS, "dask", ["gini"], scheduler=f"tcp://127.0.0.1:{port}")


def test_each_district_year_draws_its_own_stream():
    one = records({("QZ01", 2020): 120})
    twin = pd.concat([one, one.assign(region="QZ02"), one.assign(year=2021)], ignore_index=True)
    got = kernel.compute_groups(twin, ["gini"], ci="bootstrap", reps=49, seed=0)
    assert got["value"].nunique() == 1  # the same records: the same index
    assert got["lower"].nunique() == 3  # but independent resamples per district-year
    alone = kernel.compute_groups(one.assign(region="QZ02"), ["gini"], ci="bootstrap", reps=49)
    assert alone["lower"].iat[0] == got["lower"].iat[2]  # QZ02 2020: same draws alone


def test_a_frame_without_weights_needs_them_said_so(generated):
    with pytest.raises(DataError, match="no column weight"):
        engines.compute_units(generated.drop(columns="weight"), "memory", ["gini"])
    got = engines.compute_units(
        generated.drop(columns="weight"), "memory", ["gini"], columns={"weight": None}
    )
    want = engines.compute_units(generated.assign(weight=1.0), "memory", ["gini"])
    assert_same(got, want, bounds=False)
