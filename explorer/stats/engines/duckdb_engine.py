"""DuckDB engine: scan Parquet or CSV files, order by district-year, stream whole groups.

DuckDB sorts the records by (region, year) within its own ``memory_limit``, spilling to
``temp_directory`` beyond it, and its result is fetched as Arrow record batches. The
batches are cut at district-year boundaries and handed to the kernel at most
``batch_rows`` records at a time (a district-year larger than that goes alone), so this
side's memory is bounded by the batch budget, not by the size of the data.
"""

from __future__ import annotations

import tempfile
from collections.abc import Callable, Iterator, Mapping, Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats.engines import budget, kernel, sources

__all__ = ["batches", "run"]

_FETCH_ROWS = 65_536  # records per Arrow batch fetched from DuckDB


def _import():
    try:
        import duckdb
    except ImportError:
        raise fail(
            "the DuckDB engine needs the duckdb package, which is not installed",
            "install it with: pip install duckdb (or choose engine='memory')",
        ) from None
    return duckdb


def _quote(text: str) -> str:
    return "'" + text.replace("'", "''") + "'"


def _ident(name: str) -> str:
    return '"' + name.replace('"', '""') + '"'


def _scan(files: list[Path], region: str | None) -> str:
    """The table function reading the files; CSV district codes as text (keeps ``007``)."""
    listed = "[" + ", ".join(_quote(str(p)) for p in files) + "]"
    if sources.file_format(files) == "parquet":
        return f"read_parquet({listed}, union_by_name = true)"
    types = f", types = {{{_quote(region)}: 'VARCHAR'}}" if region else ""
    return f"read_csv({listed}, header = true, union_by_name = true{types})"


def _query(con, files: list[Path], columns) -> str:
    head = con.execute(f"DESCRIBE SELECT * FROM {_scan(files, None)}").fetchall()
    chosen = sources.column_names([row[0] for row in head], columns, file=str(files[0]))
    scan = _scan(files, chosen["region"])
    weight = "1.0" if chosen["weight"] is None else f"CAST({_ident(chosen['weight'])} AS DOUBLE)"
    return (
        f"SELECT CAST({_ident(chosen['region'])} AS VARCHAR) AS region, "
        f"CAST({_ident(chosen['year'])} AS BIGINT) AS year, "
        f"CAST({_ident(chosen['income'])} AS DOUBLE) AS income, {weight} AS weight "
        f"FROM {scan} ORDER BY region, year"
    )


def _cut(buffer: pd.DataFrame, limit: int) -> int:
    """Rows of ``buffer`` to deliver: whole groups, at most ``limit`` unless the first is larger."""
    region, year = buffer["region"].to_numpy(), buffer["year"].to_numpy()
    change = np.flatnonzero((region[1:] != region[:-1]) | (year[1:] != year[:-1])) + 1
    fitting = change[change <= limit]
    if fitting.size:
        return int(fitting[-1])
    return int(change[0]) if change.size else 0  # one group over the budget goes alone


def batches(
    files: list[Path],
    columns: Mapping[str, str | None] | None = None,
    batch_rows: int = budget.DEFAULT_BATCH_ROWS,
    memory_limit: str = budget.DEFAULT_MEMORY_LIMIT,
    temp_directory: str | Path | None = None,
    threads: int = 2,
) -> Iterator[pd.DataFrame]:
    """Frames of whole district-years, in (region, year) order.

    Parameters
    ----------
    files : list of Path
        Parquet or CSV files; a district-year may be split across several.
    columns : mapping, optional
        Role to column name (see :mod:`explorer.stats.engines.sources`).
    batch_rows : int
        Most records per frame; only a district-year larger than this exceeds it.
    memory_limit : str
        DuckDB's ``memory_limit`` (e.g. ``"1GB"``).
    temp_directory : path, optional
        Where DuckDB spills; a fresh temporary folder, removed afterwards, by default.
    threads : int
        DuckDB's worker threads.
    """
    duckdb = _import()
    batch_rows = max(1, int(batch_rows))
    with tempfile.TemporaryDirectory(prefix="rift-duckdb-") as scratch:
        config = {
            "memory_limit": str(memory_limit),
            "temp_directory": str(temp_directory or scratch),
            "threads": int(threads),
            "preserve_insertion_order": False,
        }
        con = duckdb.connect(":memory:", config=config)
        con.execute("SET enable_progress_bar = false")  # progress is ours to report
        try:
            relation = con.sql(_query(con, files, columns))
            # the streaming Arrow reader: record_batch before DuckDB 2, to_arrow_reader since
            stream = getattr(relation, "to_arrow_reader", None) or relation.record_batch
            reader = stream(min(_FETCH_ROWS, batch_rows))
            yield from _regroup(reader, batch_rows)
        except duckdb.Error as err:
            raise fail(
                f"DuckDB could not read the input: {err}",
                "check that the files are readable Parquet or CSV with these columns",
                file=str(files[0]),
            ) from None
        finally:
            con.close()


def _regroup(reader, batch_rows: int) -> Iterator[pd.DataFrame]:
    """Arrow batches re-cut at group boundaries, at most ``batch_rows`` records each."""
    buffer = pd.DataFrame()
    for record_batch in reader:
        piece = record_batch.to_pandas()
        buffer = piece if buffer.empty else pd.concat([buffer, piece], ignore_index=True)
        while len(buffer) > batch_rows:
            end = _cut(buffer, batch_rows)
            if end == 0:  # the first group is not complete yet: read on
                break
            yield buffer.iloc[:end].reset_index(drop=True)
            buffer = buffer.iloc[end:].reset_index(drop=True)
    while len(buffer):
        end = _cut(buffer, batch_rows) or len(buffer)
        if len(buffer) <= batch_rows:
            end = len(buffer)
        yield buffer.iloc[:end].reset_index(drop=True)
        buffer = buffer.iloc[end:].reset_index(drop=True)


def run(
    files: list[Path],
    indices: Sequence[str],
    columns: Mapping[str, str | None] | None = None,
    batch_rows: int = budget.DEFAULT_BATCH_ROWS,
    memory_limit: str = budget.DEFAULT_MEMORY_LIMIT,
    progress: Callable[[int], None] | None = None,
    **settings,
) -> pd.DataFrame:
    """The kernel over every batch; ``progress`` gets the records done so far."""
    parts, done = [], 0
    for frame in batches(files, columns, batch_rows, memory_limit):
        parts.append(kernel.compute_groups(frame, indices, **settings))
        done += len(frame)
        if progress is not None:
            progress(done)
    return pd.concat(parts, ignore_index=True) if parts else kernel.empty_table()
