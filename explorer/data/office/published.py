"""Tables that hold the published index itself per district (a Gini, a poverty rate, a
median income, a top-decile share) rather than the shares behind it, and the scale each
is written on (percent or proportion). The answer is data for the caller; nothing here
changes the panel.
"""

from __future__ import annotations

from collections.abc import Collection, Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from explorer.data.office.measures import INDEX_MEASURES, measure_key

__all__ = ["Published", "PublishedColumn", "recognise_published"]

#: Measures that are a ratio of the whole: written either as percent or as proportion.
RATIOS = ("gini", "poverty_rate", "top10_share")


@dataclass(frozen=True)
class PublishedColumn:
    """One column of published figures: which index, on what scale, and why we think so."""

    column: str
    measure: str
    scale: str  # "percent", "proportion" or "level" (money)
    evidence: str


@dataclass(frozen=True)
class Published:
    """What :func:`recognise_published` found: ``is_published`` when the table holds indices
    and no bracket shares to compute them from."""

    is_published: bool
    columns: tuple[PublishedColumn, ...]

    def scale_of(self, column: str) -> str | None:
        """The scale of ``column``, or None when it is not a published figure."""
        return next((c.scale for c in self.columns if c.column == column), None)


def _scale(values: pd.Series, header: str, percent_cells: bool) -> tuple[str, str]:
    finite = values.to_numpy(float)
    finite = finite[np.isfinite(finite)]
    if percent_cells:
        return "percent", "the cells carry a % sign"
    if "%" in header or "percent" in header.lower() or "per cent" in header.lower():
        return "percent", f"the header '{header}' says percent"
    if finite.size and finite.min() >= 0 and finite.max() <= 1:
        return "proportion", "every value lies between 0 and 1"
    if finite.size and finite.min() >= 0 and finite.max() <= 100:
        return "percent", "values above 1 and none above 100"
    return "unknown", "values outside 0–100: check the column"


def recognise_published(
    table: pd.DataFrame,
    headers: Mapping[str, str] | None = None,
    percent_columns: Collection[str] = (),
) -> Published:
    """Tell whether a tidy table holds published indices, and on which scale.

    Parameters
    ----------
    table : DataFrame
        Tidy table (``region``, ``year``, measures).
    headers : mapping, optional
        Column -> header as written in the file (a ``%`` there says percent).
    percent_columns : collection of str, optional
        Columns whose cells carried a ``%`` sign.

    Returns
    -------
    Published
    """
    headers = dict(headers or {})
    found = []
    for column in table.columns:
        if column in ("region", "year", "line") or not pd.api.types.is_numeric_dtype(table[column]):
            continue
        header = headers.get(column, column)
        key = column if column in INDEX_MEASURES else measure_key(header)
        if key not in INDEX_MEASURES:
            continue
        if key in RATIOS:
            scale, evidence = _scale(table[column], header, column in percent_columns)
        else:
            scale, evidence = "level", "an amount of money per person or household"
        found.append(PublishedColumn(column, key, scale, f"'{header}' names {key}; {evidence}"))
    shares = any(str(c).startswith("share_") for c in table.columns)
    return Published(bool(found) and not shares, tuple(found))
