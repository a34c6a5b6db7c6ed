"""Column maps: the file's column names renamed to the panel's (``region=DistrictCode``)."""

from __future__ import annotations

from collections.abc import Mapping

import pandas as pd

from explorer.data.model import DataError, Problem

__all__ = ["apply_column_map", "parse_column_map"]


def parse_column_map(text: str) -> dict[str, str]:
    """``"region=DistrictCode,year=Yr"`` -> ``{"region": "DistrictCode", "year": "Yr"}``.

    Targets (left) are our names, sources (right) the file's.
    """
    mapping: dict[str, str] = {}
    for part in (text or "").split(","):
        if not part.strip():
            continue
        if "=" not in part:
            raise DataError(
                Problem(
                    f"the column map entry {part.strip()!r} has no '='",
                    "write entries as ours=theirs, e.g. region=DistrictCode",
                )
            )
        target, source = (s.strip() for s in part.split("=", 1))
        if not target or not source:
            raise DataError(
                Problem(
                    f"the column map entry {part.strip()!r} is incomplete",
                    "write entries as ours=theirs, e.g. region=DistrictCode",
                )
            )
        if target in mapping:
            raise DataError(
                Problem(
                    f"the column map names '{target}' twice", "give each of our columns one source"
                )
            )
        mapping[target] = source
    if not mapping:
        raise DataError(
            Problem(
                "the column map is empty",
                "write entries as ours=theirs, e.g. region=DistrictCode,year=Yr",
            )
        )
    return mapping


def apply_column_map(
    frame: pd.DataFrame, mapping: Mapping[str, str], *, file: str = ""
) -> pd.DataFrame:
    """A copy of ``frame`` with the file's columns renamed to ours; the input is unchanged."""
    present = [str(c) for c in frame.columns]
    problems = []
    sources = list(mapping.values())
    for target, source in mapping.items():
        if source not in present:
            problems.append(
                Problem(
                    f"the column map names '{source}' (for {target}), which is not a column of the file; columns present: {', '.join(present)}",
                    "use one of the columns present",
                    file=file,
                    row=1,
                    column=source,
                )
            )
        elif sources.count(source) > 1:
            problems.append(
                Problem(
                    f"the column '{source}' is mapped to more than one of our columns",
                    "map each column once",
                    file=file,
                    row=1,
                    column=source,
                )
            )
        if target in present and target not in sources:
            problems.append(
                Problem(
                    f"the file already has a column '{target}', so '{source}' cannot be renamed to it",
                    f"drop the map entry or rename the file's '{target}'",
                    file=file,
                    row=1,
                    column=target,
                )
            )
    if problems:
        raise DataError(problems)
    renamed = frame.rename(columns={s: t for t, s in mapping.items()})
    renamed.attrs = dict(frame.attrs)
    return renamed
