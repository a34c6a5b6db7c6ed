"""How much memory a run may take, and which engine to use when none is named.

The memory engine holds every record several times over (the read columns, the sorted
copies, the group codes and the kernel's block temporaries): about
:data:`BYTES_PER_RECORD` bytes a record. The automatic choice takes DuckDB when that
estimate exceeds :data:`AUTO_FRACTION` of the machine's physical memory, and the memory
engine otherwise. Dask is never chosen automatically: it needs a cluster.
"""

from __future__ import annotations

import os
from pathlib import Path

from explorer.stats.engines import sources

__all__ = [
    "AUTO_FRACTION",
    "BYTES_PER_RECORD",
    "CSV_BYTES_PER_RECORD",
    "DEFAULT_BATCH_ROWS",
    "DEFAULT_MEMORY_LIMIT",
    "choose_engine",
    "estimate_bytes",
    "physical_memory",
]

AUTO_FRACTION = 0.25
"""Share of physical memory the memory engine may take before DuckDB is chosen."""

BYTES_PER_RECORD = 160
"""Memory-engine bytes per record (four columns read, sorted copies, codes, temporaries)."""

CSV_BYTES_PER_RECORD = 30
"""Typical CSV bytes per record, to count records of a CSV file from its size."""

DEFAULT_BATCH_ROWS = 1_000_000
"""Records handed to the kernel at once by the DuckDB engine (a few hundred MB of kernel work)."""

DEFAULT_MEMORY_LIMIT = "1GB"
"""DuckDB's own memory limit; its sort spills to a temporary folder beyond this."""


def physical_memory() -> int:
    """Bytes of physical memory of this machine."""
    try:
        return int(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES"))
    except (ValueError, OSError, AttributeError):  # no sysconf: assume a small machine
        return 4 << 30


def _records(path: Path) -> int:
    if sources.file_format([path]) == "parquet":
        import pyarrow.parquet as pq

        return int(pq.read_metadata(path).num_rows)
    return path.stat().st_size // CSV_BYTES_PER_RECORD


def estimate_bytes(files: list[Path]) -> int:
    """Memory the memory engine would need for these files, in bytes.

    Parquet: the record count from the file footers; CSV: the size over
    :data:`CSV_BYTES_PER_RECORD`; either times :data:`BYTES_PER_RECORD`.
    """
    return sum(_records(p) for p in files) * BYTES_PER_RECORD


def choose_engine(
    files: list[Path], fraction: float = AUTO_FRACTION, memory_bytes: int | None = None
) -> str:
    """``"duckdb"`` when the input would take more than ``fraction`` of memory, else ``"memory"``.

    Parameters
    ----------
    files : list of Path
        The input files (:func:`explorer.stats.engines.sources.resolve_files`).
    fraction : float
        Share of physical memory allowed to the memory engine.
    memory_bytes : int, optional
        Physical memory to assume; this machine's by default.
    """
    total = physical_memory() if memory_bytes is None else int(memory_bytes)
    return "duckdb" if estimate_bytes(files) > fraction * total else "memory"
