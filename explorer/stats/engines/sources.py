"""Where unit records come from: files named by path or glob, their format and columns.

Every engine reads the same four roles, ``region, year, income, weight``; ``columns``
maps a role to the file's own column name when they differ. ``weight`` may be mapped to
``None`` for unweighted records (every weight 1).
"""

from __future__ import annotations

import glob
from collections.abc import Iterable, Mapping
from pathlib import Path

from explorer.data.model import fail

__all__ = ["FORMATS", "column_names", "file_format", "resolve_files"]

FORMATS = {".parquet": "parquet", ".pq": "parquet", ".csv": "csv"}
_ROLES = ("region", "year", "income", "weight")


def resolve_files(source: str | Path | Iterable[str | Path]) -> list[Path]:
    """The files a source names: paths, globs (``data/*.parquet``) or Parquet folders.

    Raises
    ------
    explorer.data.model.DataError
        When a path or glob matches nothing, or the files mix formats.
    """
    items = [source] if isinstance(source, str | Path) else list(source)
    if not items:
        raise fail("no input file given", "name one or more Parquet or CSV files")
    files: list[Path] = []
    for item in items:
        text = str(item)
        if glob.has_magic(text):
            matched = sorted(Path(p) for p in glob.glob(text, recursive=True))
            matched = [p for p in matched if p.is_file()]
        elif Path(text).is_dir():  # a partitioned Parquet folder
            matched = sorted(p for p in Path(text).rglob("*") if p.suffix.lower() in FORMATS)
        elif Path(text).is_file():
            matched = [Path(text)]
        else:
            matched = []
        if not matched:
            raise fail(
                f"no file matches {text!r}",
                "check the path or glob; the folder must hold .parquet or .csv files",
                file=text,
            )
        files.extend(matched)
    file_format(files)
    return list(dict.fromkeys(files))


def file_format(files: list[Path]) -> str:
    """``"parquet"`` or ``"csv"``; one format per run."""
    kinds = {FORMATS.get(p.suffix.lower()) for p in files}
    if None in kinds:
        odd = next(p for p in files if p.suffix.lower() not in FORMATS)
        raise fail(
            f"{odd.name} is neither Parquet nor CSV",
            "use .parquet or .csv files",
            file=str(odd),
        )
    if len(kinds) > 1:
        raise fail("the inputs mix Parquet and CSV files", "give files of one format per run")
    return kinds.pop()


def column_names(
    available: Iterable[str], columns: Mapping[str, str | None] | None, file: str = ""
) -> dict[str, str | None]:
    """The file's column for each role, every missing column named in one error."""
    chosen: dict[str, str | None] = {role: role for role in _ROLES}
    for role, name in (columns or {}).items():
        if role not in _ROLES:
            raise fail(f"unknown column role {role!r}", f"use {', '.join(_ROLES)}")
        chosen[role] = name
    if chosen["region"] is None or chosen["year"] is None or chosen["income"] is None:
        raise fail("region, year and income columns are required", "map each to a column")
    have = set(available)
    missing = [name for name in chosen.values() if name is not None and name not in have]
    if missing:
        raise fail(
            f"column{'s' if len(missing) > 1 else ''} {', '.join(map(repr, missing))} not in "
            f"the input; its columns are {', '.join(sorted(have))}",
            "rename the columns or map them with columns={'income': 'your name', ...}",
            file=file,
            column=", ".join(missing),
        )
    return chosen
