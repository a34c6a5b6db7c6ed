"""The in-memory engine: every record read at once, one call of the kernel."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats.engines import kernel, sources

__all__ = ["read_frame", "run"]


def read_frame(files: list[Path], columns: Mapping[str, str | None] | None = None) -> pd.DataFrame:
    """All records of the files as ``region, year, income, weight``.

    Region codes are read as text (leading zeros kept), as the other engines read them.
    """
    kind = sources.file_format(files)
    parts = []
    for path in files:
        if kind == "parquet":
            import pyarrow.parquet as pq

            names = pq.read_schema(path).names
            chosen = sources.column_names(names, columns, file=str(path))
            wanted = [c for c in chosen.values() if c is not None]
            part = pq.read_table(path, columns=wanted).to_pandas()
        else:
            head = pd.read_csv(path, nrows=0).columns
            chosen = sources.column_names(head, columns, file=str(path))
            wanted = [c for c in chosen.values() if c is not None]
            part = pd.read_csv(
                path,
                usecols=wanted,
                dtype={chosen["region"]: str},
            )
        parts.append(_roles(part, chosen))
    return pd.concat(parts, ignore_index=True) if parts else _roles(pd.DataFrame(), {})


def _roles(part: pd.DataFrame, chosen: Mapping[str, str | None]) -> pd.DataFrame:
    if not chosen:
        return pd.DataFrame({r: pd.Series(dtype=float) for r in kernel.ROLES})
    out = pd.DataFrame({role: part[name] for role, name in chosen.items() if name is not None})
    if chosen["weight"] is None:
        out["weight"] = np.ones(len(out))
    return out[list(kernel.ROLES)]


def run(
    frame: pd.DataFrame,
    indices: Sequence[str],
    **settings,
) -> pd.DataFrame:
    """The kernel on every record at once (today's path for data that fits)."""
    missing = [c for c in kernel.ROLES if c not in frame.columns]
    if missing:
        raise fail(
            f"the records have no column {', '.join(missing)}",
            "give a frame with region, year, income and weight",
            column=", ".join(missing),
        )
    return kernel.compute_groups(frame[list(kernel.ROLES)], indices, **settings)
