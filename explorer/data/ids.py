"""District identifiers: read as text, leading zeros kept, and matched across files.

``01`` and ``1`` are different codes: they are never merged silently. Where one file holds
codes as numbers (a spreadsheet or a .dbf that dropped the zeros) and the other holds them
zero-padded, the numbers are matched to the padded codes only when that makes every id of
the numeric side match, and a note says so.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

__all__ = [
    "IdMatch",
    "id_codes",
    "id_strings",
    "leading_zero_clashes",
    "match_ids",
    "missing_cells",
]

_DIGITS = re.compile(r"^\d+$")


def missing_cells(raw: pd.Series) -> np.ndarray:
    """Mask of cells that are empty: NaN, None, or text that is only blanks."""
    miss = raw.isna().to_numpy()
    if pd.api.types.is_string_dtype(raw.dtype) and raw.dtype != object:
        return miss | raw.str.strip().eq("").fillna(False).to_numpy(bool)
    if raw.dtype == object:
        blank = [isinstance(v, str) and not v.strip() for v in raw.tolist()]
        return miss | np.asarray(blank, dtype=bool)
    return miss


def id_strings(raw: pd.Series) -> np.ndarray:
    """Ids as stripped text; whole floats lose their '.0'; missing cells become None.

    Text is kept exactly (``"007"`` stays ``"007"``); only numbers are written out.
    """
    if isinstance(raw.dtype, pd.CategoricalDtype):
        # each distinct id made text once; the rows share those strings (a large file of
        # unit records holds few districts and millions of rows)
        names = id_strings(pd.Series(raw.cat.categories.to_numpy(dtype=object), dtype=object))
        codes = raw.cat.codes.to_numpy()
        out = np.append(names, None).astype(object)[np.where(codes < 0, len(names), codes)]
        return out
    miss = missing_cells(raw)
    if pd.api.types.is_float_dtype(raw.dtype):
        v = raw.to_numpy(dtype=float)
        whole = np.isfinite(v) & (v == np.round(v))
        ints = np.where(whole, v, 0).astype(np.int64).astype(str)
        out = np.where(whole, ints, v.astype(str)).astype(object)
    elif pd.api.types.is_string_dtype(raw.dtype) and raw.dtype != object:
        out = np.array(raw.str.strip().to_numpy(dtype=object))
    elif raw.dtype == object:
        out = np.array(
            [
                str(int(v)) if isinstance(v, float) and v.is_integer() else str(v).strip()
                for v in raw.tolist()
            ],
            dtype=object,
        )
    else:
        out = raw.astype(str).to_numpy(dtype=object).copy()
    out[miss] = None
    return out


def id_codes(raw: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """Ids as codes into their distinct texts: ``(codes, names)``, code -1 for a missing id.

    ``names[codes]`` is :func:`id_strings` of ``raw`` (None where -1). A categorical column
    is read on its categories, so a file of millions of unit records in a few hundred
    districts costs a small integer per row, not a string.
    """
    if isinstance(raw.dtype, pd.CategoricalDtype):
        texts = id_strings(pd.Series(raw.cat.categories.to_numpy(dtype=object), dtype=object))
        merged, names = pd.factorize(texts)  # categories equal once stripped share a code
        lookup = np.append(merged, -1).astype(np.int32)
        codes = raw.cat.codes.to_numpy()
        return lookup[np.where(codes < 0, len(lookup) - 1, codes)], np.asarray(names, dtype=object)
    codes, names = pd.factorize(id_strings(raw))  # None -> -1
    return codes.astype(np.int32), np.asarray(names, dtype=object)


def leading_zero_clashes(ids: Iterable[str]) -> list[list[str]]:
    """Groups of distinct codes that differ only by leading zeros (``01`` and ``1``)."""
    digits = sorted({i for i in ids if isinstance(i, str) and _DIGITS.match(i)})
    by_value: dict[int, list[str]] = {}
    for code in digits:
        by_value.setdefault(int(code), []).append(code)
    return [sorted(by_value[v], key=len) for v in sorted(by_value) if len(by_value[v]) > 1]


@dataclass(frozen=True)
class IdMatch:
    """How the ids of two files were matched.

    Attributes
    ----------
    column : str or None
        The boundary attribute holding the district ids (None: no attribute matches).
    matched : int
        How many of the panel's ids it matches (after padding, if any).
    panel_ids : dict
        Panel id -> the code used instead (numbers written as the boundary file's
        zero-padded codes); empty when the ids are used as they are.
    boundary_ids : dict
        Boundary id -> the code used instead, the same the other way round.
    note : str
        What was done, for a warning; empty when nothing was.
    """

    column: str | None
    matched: int
    panel_ids: dict[str, str]
    boundary_ids: dict[str, str]
    note: str = ""


def _pad_to(numbers: set[str], codes: set[str]) -> dict[str, str] | None:
    """Numbers -> zero-padded codes, when every number has exactly one such code."""
    if not numbers or not all(_DIGITS.match(n) and (n == "0" or n[0] != "0") for n in numbers):
        return None
    by_value: dict[int, list[str]] = {}
    for code in codes:
        if _DIGITS.match(code):
            by_value.setdefault(int(code), []).append(code)
    mapping = {}
    for n in numbers:
        found = by_value.get(int(n), [])
        if len(found) != 1:
            return None
        mapping[n] = found[0]
    if all(k == v for k, v in mapping.items()):
        return None
    return mapping


def _one_column(panel: set[str], column: str, codes: set[str]) -> IdMatch:
    plain = len(panel & codes)
    if plain == len(panel):
        return IdMatch(column, plain, {}, {})
    padded = _pad_to(panel, codes)
    if padded is not None:
        example = next(iter(sorted(padded.items())))
        note = (
            f"the panel's district ids are numbers and the boundary file's '{column}' holds "
            f"them zero-padded; every id matches once padded (e.g. {example[0]} -> "
            f"{example[1]}), so the padded codes are used"
        )
        return IdMatch(column, len(panel), padded, {}, note)
    back = _pad_to(codes, panel)
    if back is not None:
        example = next(iter(sorted(back.items())))
        note = (
            f"the boundary file's '{column}' holds the district ids as numbers and the panel "
            f"holds them zero-padded; every id matches once padded (e.g. {example[0]} -> "
            f"{example[1]}), so the padded codes are used"
        )
        return IdMatch(column, len(panel), {}, back, note)
    return IdMatch(column, plain, {}, {})


def match_ids(panel_ids: Iterable[str], attributes: dict[str, Sequence[str | None]]) -> IdMatch:
    """The boundary attribute that best matches the panel's ids, and how.

    Parameters
    ----------
    panel_ids : iterable of str
        The panel's district ids as text.
    attributes : dict
        Boundary attribute name -> its values as text (:func:`id_strings`); an attribute
        named ``region`` is taken as the id whatever it matches.

    Returns
    -------
    IdMatch
    """
    panel = {i for i in panel_ids if i is not None}
    best = IdMatch(None, 0, {}, {})
    for column, values in attributes.items():
        codes = {v for v in values if v is not None}
        found = _one_column(panel, column, codes)
        if column == "region":
            return found
        if found.matched > best.matched:
            best = found
    return best
