"""A second table (district, year, population or mean) joined to a panel on district and
year, with the district-years found on one side only reported."""

from __future__ import annotations

from typing import Any

import pandas as pd

from explorer.data.model import Problem, fail

__all__ = ["join_measure"]

LISTED = 5


def _frame(table: Any) -> pd.DataFrame:
    return table if isinstance(table, pd.DataFrame) else table.table


def join_measure(
    panel: Any,
    other: Any,
    file: str = "second table",
) -> tuple[pd.DataFrame, tuple[Problem, ...]]:
    """Join a second table (district, year, measures) to a panel on district and year.

    Parameters
    ----------
    panel, other : DataFrame or OfficeTable
        Tidy tables with ``region`` and ``year``.
    file : str
        Name of the second table, for messages.

    Returns
    -------
    joined : DataFrame
        The panel's rows with the other table's measures (missing where unmatched).
    notes : tuple of Problem
        Warnings naming the district-years found in only one of the tables.

    Raises
    ------
    DataError
        When both tables hold the same measure, or a key is doubled in ``other``.
    """
    left, right = _frame(panel), _frame(other)
    clash = (set(left.columns) & set(right.columns)) - {"region", "year"}
    if clash:
        raise fail(
            f"both tables hold {', '.join(sorted(clash))}.",
            "Drop the measure from one of them before joining.",
            file=file,
        )
    if right.duplicated(["region", "year"]).any():
        first = right[right.duplicated(["region", "year"])].iloc[0]
        raise fail(
            f"'{first['region']}' appears more than once for {first['year']}.",
            "Keep one line per district and year.",
            file=file,
        )
    keys = ["region", "year"]
    right = right.astype({"region": str})
    joined = left.astype({"region": str}).merge(right, on=keys, how="left", indicator=True)
    panel_only = joined.loc[joined["_merge"] == "left_only", keys]
    other_only = right.merge(
        left[keys].astype({"region": str}), on=keys, how="left", indicator=True
    ).query("_merge == 'left_only'")[keys]
    notes = []
    for rows, words in (
        (panel_only, f"have no line in {file}"),
        (other_only, "of the second table are not in the panel"),
    ):
        if len(rows):
            shown = ", ".join(f"{r.region} {r.year}" for r in rows.head(LISTED).itertuples())
            more = f" and {len(rows) - LISTED} more" if len(rows) > LISTED else ""
            notes.append(
                Problem(
                    f"{len(rows)} district-year(s) {words}: {shown}{more}.",
                    "Check the names (see match_names) or the years.",
                    file=file,
                    severity="warning",
                )
            )
    return joined.drop(columns="_merge"), tuple(notes)
