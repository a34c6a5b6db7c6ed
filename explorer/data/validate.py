"""Validation: a raw table (and boundaries) in, a :class:`~explorer.data.model.Panel` out, or
a :class:`~explorer.data.model.DataError` naming every problem. The one place input is checked.

Readers in :mod:`explorer.data.io` turn files into DataFrames; everything downstream trusts a
:class:`Panel`. Readers may leave warnings of their own in ``frame.attrs["problems"]`` (and
``boundaries.attrs["problems"]``); ``validate`` carries them into ``Panel.warnings``.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import (
    KIND_COLUMNS,
    KINDS,
    LISTED,
    DataError,
    Panel,
    Problem,
    _listing,
    fingerprint,
)

SHARE_EXACT = 1e-6  # shares within this of 1 are taken as they are
SHARE_RESCALE = (
    0.01  # within this, rescaled to 1 with a warning; beyond, the district-year is left out
)
CONVEX_TOL = 1e-9  # relative slack on bracket mean incomes (rounding of printed shares)

_SHARE_COLUMN = re.compile(r"^share_(\d+)$")
_DATA_COLUMNS = {column for columns in KIND_COLUMNS.values() for column in columns}
_NOT_LEVELS = _DATA_COLUMNS | {"name", "income_concept", "geometry"}
_NAME_ATTRIBUTES = ("name", "district_name", "district", "label", "title")


# --------------------------------------------------------------------------------------
# Validation helpers
# --------------------------------------------------------------------------------------


class _Log:
    """Problems in the order found."""

    def __init__(self, file: str, inherited: Iterable[Problem]) -> None:
        self.file = file
        self.items: list[Problem] = list(inherited)

    def add(
        self, message: str, fix: str = "", *, row=None, column=None, severity="error", file=None
    ):
        self.items.append(
            Problem(
                message,
                fix,
                file=self.file if file is None else file,
                row=None if row is None else int(row),
                column=column,
                severity=severity,
            )
        )

    @property
    def failed(self) -> bool:
        return any(p.severity == "error" for p in self.items)

    def raise_if_failed(self) -> None:
        if self.failed:
            raise DataError(self.items)


def _missing(raw: pd.Series) -> np.ndarray:
    miss = raw.isna().to_numpy()
    if pd.api.types.is_string_dtype(raw.dtype) and raw.dtype != object:
        return miss | raw.str.strip().eq("").fillna(False).to_numpy(bool)
    if raw.dtype == object:
        blank = [isinstance(v, str) and not v.strip() for v in raw.tolist()]
        return miss | np.asarray(blank, dtype=bool)
    return miss


def _numbers(raw: pd.Series) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Values as float, and masks of missing cells and of text that is not a number."""
    miss = _missing(raw)
    if pd.api.types.is_bool_dtype(raw.dtype):
        values = np.full(len(raw), np.nan)
        return values, miss, ~miss
    values = np.array(pd.to_numeric(raw, errors="coerce").to_numpy(dtype=float, na_value=np.nan))
    text = ~miss & np.isnan(values)
    values[miss] = np.nan
    return values, miss, text


def _id_strings(raw: pd.Series) -> np.ndarray:
    """District ids as stripped strings; whole floats lose their '.0'; missing -> None."""
    miss = _missing(raw)
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


def _value_list(lines: np.ndarray, values: Sequence[Any]) -> str:
    values = [v.item() if isinstance(v, np.generic) else v for v in values]
    pairs = [f"line {ln} ({v!r})" for ln, v in zip(lines, values, strict=False)]
    return _listing(pairs)


class _Failures:
    """Per district-year reasons for leaving it out; the first reason found wins."""

    def __init__(self) -> None:
        self.parts: list[pd.DataFrame] = []

    def rows(self, mask, gid, line, column, template, values, priority=0) -> None:
        m = np.asarray(mask, dtype=bool)
        if not m.any():
            return
        col = np.asarray(column, dtype=object)
        self.parts.append(
            pd.DataFrame(
                {
                    "gid": gid[m],
                    "line": line[m],
                    "column": col[m] if col.ndim else str(column),
                    "template": template,
                    "value": np.asarray(values, dtype=object)[m],
                    "priority": priority,
                }
            )
        )

    def groups(self, gids, lines, column, messages, priority=5) -> None:
        if len(gids) == 0:
            return
        self.parts.append(
            pd.DataFrame(
                {
                    "gid": np.asarray(gids),
                    "line": np.asarray(lines),
                    "column": column,
                    "template": "{value}",
                    "value": np.asarray(messages, dtype=object),
                    "priority": priority,
                }
            )
        )

    def failing(self) -> np.ndarray:
        if not self.parts:
            return np.array([], dtype=np.int64)
        return np.unique(np.concatenate([p["gid"].to_numpy() for p in self.parts]))

    def first(self) -> pd.DataFrame:
        if not self.parts:
            return pd.DataFrame(columns=["gid", "line", "column", "message"])
        allp = pd.concat(self.parts, ignore_index=True)
        allp = allp.sort_values(["gid", "priority", "line"], kind="stable")
        allp = allp.drop_duplicates("gid").reset_index(drop=True)
        allp["message"] = [
            t.format(value=v) for t, v in zip(allp["template"], allp["value"], strict=True)
        ]
        return allp[["gid", "line", "column", "message"]]


def _number_checks(
    fails, values, miss, text, raw, gid, line, column, *, positive=False, signed=False
):
    """Row checks shared by every numeric value column."""
    rawv = raw.to_numpy(dtype=object) if isinstance(raw, pd.Series) else raw
    fails.rows(text, gid, line, column, "text {value!r} where a number is expected", rawv)
    fails.rows(miss, gid, line, column, "a value is missing", rawv)
    finite = np.isfinite(values)
    fails.rows(
        ~miss & ~text & ~finite,
        gid,
        line,
        column,
        "the value {value} is not a finite number",
        values,
    )
    if not signed:
        fails.rows(
            finite & (values < 0), gid, line, column, "the value {value!r} is negative", values
        )
    if positive:
        fails.rows(
            finite & (values == 0),
            gid,
            line,
            column,
            "the value is zero but must be positive",
            values,
        )


def detect_kind(columns: Iterable[str]) -> str | None:
    """The panel kind its columns imply, or None.

    brackets: ``pop_share`` + ``income_share`` (long) or ``share_1 … share_k`` (wide);
    units: ``income``; means: ``mean_income`` without brackets (common practice of this
    project's data model, see DEVELOPERS.md).
    """
    cols = set(columns)
    if {"pop_share", "income_share"} <= cols or any(_SHARE_COLUMN.match(c) for c in cols):
        return "brackets"
    if "income" in cols:
        return "units"
    if "mean_income" in cols:
        return "means"
    return None


# --------------------------------------------------------------------------------------
# validate
# --------------------------------------------------------------------------------------


def validate(
    frame: pd.DataFrame,
    *,
    kind: str | None = None,
    file: str = "",
    boundaries: Any = None,
    boundary_file: str = "",
    levels: Sequence[str] | None = None,
    allow_negative: bool = False,
) -> Panel:
    """Check a table (and optionally its boundaries) and return a :class:`Panel`.

    Every problem is collected before anything is raised. A value problem confined to one
    district-year (shares that do not sum to 1, a negative or missing value, brackets out
    of order) leaves that district-year out (``Panel.excluded``) with a warning; problems
    with the file as a whole raise :class:`DataError`.

    Parameters
    ----------
    frame : DataFrame
        As read; never modified. Its integer index, when unique, is taken as file line
        minus 2 (header = line 1), which is what :func:`explorer.data.io.read_table` returns.
    kind : {"brackets", "units", "means"}, optional
        Overrides detection from the columns.
    file, boundary_file : str
        Names used in problems.
    boundaries : GeoDataFrame, optional
        In EPSG:4326. With a ``region`` column, or the attribute best matching the
        panel's ids is used.
    levels : sequence of str, optional
        Higher levels to use; by default every column (of the panel or the boundaries)
        constant within districts that groups them into more than one and fewer than n
        groups.
    allow_negative : bool
        Accept negative unit incomes (losses); zero incomes are always accepted.

    Returns
    -------
    Panel

    Raises
    ------
    DataError
        Listing every problem (errors and warnings), each with file, line and column.

    References
    ----------
    Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index. *Review
    of Economics and Statistics* 54: 306-316 (a Lorenz curve from bracket shares must be
    convex: bracket mean incomes non-decreasing from bottom to top).
    """
    if not isinstance(frame, pd.DataFrame):
        raise DataError(Problem("expected a table of rows and columns", file=file))
    inherited = list(frame.attrs.get("problems", ()))
    if boundaries is not None:
        inherited += list(getattr(boundaries, "attrs", {}).get("problems", ()))
    log = _Log(file, inherited)
    if kind is not None and kind not in KINDS:
        log.add(f"unknown kind {kind!r}", f"use one of {', '.join(KINDS)}")
    columns = [str(c).strip() for c in frame.columns]

    if frame.shape[1] == 0:
        log.add(
            "the file is empty: it has no header and no rows",
            "export the table again with a header line",
        )
        log.raise_if_failed()
    seen: dict[str, list[int]] = {}
    for pos, c in enumerate(columns):
        seen.setdefault(c, []).append(pos + 1)
    for c, where in seen.items():
        if len(where) > 1:
            log.add(
                f"duplicated column name: '{c}' appears {len(where)} times (positions {_listing(where)})",
                "give every column its own name, or delete the repeated column",
                row=1,
                column=c,
            )
    if len(frame) == 0:
        log.add(
            "the file has a header but no data rows", "export the table again with its rows", row=1
        )
    log.raise_if_failed()

    detected = detect_kind(columns)
    kind = kind or detected
    share_cols = sorted(
        (c for c in columns if _SHARE_COLUMN.match(c)), key=lambda c: int(c.split("_")[1])
    )
    wide = (
        kind == "brackets"
        and not {"pop_share", "income_share"} <= set(columns)
        and bool(share_cols)
    )
    if kind is None:
        log.add(
            f"cannot tell what kind of panel this is from its columns ({_listing(columns)})",
            "brackets need pop_share and income_share (or share_1 … share_k), unit records "
            "need income, district means need mean_income; rename columns with a column map",
            row=1,
        )
        log.raise_if_failed()
    required = ["region", "year"] + {
        "brackets": [] if wide else ["pop_share", "income_share"],
        "units": ["income"],
        "means": ["mean_income"],
    }.get(kind, [])
    if kind == "brackets" and wide:
        numbers = [int(c.split("_")[1]) for c in share_cols]
        gaps = sorted(set(range(1, max(numbers) + 1)) - set(numbers))
        if gaps:
            log.add(
                f"share columns must run share_1 … share_{max(numbers)} without gaps; missing: "
                + _listing([f"share_{g}" for g in gaps]),
                "add the missing share columns or rename them",
                row=1,
            )
    for c in required:
        if c not in columns:
            log.add(
                f"required column '{c}' is missing (columns present: {_listing(columns, 20)})",
                f"rename your column to '{c}' or give a column map such as {c}=YourColumn",
                row=1,
                column=c,
            )
    log.raise_if_failed()

    table = frame.copy(deep=False)
    table.columns = columns
    idx = frame.index
    if pd.api.types.is_integer_dtype(idx.dtype) and idx.is_unique:
        line = idx.to_numpy(dtype=np.int64) + 2
    else:
        line = np.arange(len(frame), dtype=np.int64) + 2

    # --- keys: region and year (a bad key cannot be assigned to a district-year) ------
    region = _id_strings(table["region"])
    bad_region = np.array([r is None for r in region], dtype=bool)
    if bad_region.any():
        log.add(
            f"the district id is missing on {bad_region.sum()} line(s): {_listing(line[bad_region].tolist())}",
            "fill in the region of every row",
            row=line[bad_region][0],
            column="region",
        )
    year_raw = table["year"]
    year, year_miss, year_text = _numbers(year_raw)
    raw_year_obj = year_raw.to_numpy(dtype=object)
    for mask, what in (
        (year_miss, "the year is missing"),
        (year_text, "the year is text, not a number"),
        (~year_miss & ~year_text & ~np.isfinite(year), "the year is not a finite number"),
        (np.isfinite(year) & (year != np.round(year)), "the year is a fraction, not a whole year"),
    ):
        if mask.any():
            log.add(
                f"{what}, on {mask.sum()} line(s): {_value_list(line[mask], raw_year_obj[mask])}",
                "write years as whole numbers such as 2019 (for a fiscal year 2019/20 use its first year)",
                row=line[mask][0],
                column="year",
            )
    key_ok = ~bad_region & np.isfinite(year) & (year == np.round(year))
    if not key_ok.any():
        log.add(
            "no row has both a district id and a valid year", "check the region and year columns"
        )
        log.raise_if_failed()

    keep = np.flatnonzero(key_ok)
    region = region[keep]
    year_i = year[keep].astype(np.int64)
    line = line[keep]
    table = table.iloc[keep]
    # one sort by (region, year, line): every later step is a segment operation
    region_code, region_names = pd.factorize(region, sort=True)
    order = np.lexsort((line, year_i, region_code))
    region, year_i, line = region[order], year_i[order], line[order]
    region_code = region_code[order]
    table = table.iloc[order]
    new_group = np.r_[True, (region_code[1:] != region_code[:-1]) | (year_i[1:] != year_i[:-1])]
    gid = np.cumsum(new_group) - 1
    n_groups = int(gid[-1]) + 1
    starts = np.flatnonzero(new_group)
    g_region, g_year = region[starts], year_i[starts]

    fails = _Failures()
    notes: list[tuple[str, str]] = []  # (message, column) warnings aggregated over groups
    if kind == "brackets":
        data = _brackets(table, wide, share_cols, gid, line, starts, n_groups, fails, notes)
    elif kind == "units":
        data = _units(table, gid, line, n_groups, fails, log, allow_negative)
    else:
        data = _means(table, gid, line, starts, n_groups, fails)
    reasons = fails.first()
    bad = reasons["gid"].to_numpy(dtype=np.int64)
    all_out = len(bad) == n_groups
    # A wide file has no income_share column: name its own share columns instead.
    own_shares = f"{share_cols[0]}…{share_cols[-1]}" if kind == "brackets" and wide else None
    for g, ln, col, msg in zip(
        bad, reasons["line"], reasons["column"], reasons["message"], strict=True
    ):
        if own_shares and col == "income_share":
            col, msg = own_shares, msg.replace("the income_share values", "the shares")
        log.add(
            f"district {g_region[g]}, year {g_year[g]} left out: {msg}",
            "correct this district-year in the file; the rest of the panel is used without it",
            row=ln,
            column=col,
            severity="error" if all_out else "warning",
        )
    if all_out:
        log.add(
            "no district-year passed the checks, so there is nothing to analyse",
            "correct the values listed above",
        )
    for message, column in notes:
        log.add(message, "", column=column, severity="warning")
    log.raise_if_failed()

    good_group = np.ones(n_groups, dtype=bool)
    good_group[bad] = False
    data = data[good_group[data["_gid"].to_numpy()]]
    # group ids already run in (region, year) order: one lexsort gives the contract's order
    within = {"brackets": "bracket", "units": "income"}.get(kind)
    secondary = data[within].to_numpy() if within else np.zeros(len(data))
    data = data.iloc[np.lexsort((secondary, data["_gid"].to_numpy()))]
    src = data["_src"].to_numpy()
    names = np.asarray(region_names, dtype=object)
    data = data.drop(columns=["_gid", "_src"]).reset_index(drop=True)
    data.insert(0, "year", year_i[src])
    data.insert(0, "region", pd.Series(names[region_code[src]], dtype=str))
    excluded = pd.DataFrame(
        {
            "region": pd.Series(g_region[bad], dtype=str),
            "year": pd.Series(g_year[bad], dtype="int64"),
            "reason": pd.Series(
                [
                    m.replace("the income_share values", "the shares") if own_shares else m
                    for m in reasons["message"].to_numpy(dtype=object)
                ],
                dtype=str,
            ),
        }
    )

    good = np.flatnonzero(good_group)
    _coverage(pd.DataFrame({"region": g_region[good], "year": g_year[good]}), log)
    income_concept = _income_concept(table, good_group[gid], log)
    hierarchy, level_names, bounds = _levels_and_boundaries(
        table, region_code, names, good_group[gid], data, levels, boundaries, boundary_file, log
    )
    log.raise_if_failed()
    return Panel(
        kind=kind,
        data=data,
        levels=level_names,
        hierarchy=hierarchy,
        boundaries=bounds,
        warnings=tuple(log.items),
        fingerprint=fingerprint(kind, data, hierarchy, bounds),
        name=Path(file).stem if file else "",
        income_concept=income_concept,
        excluded=excluded,
    )


def _group_first_line(gids: np.ndarray, starts: np.ndarray, line: np.ndarray) -> np.ndarray:
    return line[starts[gids]]


def _duplicate_rows(gid, line, starts, n_groups, fails, what="district-year") -> None:
    sizes = np.bincount(gid, minlength=n_groups)
    dup = np.flatnonzero(sizes > 1)
    if len(dup):
        lines_of = pd.Series(line).groupby(gid).agg(list)
        fails.groups(
            dup,
            line[starts[dup]],
            "region",
            [f"the {what} appears on {sizes[g]} lines ({_listing(lines_of[g])})" for g in dup],
            priority=1,
        )


def _optional_number(table, column, gid, line, fails, n_rows, *, positive):
    if column not in table.columns:
        return np.full(n_rows, np.nan)
    values, miss, text = _numbers(table[column])
    raw = table[column].to_numpy(dtype=object)
    fails.rows(
        text, gid, line, column, f"{column} holds text {{value!r}} where a number is expected", raw
    )
    finite = np.isfinite(values)
    fails.rows(
        ~miss & ~text & ~finite,
        gid,
        line,
        column,
        "the value {value} is not a finite number",
        values,
    )
    fails.rows(
        finite & (values < 0), gid, line, column, f"{column} is negative ({{value!r}})", values
    )
    if positive:
        fails.rows(
            finite & (values == 0),
            gid,
            line,
            column,
            f"{column} is zero but must be positive",
            values,
        )
    return values


def _constant_within(values, gid, n_groups, first_line, column, fails, notes) -> None:
    """Per-district-year values (population, mean income) must be equal on every row."""
    nan = np.isnan(values)
    n = np.bincount(gid, minlength=n_groups)
    n_nan = np.bincount(gid, weights=nan, minlength=n_groups)
    v = np.where(nan, np.inf, values)
    lo = np.full(n_groups, np.inf)
    np.minimum.at(lo, gid, v)
    v = np.where(nan, -np.inf, values)
    hi = np.full(n_groups, -np.inf)
    np.maximum.at(hi, gid, v)
    mixed = (n_nan > 0) & (n_nan < n)
    differs = (n_nan == 0) & (hi - lo > 1e-9 * np.maximum(np.abs(hi), 1.0))
    bad = np.flatnonzero(mixed | differs)
    fails.groups(
        bad,
        first_line[bad],
        column,
        [
            f"{column} differs between the rows of this district-year ({lo[g]:g} to {hi[g]:g}); it must be one value per district and year"
            if differs[g]
            else f"{column} is given on some rows of this district-year but not on others"
            for g in bad
        ],
        priority=6,
    )
    all_nan = np.flatnonzero(n_nan == n)
    if 0 < len(all_nan) < n_groups:
        notes.append(
            (
                f"{column} is missing for {len(all_nan)} district-year(s); indices are unaffected, "
                "but population weighting and decompositions leave them out",
                column,
            )
        )


def _brackets(table, wide, share_cols, gid, line, starts, n_groups, fails, notes) -> pd.DataFrame:
    n_rows = len(table)
    population = _optional_number(table, "population", gid, line, fails, n_rows, positive=True)
    mean_income = _optional_number(table, "mean_income", gid, line, fails, n_rows, positive=True)
    if wide:
        _duplicate_rows(gid, line, starts, n_groups, fails)
        k = len(share_cols)
        cells = [_numbers(table[c]) for c in share_cols]
        income = np.column_stack([c[0] for c in cells]).ravel()
        miss = np.column_stack([c[1] for c in cells]).ravel()
        text = np.column_stack([c[2] for c in cells]).ravel()
        raw = np.column_stack([table[c].to_numpy(dtype=object) for c in share_cols]).ravel()
        src = np.repeat(np.arange(n_rows), k)
        cell_col = np.tile(np.array(share_cols, dtype=object), n_rows)
        pop = np.full(n_rows * k, 1.0 / k)
        bracket = np.tile(np.arange(1, k + 1), n_rows)
        g, ln = gid[src], line[src]
        _number_checks(fails, income, miss, text, raw, g, ln, cell_col)
    else:
        src = np.arange(n_rows)
        g, ln = gid, line
        pop, pmiss, ptext = _numbers(table["pop_share"])
        income, imiss, itext = _numbers(table["income_share"])
        _number_checks(
            fails, pop, pmiss, ptext, table["pop_share"], g, ln, "pop_share", positive=True
        )
        _number_checks(fails, income, imiss, itext, table["income_share"], g, ln, "income_share")
        if "bracket" in table.columns:
            b, bmiss, btext = _numbers(table["bracket"])
            braw = table["bracket"].to_numpy(dtype=object)
            fails.rows(
                bmiss | btext,
                g,
                ln,
                "bracket",
                "the bracket number {value!r} is missing or not a number",
                braw,
            )
            fails.rows(
                np.isfinite(b) & ((b != np.round(b)) | (b < 1)),
                g,
                ln,
                "bracket",
                "the bracket number {value!r} is not a whole number from 1 up",
                braw,
            )
            bracket = np.where(np.isfinite(b), b, 0).astype(np.int64)
            frame = pd.DataFrame({"g": g, "b": bracket})
            dup = frame.duplicated(keep=False).to_numpy() & np.isfinite(b)
            if dup.any():
                dg = np.unique(g[dup])
                fails.groups(
                    dg,
                    line[starts[dg]],
                    "bracket",
                    [
                        f"duplicate bracket rows: bracket {bracket[dup & (g == x)][0]} appears more than once"
                        for x in dg
                    ],
                    priority=1,
                )
        else:
            bracket = pd.Series(g).groupby(g).cumcount().to_numpy() + 1
    first_line = line[starts]
    _constant_within(population[src], g, n_groups, first_line, "population", fails, notes)
    _constant_within(
        mean_income[src],
        g,
        n_groups,
        first_line,
        "mean_income",
        fails,
        notes,
    )

    out = pd.DataFrame(
        {
            "bracket": bracket.astype(np.int64),
            "pop_share": pop.astype(float),
            "income_share": income.astype(float),
            "population": population[src],
            "mean_income": mean_income[src],
            "_gid": g,
            "_src": src,
        }
    )
    # shares given in percent (summing to 100) are common in published tables
    clean = ~np.isin(g, fails.failing())
    for col in ("pop_share", "income_share"):
        sums = np.bincount(g[clean], weights=out[col].to_numpy()[clean], minlength=n_groups)
        present = np.bincount(g[clean], minlength=n_groups) > 0
        if present.any() and 99.0 <= np.median(sums[present]) <= 101.0:
            out[col] = out[col] / 100.0
            notes.append(
                (f"{col} reads as percentages (summing to 100) and was divided by 100", col)
            )
    # sort brackets bottom to top inside each district-year, then segment sums
    out = out.sort_values(["_gid", "bracket"], kind="stable").reset_index(drop=True)
    og = out["_gid"].to_numpy()
    clean = ~np.isin(og, fails.failing())
    rescaled: list[str] = []
    for col in ("pop_share", "income_share"):
        v = out[col].to_numpy()
        sums = np.bincount(og[clean], weights=v[clean], minlength=n_groups)
        present = np.bincount(og[clean], minlength=n_groups) > 0
        dev = np.abs(sums - 1.0)
        far = np.flatnonzero(present & (dev > SHARE_RESCALE))
        fails.groups(
            far,
            line[starts[far]],
            col,
            [
                f"the {col} values sum to {sums[x]:.6g}, not 1 (more than {SHARE_RESCALE} away)"
                for x in far
            ],
            priority=3,
        )
        near = present & (dev > SHARE_EXACT) & (dev <= SHARE_RESCALE)
        if near.any():
            factor = np.where(near, sums, 1.0)[og]
            out[col] = v / factor
            rescaled += [f"{col} of {near.sum()} district-year(s)"]
            ex = np.flatnonzero(near)[0]
            rescaled[-1] += f" (e.g. line {line[starts[ex]]}: sum {sums[ex]:.6g})"
    if rescaled:
        notes.append(
            (
                "shares within 0.01 of 1 were rescaled to sum to exactly 1: " + "; ".join(rescaled),
                "income_share",
            )
        )
    # convexity: bracket mean income relative to the district mean, non-decreasing
    clean = ~np.isin(og, fails.failing())
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = out["income_share"].to_numpy() / out["pop_share"].to_numpy()
    same = np.r_[False, og[1:] == og[:-1]]
    prev = np.r_[np.nan, rel[:-1]]
    drop = same & clean & (rel < prev * (1 - CONVEX_TOL) - CONVEX_TOL)
    if drop.any():
        first = pd.Series(np.flatnonzero(drop)).groupby(og[drop]).first()
        b = out["bracket"].to_numpy()
        fails.groups(
            first.index.to_numpy(),
            line[starts[first.index.to_numpy()]],
            "income_share",
            [
                f"brackets out of order: bracket {b[i]}'s mean income ({rel[i]:.4g} times the district mean) "
                f"is below bracket {b[i - 1]}'s ({rel[i - 1]:.4g}); brackets must run from poorest to richest, "
                "so this Lorenz curve is not convex"
                for i in first.to_numpy()
            ],
            priority=4,
        )
    return out


def _units(table, gid, line, n_groups, fails, log, allow_negative) -> pd.DataFrame:
    n_rows = len(table)
    income, miss, text = _numbers(table["income"])
    _number_checks(fails, income, miss, text, table["income"], gid, line, "income", signed=True)
    negative = np.isfinite(income) & (income < 0)
    if negative.any() and not allow_negative:
        log.add(
            f"negative incomes on {negative.sum()} line(s): {_value_list(line[negative], income[negative])}",
            "unit incomes must be zero or positive for these indices; remove or recode losses, "
            "or allow negative incomes explicitly",
            row=line[negative][0],
            column="income",
        )
    if "weight" in table.columns:
        weight, wmiss, wtext = _numbers(table["weight"])
        _number_checks(fails, weight, wmiss, wtext, table["weight"], gid, line, "weight")
    else:
        weight = np.ones(n_rows)
    ok = np.isfinite(income) & np.isfinite(weight)
    w_tot = np.bincount(gid[ok], weights=weight[ok], minlength=n_groups)
    y_tot = np.bincount(gid[ok], weights=(weight * income)[ok], minlength=n_groups)
    clean = ~np.isin(np.arange(n_groups), fails.failing())
    starts = np.flatnonzero(np.r_[True, gid[1:] != gid[:-1]])
    zero_w = np.flatnonzero(clean & (w_tot <= 0))
    fails.groups(
        zero_w,
        line[starts[zero_w]],
        "weight",
        ["every weight in this district-year is zero"] * len(zero_w),
    )
    zero_y = np.flatnonzero(clean & (w_tot > 0) & (y_tot <= 0))
    fails.groups(
        zero_y,
        line[starts[zero_y]],
        "income",
        ["the total income of this district-year is zero or less"] * len(zero_y),
    )
    return pd.DataFrame(
        {"income": income, "weight": weight, "_gid": gid, "_src": np.arange(n_rows)}
    )


def _means(table, gid, line, starts, n_groups, fails) -> pd.DataFrame:
    n_rows = len(table)
    _duplicate_rows(gid, line, starts, n_groups, fails)
    mean, miss, text = _numbers(table["mean_income"])
    _number_checks(
        fails, mean, miss, text, table["mean_income"], gid, line, "mean_income", positive=True
    )
    population = _optional_number(table, "population", gid, line, fails, n_rows, positive=True)
    return pd.DataFrame(
        {"mean_income": mean, "population": population, "_gid": gid, "_src": np.arange(n_rows)}
    )


def _coverage(pairs: pd.DataFrame, log: _Log) -> None:
    """Warn about districts that lack some of the panel's years (one row per district-year)."""
    rc, districts = pd.factorize(pairs["region"], sort=True)
    yc, years = pd.factorize(pairs["year"], sort=True)
    present = np.zeros((len(districts), len(years)), dtype=bool)
    present[rc, yc] = True
    gaps = np.flatnonzero(~present.all(axis=1))
    if len(gaps) == 0:
        return
    items = [
        f"{districts[r]} ({_listing([int(y) for y in years[~present[r]]], 5)})"
        for r in gaps[:LISTED]
    ]
    more = f" and {len(gaps) - LISTED} more" if len(gaps) > LISTED else ""
    log.add(
        f"{len(gaps)} of {len(districts)} district(s) lack some years: {', '.join(items)}{more}",
        "comparisons over time for these districts use fewer years",
        column="year",
        severity="warning",
    )


def _income_concept(table: pd.DataFrame, rows_ok: np.ndarray, log: _Log) -> str:
    if "income_concept" not in table.columns:
        return ""
    values = table["income_concept"].iloc[np.flatnonzero(rows_ok)].dropna().astype(str).str.strip()
    concepts = sorted(set(values) - {""})
    if len(concepts) > 1:
        log.add(
            f"the panel mixes income concepts ({_listing(concepts)}); districts are comparable "
            "only on one concept and unit",
            "split the panel by income concept, or harmonise it first",
            column="income_concept",
            severity="warning",
        )
    return "; ".join(concepts)


def _level_candidates(
    frame: pd.DataFrame, regions: np.ndarray, n_regions: int
) -> dict[str, pd.Series]:
    """Columns constant within each district that make 2..n-1 groups: region -> value."""
    found: dict[str, pd.Series] = {}
    for c in frame.columns:
        if c in _NOT_LEVELS or _SHARE_COLUMN.match(str(c)) or str(c).startswith("_"):
            continue
        if frame[c].isna().any():
            continue
        # one row per district and value first, so only those few are turned into text
        per = pd.DataFrame({"region": regions, "v": frame[c].to_numpy()}).drop_duplicates()
        per["v"] = _id_strings(per["v"])
        if per["v"].isna().any() or per["region"].duplicated().any():
            continue
        mapping = per.set_index("region")["v"]
        if 1 < mapping.nunique() < n_regions:
            found[str(c)] = mapping
    return found


def _levels_and_boundaries(
    table, region_code, names, rows_ok, data, levels, boundaries, boundary_file, log
):
    regions = pd.unique(data["region"])
    n = len(regions)
    ok = np.flatnonzero(rows_ok)
    panel_part = table if len(ok) == len(table) else table.iloc[ok]
    # integer district codes while scanning the rows; names only for the few results
    candidates = _level_candidates(panel_part, region_code[ok], n)
    for mapping in candidates.values():
        mapping.index = pd.Index(names[mapping.index.to_numpy()], dtype=object, name="region")
    bounds = None
    if boundaries is not None:
        bounds = _match_boundaries(boundaries, regions, boundary_file, log)
        if bounds is not None:
            inside = bounds[bounds["region"].isin(set(regions))]
            extra = inside.drop(columns=[c for c in ("geometry",) if c in inside.columns])
            for c, mapping in _level_candidates(extra, inside["region"].to_numpy(), n).items():
                if c in candidates:
                    clash = (
                        mapping.reindex(candidates[c].index).ne(candidates[c])
                        & mapping.reindex(candidates[c].index).notna()
                    )
                    if clash.any():
                        log.add(
                            f"the boundary file's '{c}' differs from the panel's for {clash.sum()} district(s) "
                            f"({_listing(list(clash.index[clash]))}); the panel's values are used",
                            "make the two files agree",
                            file=boundary_file,
                            column=c,
                            severity="warning",
                        )
                else:
                    candidates[c] = mapping
    if levels is not None:
        chosen = []
        for lv in levels:
            if lv in candidates:
                chosen.append(lv)
                continue
            source = panel_part if lv in panel_part.columns else None
            if source is None and bounds is not None and lv in bounds.columns:
                source = bounds
            if source is None:
                log.add(
                    f"the level '{lv}' is not a column of the panel or the boundary file",
                    "name an existing column",
                    column=lv,
                )
            else:
                log.add(
                    f"'{lv}' cannot be a level: it must have one value per district and make more than one and fewer than {n} groups",
                    "check that every district has a single value in this column",
                    column=lv,
                )
    else:
        chosen = list(candidates)
    chosen.sort(key=lambda c: (candidates[c].nunique() if c in candidates else 0, c))
    hierarchy = pd.DataFrame({"region": pd.Series(regions, dtype=str)})
    for lv in chosen:
        if lv not in candidates:
            continue
        values = candidates[lv].reindex(regions)
        if values.isna().any():
            missing = list(values.index[values.isna()])
            log.add(
                f"level '{lv}' is unknown for {len(missing)} district(s) ({_listing(missing)}); they are put in '(unassigned)'",
                "give every district its higher-level unit",
                column=lv,
                severity="warning",
            )
            values = values.fillna("(unassigned)")
        hierarchy[lv] = pd.Series(values.to_numpy(), dtype=str)
    level_names = tuple(c for c in chosen if c in hierarchy.columns)
    if bounds is not None:
        keep = ["region", *(["name"] if "name" in bounds.columns else [])]
        keep += [lv for lv in level_names if lv in bounds.columns]
        bounds = bounds[[*keep, "geometry"]]
    return hierarchy, level_names, bounds


def _match_boundaries(boundaries, regions, boundary_file, log):
    """Attach the panel's ids to the boundaries and report what does not match."""
    import geopandas as gpd

    ours = set(regions)
    gdf = boundaries
    if not isinstance(gdf, gpd.GeoDataFrame) or gdf.geometry is None:
        log.add("the boundaries are not a table of geometries", file=boundary_file)
        return None
    attrs = [c for c in gdf.columns if c != gdf.geometry.name]
    if "region" in attrs:
        id_col = "region"
    else:
        scores = {
            c: len(ours & set(v for v in _id_strings(gdf[c]) if v is not None)) for c in attrs
        }
        id_col = max(scores, key=lambda c: scores[c]) if scores else None
        if id_col is None or scores[id_col] == 0:
            log.add(
                "no attribute of the boundary file matches the panel's district ids "
                f"(attributes: {_listing(attrs, 20)}; panel ids such as {_listing(sorted(ours)[:3])})",
                "name the boundary attribute that holds the district ids",
                file=boundary_file,
            )
            return None
    ids = _id_strings(gdf[id_col])
    out = gpd.GeoDataFrame(
        {"region": ids},
        geometry=gdf.geometry.to_numpy(),
        crs=gdf.crs if gdf.crs is not None else "EPSG:4326",
    )
    name_col = next(
        (c for c in attrs if c != id_col and str(c).lower() in _NAME_ATTRIBUTES),
        next((c for c in attrs if c != id_col and "name" in str(c).lower()), None),
    )
    if name_col is not None:
        out["name"] = _id_strings(gdf[name_col])
    for c in attrs:
        if c not in (id_col, name_col) and c not in out.columns and str(c) not in _NOT_LEVELS:
            out[str(c)] = gdf[c].to_numpy()
    if out.crs is not None and not out.crs.equals("EPSG:4326"):
        out = out.to_crs("EPSG:4326")
    no_id = out["region"].isna().to_numpy()
    if no_id.any():
        log.add(
            f"{no_id.sum()} boundary feature(s) have no id and are ignored",
            file=boundary_file,
            column=str(id_col),
            severity="warning",
        )
        out = out[~no_id]
    if out["region"].duplicated().any():
        dups = sorted(set(out["region"][out["region"].duplicated()]))
        log.add(
            f"{len(dups)} district(s) have several boundary features ({_listing(dups)}); their parts were merged",
            file=boundary_file,
            column=str(id_col),
            severity="warning",
        )
        geom = out.groupby("region").geometry.agg(lambda s: s.union_all())
        first = out.drop_duplicates("region").set_index("region").drop(columns="geometry")
        out = gpd.GeoDataFrame(
            first.join(geom.rename("geometry")).reset_index(), geometry="geometry", crs=out.crs
        )
    theirs = set(out["region"])
    matched = ours & theirs
    panel_only = sorted(ours - theirs)
    boundary_only = sorted(theirs - ours)
    if not matched:
        log.add(
            f"none of the panel's {len(ours)} district ids appear in the boundary file's '{id_col}' "
            f"(panel: {_listing(sorted(ours), 4)}; boundaries: {_listing(sorted(theirs), 4)})",
            "check that both files use the same district codes, or name the boundary id attribute",
            file=boundary_file,
            column=str(id_col),
        )
        return None
    if panel_only:
        log.add(
            f"{len(panel_only)} district(s) of the panel have no boundary: {_listing(panel_only)}",
            "they are analysed but not mapped; add them to the boundary file",
            file=boundary_file,
            column=str(id_col),
            severity="warning",
        )
    if boundary_only:
        log.add(
            f"{len(boundary_only)} boundary feature(s) have no data in the panel: {_listing(boundary_only)}",
            "they are drawn as having no data",
            file=boundary_file,
            column=str(id_col),
            severity="warning",
        )
    return out.sort_values("region", kind="stable").reset_index(drop=True)
