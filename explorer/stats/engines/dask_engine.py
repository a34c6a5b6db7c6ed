"""Dask engine: a partitioned Parquet (or CSV) dataset, the kernel on the workers.

The records are shuffled on (region, year), so every district-year is whole in one
partition; the kernel runs on each partition with ``map_partitions`` and only the
result rows come back. With no scheduler address a small local cluster on the loopback
interface is started (two in-process workers) and closed afterwards; with an address the
run joins that cluster with ``distributed.Client(address)``.
"""

from __future__ import annotations

import contextlib
import logging
from collections.abc import Iterator, Mapping, Sequence
from pathlib import Path

import pandas as pd

from explorer.data.model import fail
from explorer.stats.engines import kernel, sources

__all__ = ["CONNECT_TIMEOUT", "client", "run"]

CONNECT_TIMEOUT = "5s"
"""How long to wait for a scheduler before saying it is unreachable."""


def _import():
    try:
        import dask
        import dask.dataframe as dd
        import distributed
    except ImportError:
        raise fail(
            "the Dask engine needs dask and distributed, which are not installed",
            "install them with: pip install 'rift[cluster]' (or choose engine='duckdb')",
        ) from None
    return dask, dd, distributed


@contextlib.contextmanager
def client(scheduler: str | None = None, workers: int = 2) -> Iterator[object]:
    """A ``distributed.Client``: to ``scheduler``, or to a local loopback cluster.

    Raises
    ------
    explorer.data.model.DataError
        When the scheduler cannot be reached within :data:`CONNECT_TIMEOUT`.
    """
    _, _, distributed = _import()
    if scheduler:
        try:
            joined = distributed.Client(scheduler, timeout=CONNECT_TIMEOUT)
        except (OSError, TimeoutError, ValueError) as err:
            raise fail(
                f"no Dask scheduler answered at {scheduler} within {CONNECT_TIMEOUT} ({err})",
                "check the address (e.g. tcp://host:8786) and that the scheduler runs",
            ) from None
        with joined:
            yield joined
        return
    cluster = distributed.LocalCluster(
        n_workers=int(workers),
        threads_per_worker=1,
        processes=False,
        protocol="tcp",  # loopback TCP rather than in-process: the same path as a cluster
        host="127.0.0.1",
        scheduler_port=0,
        dashboard_address="127.0.0.1:0",
        silence_logs=logging.ERROR,
    )
    log = logging.getLogger("distributed")
    level = log.level
    local = distributed.Client(cluster)
    try:
        yield local
    finally:
        log.setLevel(max(level, logging.ERROR))  # closing connections logs noise, not news
        try:
            local.close()
            cluster.close()
        finally:
            log.setLevel(level)


def _frame(dd, files: list[Path], columns):
    kind = sources.file_format(files)
    paths = [str(p) for p in files]
    if kind == "parquet":
        import pyarrow.parquet as pq

        names = pq.read_schema(files[0]).names
    else:
        names = pd.read_csv(files[0], nrows=0).columns
    chosen = sources.column_names(names, columns, file=str(files[0]))
    wanted = [c for c in chosen.values() if c is not None]
    if kind == "parquet":
        ddf = dd.read_parquet(paths, columns=wanted)
    else:
        ddf = dd.read_csv(paths, usecols=wanted, dtype={chosen["region"]: str})
    ddf = ddf.rename(columns={name: role for role, name in chosen.items() if name is not None})
    if chosen["weight"] is None:
        ddf = ddf.assign(weight=1.0)
    return ddf[list(kernel.ROLES)]


def run(
    files: list[Path],
    indices: Sequence[str],
    columns: Mapping[str, str | None] | None = None,
    scheduler: str | None = None,
    **settings,
) -> pd.DataFrame:
    """The kernel on the workers, groups brought together by a shuffle on district-year."""
    dask, dd, _ = _import()
    with dask.config.set({"dataframe.convert-string": False}), client(scheduler):
        ddf = _frame(dd, files, columns)
        ddf = ddf.shuffle(on=["region", "year"])
        rows = ddf.map_partitions(
            kernel.compute_groups, list(indices), meta=kernel.empty_table(), **settings
        )
        return rows.compute().reset_index(drop=True)
