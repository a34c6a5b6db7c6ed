"""Higher levels above the districts (zone, region, ...): the ones proposed, the ones chosen.

A boundary file of an office carries many attributes: areas, ids, growth rates, log
incomes, several region schemes. Only a few of them can group districts for a
decomposition, so proposals are strict: a text column (not numbers) that puts every
district in exactly one group, with at least 2 groups and at most half as many groups as
districts (so no id, code or name unique per district). The planner then chooses levels
in order and may give each a display name; a chosen column need not be text, but it must
still nest the districts.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.ids import id_codes, id_strings, match_ids
from explorer.data.model import KIND_COLUMNS, PUBLISHED_MEASURES

__all__ = [
    "LevelCandidate",
    "LevelChoice",
    "district_values",
    "propose",
    "propose_levels",
    "read_choice",
]

_NUMBER = re.compile(r"^[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?%?$")
# The panel's own columns are data, never levels.
_NOT_LEVELS = {
    *(column for columns in KIND_COLUMNS.values() for column in columns),
    *PUBLISHED_MEASURES,
    "name",
    "income_concept",
    "geometry",
}
_SHARE = re.compile(r"^share_\d+$")


@dataclass(frozen=True)
class LevelCandidate:
    """A column that could serve as a higher level.

    Attributes
    ----------
    column : str
        Its name in the file.
    groups : int
        How many groups it puts the districts in.
    source : {"panel", "boundaries"}
        The file it comes from.
    """

    column: str
    groups: int
    source: str


@dataclass(frozen=True)
class LevelChoice:
    """The levels the planner chose: columns outermost first, and their display names."""

    columns: tuple[str, ...]
    names: tuple[str, ...]


def read_choice(levels: Sequence[str] | Mapping[str, str] | None) -> LevelChoice | None:
    """The planner's levels as given: a list of columns, or a mapping column -> name.

    Items of a list may also be ``(column, name)`` pairs. Names default to the column.
    """
    if levels is None:
        return None
    if isinstance(levels, str):
        levels = [part.strip() for part in levels.split(",") if part.strip()]
    pairs = list(levels.items()) if isinstance(levels, Mapping) else list(levels)
    columns, names = [], []
    for item in pairs:
        column, name = item if isinstance(item, tuple) else (item, item)
        columns.append(str(column))
        names.append(str(name).strip() or str(column))
    return LevelChoice(tuple(columns), tuple(names))


def _is_text(values: pd.Series) -> bool:
    """True for a column of words or codes; False for numbers, stored or written as text."""
    if isinstance(values.dtype, pd.CategoricalDtype):
        # the distinct cells decide: a unit-record column holds millions of rows, few words
        codes = values.cat.codes.unique()
        values = pd.Series(values.cat.categories[codes[codes >= 0]])
    if not (pd.api.types.is_object_dtype(values) or pd.api.types.is_string_dtype(values)):
        return False
    cells = values.dropna().astype(str).str.strip()
    cells = cells[cells != ""]
    if cells.empty:
        return False
    return not cells.str.replace(" ", "", regex=False).str.match(_NUMBER).all()


def district_values(table: pd.DataFrame, regions, column: str) -> pd.Series | None:
    """``column`` as one text value per district (index: district id), or None.

    None when a district has two values, or a value is missing.
    """
    values = table[column]
    if values.isna().any():
        return None
    # the distinct (district, value) pairs in order of first appearance, found on codes:
    # a frame of millions of unit records is never copied or hashed as text
    r_codes, r_names = _codes(regions)
    v_codes, v_uniques = _codes(values)
    first = _first_pairs(r_codes, v_codes, len(v_uniques))
    per = pd.DataFrame(
        {
            "region": np.asarray(r_names, dtype=object)[r_codes[first]],
            "v": pd.Series(v_uniques).to_numpy(dtype=object)[v_codes[first]],
        }
    )
    per["v"] = id_strings(per["v"])
    if per["v"].isna().any() or per["region"].duplicated().any():
        return None
    return per.set_index("region")["v"]


def _codes(values) -> tuple[np.ndarray, Any]:
    """Codes and distinct values; a categorical's own codes, without hashing its rows."""
    if isinstance(values, pd.Series) and isinstance(values.dtype, pd.CategoricalDtype):
        values = values.array
    if isinstance(values, pd.Categorical):
        return values.codes, values.categories
    if not isinstance(values, pd.Series):
        values = np.asarray(values, dtype=object)
    return pd.factorize(values)


def _first_pairs(a: np.ndarray, b: np.ndarray, nb: int) -> np.ndarray:
    """Positions of the first appearance of each distinct pair ``(a, b)``, in file order."""
    n = len(a)
    space = (int(a.max()) + 1 if n else 0) * max(nb, 1)
    if space <= 4 * n + 1024:  # few districts times few values: a table of first positions
        key = a.astype(np.int64 if space >= 2**31 else np.int32) * max(nb, 1) + b
        first = np.full(space, n, dtype=np.int64)
        np.minimum.at(first, key, np.arange(n, dtype=key.dtype))
        first = first[first < n]
    else:
        key = a.astype(np.int64) * max(nb, 1) + b
        _, first = np.unique(key, return_index=True)
    first.sort()
    return first


def _skip(column: str) -> bool:
    c = str(column)
    return c in _NOT_LEVELS or bool(_SHARE.match(c)) or c.startswith("_")


def propose(
    table: pd.DataFrame, regions, n_districts: int, source: str
) -> dict[str, tuple[LevelCandidate, pd.Series]]:
    """Candidates among ``table``'s columns (one row per district or per district-year)."""
    found: dict[str, tuple[LevelCandidate, pd.Series]] = {}
    for column in table.columns:
        if _skip(column) or not _is_text(table[column]):
            continue
        mapping = district_values(table, regions, column)
        if mapping is None:
            continue
        groups = int(mapping.nunique())
        if 2 <= groups <= n_districts / 2:
            found[str(column)] = (LevelCandidate(str(column), groups, source), mapping)
    return found


def propose_levels(
    table: pd.DataFrame, boundaries: pd.DataFrame | None = None
) -> list[LevelCandidate]:
    """The columns of a panel (and its boundaries) that could serve as higher levels.

    Parameters
    ----------
    table : DataFrame
        The panel as read, with a ``region`` column (after any column map).
    boundaries : DataFrame, optional
        Attributes of the boundary file as read; its ``region`` column, else the
        attribute that best matches the panel's ids (:func:`explorer.data.ids.match_ids`),
        holds the district ids.

    Returns
    -------
    list of LevelCandidate
        Outermost (fewest groups) first; a column in both files is listed once, from
        the panel.
    """
    codes, names = id_codes(table["region"])
    keep = codes >= 0
    # districts as codes into their ids: no string per row, no copy of a full table
    regions = pd.Categorical.from_codes(codes[keep], categories=pd.Index(names, dtype=object))
    n = len(np.unique(codes[keep]))
    found = propose(table if keep.all() else table[keep], regions, n, "panel")
    present = set(names[np.unique(codes[keep])])
    ids = None if boundaries is None else _boundary_ids(boundaries, present)
    if ids is not None:
        inside = pd.Series(ids).isin(present).to_numpy()
        attrs = boundaries[inside].drop(columns=["geometry"], errors="ignore")
        for column, item in propose(attrs, ids[inside], n, "boundaries").items():
            found.setdefault(column, item)
    return sorted((c for c, _ in found.values()), key=lambda c: (c.groups, c.column))


def _boundary_ids(boundaries: pd.DataFrame, panel_ids) -> np.ndarray | None:
    """The panel's id of each boundary feature, through the attribute that matches best."""
    attrs = {str(c): id_strings(boundaries[c]) for c in boundaries.columns if c != "geometry"}
    found = match_ids(set(panel_ids), attrs)
    if found.column is None or found.matched == 0:
        return None
    back = {code: number for number, code in found.panel_ids.items()}
    ids = attrs[found.column]
    if found.boundary_ids:
        ids = [found.boundary_ids.get(i, i) for i in ids]
    return np.array([back.get(i, i) for i in ids], dtype=object)
