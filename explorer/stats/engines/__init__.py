"""One kernel, several engines: unit-record indices for data of any size.

:func:`compute_units` gives the tidy table of :func:`explorer.stats.indices.compute` for
unit records (``region, year, index, value, lower, upper, method, note``) from a frame,
a unit :class:`~explorer.data.model.Panel` or Parquet/CSV files, with one of

* ``memory``: every record at once (:mod:`.memory`);
* ``duckdb``: files larger than memory, streamed as batches of whole district-years
  (:mod:`.duckdb_engine`);
* ``dask``: a partitioned dataset on a Dask cluster (:mod:`.dask_engine`);
* ``auto``: ``duckdb`` for files the memory engine could not hold comfortably
  (:func:`.budget.choose_engine`), ``memory`` otherwise.

Every engine runs the same kernel (:mod:`.kernel`) on whole district-years, so the
numbers agree to rounding, and bootstrap draws depend only on the seed and the
district-year, never on the batching.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping, Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from explorer.data.model import Panel, fail
from explorer.stats import measures
from explorer.stats.engines import budget, kernel, memory, sources

__all__ = ["ENGINES", "compute_units"]

ENGINES = ("auto", "memory", "duckdb", "dask")


def _check(engine, indices, ci, reps, level) -> list[str]:
    if engine not in ENGINES:
        raise fail(f"unknown engine {engine!r}", f"use one of {', '.join(ENGINES)}")
    indices = [indices] if isinstance(indices, str) else list(dict.fromkeys(indices))
    if not indices:
        raise fail("no index asked for", "use e.g. gini, theil")
    for key in indices:
        try:
            measures.parse_index(key)
        except ValueError as err:
            raise fail(str(err), "correct the index name", column="index") from None
    if ci not in (None, "bootstrap"):
        raise fail(f"unknown interval {ci!r}", "use ci=None or ci='bootstrap'", column="ci")
    if not 0.0 < float(level) < 1.0:
        raise fail(f"confidence level {level} is not between 0 and 1", "use e.g. 0.95")
    if int(reps) < 2:
        raise fail(f"{reps} bootstrap replicates are too few", "use e.g. 199 or 999")
    return indices


def _in_order(table: pd.DataFrame, indices: list[str]) -> pd.DataFrame:
    """District-years in (region, year) order, indices in the order asked, whatever the engine."""
    rank = pd.Series(np.arange(len(indices)), index=indices)
    key = pd.DataFrame(
        {"region": table["region"], "year": table["year"], "k": rank[table["index"]].to_numpy()}
    )
    order = key.sort_values(["region", "year", "k"], kind="stable").index
    return table.loc[order].reset_index(drop=True)


def compute_units(
    source: pd.DataFrame | Panel | str | Path | Iterable[str | Path],
    engine: str = "auto",
    indices: str | Sequence[str] = measures.STANDARD_INDICES,
    *,
    columns: Mapping[str, str | None] | None = None,
    ci: str | None = None,
    reps: int = 199,
    seed: int | None = 0,
    level: float = 0.95,
    scheduler: str | None = None,
    batch_rows: int = budget.DEFAULT_BATCH_ROWS,
    memory_limit: str = budget.DEFAULT_MEMORY_LIMIT,
    progress: Callable[[int], None] | None = None,
) -> pd.DataFrame:
    """The tidy index table of unit records, computed by the chosen engine.

    Parameters
    ----------
    source : DataFrame, Panel, path, glob or list of paths
        Records with ``region, year, income, weight`` (or the names in ``columns``);
        a unit Panel; or Parquet/CSV files, globs or Parquet folders. Frames and panels
        run in memory whatever ``engine`` says, except ``dask``, which needs files.
    engine : {"auto", "memory", "duckdb", "dask"}
    indices : str or sequence of str
        Index keys (:func:`explorer.stats.measures.parse_index`).
    columns : mapping, optional
        Role (``region, year, income, weight``) to the input's column name; ``weight``
        to ``None`` for unweighted records.
    ci, reps, seed, level
        ``ci="bootstrap"`` for percentile intervals; draws per district-year
        (:func:`explorer.stats.engines.kernel.group_seed`).
    scheduler : str, optional
        Dask scheduler address; a local loopback cluster when omitted.
    batch_rows, memory_limit
        DuckDB engine: most records per kernel call, and DuckDB's own memory limit.
    progress : callable, optional
        DuckDB engine: called with the number of records done after each batch.

    Returns
    -------
    DataFrame
        ``region, year, index, value, lower, upper, method, note``; district-years in
        (region, year) order, indices inner. ``attrs`` holds ``kind``, ``ci``, ``level``
        and ``engine`` (the one that ran).

    Raises
    ------
    explorer.data.model.DataError
        Unknown engine or index, missing files or columns, bad records, an engine's
        package missing, or an unreachable scheduler.

    References
    ----------
    Efron, B. and Tibshirani, R. J. (1993). *An Introduction to the Bootstrap*, ch. 13.
    Chapman & Hall.
    """
    indices = _check(engine, indices, ci, reps, level)
    settings = dict(ci=ci, reps=int(reps), seed=seed, level=float(level))
    if isinstance(source, Panel | pd.DataFrame):
        if engine == "dask":
            raise fail("the Dask engine reads files", "give Parquet files or use engine='memory'")
        frame = source.data if isinstance(source, Panel) else source
        if columns:
            frame = frame.rename(columns={v: k for k, v in columns.items() if v is not None})
        if (columns or {}).get("weight", "weight") is None:  # unweighted, said explicitly
            frame = frame.assign(weight=1.0)
        table, used = memory.run(frame, indices, **settings), "memory"
    else:
        files = sources.resolve_files(source)
        used = budget.choose_engine(files) if engine == "auto" else engine
        if used == "memory":
            table = memory.run(memory.read_frame(files, columns), indices, **settings)
        elif used == "duckdb":
            from explorer.stats.engines import duckdb_engine

            table = duckdb_engine.run(
                files, indices, columns, batch_rows, memory_limit, progress, **settings
            )
        else:
            from explorer.stats.engines import dask_engine

            table = dask_engine.run(files, indices, columns, scheduler, **settings)
    table = _in_order(table, indices) if len(table) else kernel.empty_table()
    if len(table):  # the column types of explorer.stats.indices.compute
        table["method"] = table["method"].astype(str)
        table["note"] = table["note"].astype(str).astype(object)
    table.attrs.update(kind="units", ci=ci, level=level if ci else None, engine=used)
    return table
