"""The data model: a validated district-year :class:`Panel`, the :class:`Problem` found in an
input, and :class:`DataError`, the one exception bad input raises.

Everything downstream of validation (:mod:`explorer.data.validate`) trusts a Panel.
"""

from __future__ import annotations

import functools
import hashlib
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

__all__ = [
    "KINDS",
    "KIND_COLUMNS",
    "PUBLISHED_MEASURES",
    "PUBLISHED_SIGNS",
    "DataError",
    "Panel",
    "Problem",
    "fail",
    "fingerprint",
    "problems_table",
]

KINDS = ("brackets", "units", "means", "published")

#: Figures a statistics office publishes per district-year and Rift shows as given (the
#: ``published`` kind), in the order they are listed. Any of the first four in a table's
#: columns marks it as published figures; mean income and population then ride along.
PUBLISHED_SIGNS = ("gini", "poverty_rate", "median_income", "top10_share")
PUBLISHED_MEASURES = (*PUBLISHED_SIGNS, "mean_income", "population")
LISTED = 8  # how many lines or ids a message names before "and N more"

#: The columns of ``Panel.data`` for each kind, in order (the contract of DEVELOPERS.md).
KIND_COLUMNS: dict[str, tuple[str, ...]] = {
    "brackets": (
        "region",
        "year",
        "bracket",
        "pop_share",
        "income_share",
        "population",
        "mean_income",
    ),
    "units": ("region", "year", "income", "weight"),
    "means": ("region", "year", "mean_income", "population"),
    # One row per district, year and published figure; ``scale`` is percent, proportion
    # or level (money, people) as detected or declared, the value as the office wrote it.
    "published": ("region", "year", "measure", "value", "scale"),
}


# --------------------------------------------------------------------------------------
# Problems
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input, in the planner's words.

    Parameters
    ----------
    message : str
        What is wrong, in plain words.
    fix : str
        How to put it right.
    file : str
        File name as the user gave it.
    row : int or None
        1-based line in the file, header = line 1; None for the whole file.
    column : str or None
        Column as named in the file.
    severity : {"error", "warning"}
    """

    message: str
    fix: str = ""
    file: str = ""
    row: int | None = None
    column: str | None = None
    severity: str = "error"

    def __post_init__(self) -> None:
        if self.severity not in ("error", "warning"):
            raise ValueError(f"severity must be 'error' or 'warning', not {self.severity!r}")

    def text(self) -> str:
        """One line naming where, what and how to fix it."""
        where = [self.file or "input"]
        if self.row is not None:
            where.append(f"line {self.row}")
        if self.column is not None:
            where.append(f"column '{self.column}'")
        out = f"{', '.join(where)} [{self.severity}]: {self.message}"
        return f"{out} Fix: {self.fix}" if self.fix else out


class DataError(ValueError):
    """Input that cannot be used, with every problem found in it.

    ``problems`` holds errors and the warnings found alongside them; ``str()`` lists them
    all, one per line; ``table()`` gives them as a DataFrame for display.
    """

    def __init__(self, problems: Problem | str | Iterable[Problem | str]) -> None:
        if isinstance(problems, Problem | str):
            problems = [problems]
        self.problems: tuple[Problem, ...] = tuple(
            p if isinstance(p, Problem) else Problem(str(p)) for p in problems
        )
        super().__init__(self._render())

    def _render(self) -> str:
        errors = sum(p.severity == "error" for p in self.problems)
        head = f"{errors} error(s), {len(self.problems) - errors} warning(s) in the input:"
        return "\n".join([head, *("- " + p.text() for p in self.problems)])

    def __str__(self) -> str:
        return self._render()

    def table(self) -> pd.DataFrame:
        """The problems as a DataFrame: file, row, column, severity, message, fix."""
        return problems_table(self.problems)


def problems_table(problems: Sequence[Problem]) -> pd.DataFrame:
    """Problems as a DataFrame with columns file, row, column, severity, message, fix."""
    return pd.DataFrame(
        {
            "file": pd.Series([p.file for p in problems], dtype=object),
            "row": pd.array([p.row for p in problems], dtype="Int64"),
            "column": pd.Series([p.column for p in problems], dtype=object),
            "severity": pd.Series([p.severity for p in problems], dtype=object),
            "message": pd.Series([p.message for p in problems], dtype=object),
            "fix": pd.Series([p.fix for p in problems], dtype=object),
        }
    )


def _listing(items: Sequence[Any], limit: int = LISTED) -> str:
    shown = ", ".join(str(i) for i in items[:limit])
    return shown + (f" and {len(items) - limit} more" if len(items) > limit else "")


# --------------------------------------------------------------------------------------
# The panel
# --------------------------------------------------------------------------------------


def _empty_excluded() -> pd.DataFrame:
    return pd.DataFrame(
        {"region": pd.Series(dtype=str), "year": pd.Series(dtype="int64"), "reason": ""}
    ).iloc[:0]


@dataclass(frozen=True, eq=False)
class Panel:
    """A validated district-year panel of one kind.

    Attributes
    ----------
    kind : {"brackets", "units", "means", "published"}
    data : DataFrame
        Long tidy table sorted by region, year (then bracket or income); columns by kind:
        brackets ``region, year, bracket, pop_share, income_share, population,
        mean_income``; units ``region, year, income, weight``; means ``region, year,
        mean_income, population``; published ``region, year, measure, value, scale``.
    levels : tuple of str
        Higher-level columns (e.g. ``("county",)``), outermost first.
    hierarchy : DataFrame
        ``region`` plus one column per level, one row per district.
    boundaries : GeoDataFrame or None
        ``region``, ``geometry`` (EPSG:4326), ``name`` when the file had one, and the
        level attributes it holds; every district of the boundary file, including those
        with no data in the panel (filter on ``regions`` where only those are wanted).
    warnings : tuple of Problem
    fingerprint : str
        16 hex characters of sha256 over data, hierarchy and boundary geometry.
    name, income_concept : str
    excluded : DataFrame
        District-years left out because a value rule failed: ``region, year, reason``.
    """

    kind: str
    data: pd.DataFrame
    levels: tuple[str, ...] = ()
    hierarchy: pd.DataFrame = field(default_factory=lambda: pd.DataFrame({"region": []}))
    boundaries: Any = None
    warnings: tuple[Problem, ...] = ()
    fingerprint: str = ""
    name: str = ""
    income_concept: str = ""
    excluded: pd.DataFrame = field(default_factory=_empty_excluded)

    # Read once: a panel's data does not change, and pages ask for these again and again
    # (a scan of every row of a large panel each time).
    @functools.cached_property
    def regions(self) -> tuple[str, ...]:
        """District ids, sorted."""
        return tuple(pd.unique(self.data["region"]).tolist())

    @functools.cached_property
    def years(self) -> tuple[int, ...]:
        """Years present for at least one district, sorted."""
        return tuple(int(y) for y in np.unique(self.data["year"].to_numpy()))

    def describe(self) -> dict[str, Any]:
        """A summary for a check report: sizes, coverage, levels, boundary matches."""
        years = self.years
        sizes = self.data.groupby(["region", "year"], sort=False).size()
        summary: dict[str, Any] = {
            "kind": self.kind,
            "name": self.name,
            "income_concept": self.income_concept,
            "districts": len(self.regions),
            "district_years": int(len(sizes)),
            "years": {
                "first": years[0] if years else None,
                "last": years[-1] if years else None,
                "count": len(years),
            },
            "brackets": None,
            "units": None,
            "levels": {lv: int(self.hierarchy[lv].nunique()) for lv in self.levels},
            "boundaries": None,
            "warnings": len(self.warnings),
            "excluded": int(len(self.excluded)),
            "fingerprint": self.fingerprint,
        }
        if self.kind in ("brackets", "units") and len(sizes):
            summary[self.kind] = {"min": int(sizes.min()), "max": int(sizes.max())}
        if self.boundaries is not None:
            ours = set(self.regions)
            theirs = set(self.boundaries["region"])
            summary["boundaries"] = {
                "matched": len(ours & theirs),
                "panel_only": sorted(ours - theirs),
                "boundary_only": sorted(theirs - ours),
            }
        return summary


def fail(
    message: str,
    fix: str = "",
    *,
    file: str = "",
    row: int | None = None,
    column: str | None = None,
) -> DataError:
    """A :class:`DataError` carrying one problem: the one way code below the readers says no.

    Parameters
    ----------
    message : str
        What is wrong, in plain words.
    fix : str, optional
        How to put it right.
    file, row, column : optional
        Where it is: file name as the user gave it, 1-based line (header = 1), column.

    Returns
    -------
    DataError
        To be raised by the caller (``raise fail(...)``), so tracebacks point at the caller.
    """
    return DataError([Problem(message, fix, file=file, row=row, column=column)])


_HASH_ROWS = 500_000  # rows hashed at a time by :func:`fingerprint`


def fingerprint(
    kind: str, data: pd.DataFrame, hierarchy: pd.DataFrame, boundaries: Any = None
) -> str:
    """16 hex characters of sha256 over the canonical content of a panel.

    Equal content gives an equal fingerprint whatever file or order it came from, so
    caches keyed by it are safe to share within one session.
    """
    h = hashlib.sha256(kind.encode())
    for frame in (data, hierarchy):
        h.update("|".join(map(str, frame.columns)).encode())
        # A row's hash depends on that row alone, so hashing a large table a slice at a time
        # gives the same bytes while holding only a slice's hashes; text is hashed as
        # categories (the same hash, value for value) rather than one string at a time.
        for start in range(0, max(len(frame), 1), _HASH_ROWS):
            part = frame.iloc[start : start + _HASH_ROWS]
            text = {
                c: "category"
                for c in part.columns
                if pd.api.types.is_string_dtype(part[c].dtype)
                and part[c].dtype != object
                and not part[c].isna().any()
            }
            hashed = part.astype(text) if text and len(part) > 10_000 else part
            h.update(pd.util.hash_pandas_object(hashed, index=False).to_numpy().tobytes())
            del part, hashed
    if boundaries is not None:
        import shapely

        h.update("|".join(boundaries["region"].astype(str)).encode())
        for wkb in shapely.to_wkb(boundaries.geometry.to_numpy()):
            h.update(wkb or b"")
    return h.hexdigest()[:16]
