"""Validation of the values of each kind of panel, one district-year at a time.

Each step takes the sorted :class:`~explorer.data.checks.Rows` and returns the kind's value
table (with ``_gid``, the district-year, and ``_src``, the row it came from); a value that
breaks a rule sets its district-year aside through :class:`~explorer.data.checks.Failures`
rather than failing the file.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from explorer.data.checks import Cells, Findings, Layout, Rows, value_list
from explorer.data.model import PUBLISHED_MEASURES, _listing

__all__ = [
    "CONVEX_TOL",
    "SHARE_EXACT",
    "SHARE_RESCALE",
    "bracket_values",
    "mean_values",
    "published_scale",
    "published_values",
    "unit_values",
]

SHARE_EXACT = 1e-6  # shares within this of 1 are taken as they are
SHARE_RESCALE = 0.01  # within this, rescaled to 1 with a warning; beyond, left out
CONVEX_TOL = 1e-9  # relative slack on bracket mean incomes (rounding of printed shares)


def _duplicate_rows(rows: Rows, found: Findings) -> None:
    """One row per district-year where the layout has one (means, wide brackets)."""
    sizes = np.bincount(rows.gid, minlength=rows.n_groups)
    dup = np.flatnonzero(sizes > 1)
    if len(dup):
        lines_of = pd.Series(rows.line).groupby(rows.gid).agg(list)
        found.fails.groups(
            dup,
            rows.first_line[dup],
            "region",
            [
                f"the district-year appears on {sizes[g]} lines ({_listing(lines_of[g])})"
                for g in dup
            ],
            priority=1,
        )


def _optional_number(rows: Rows, column: str, found: Findings) -> np.ndarray:
    """A per-row number that may be absent (population, mean income): NaN when absent."""
    if column not in rows.table.columns:
        return np.full(len(rows.table), np.nan)
    cells = Cells.of(rows.table, column, rows)
    cells.check(found.fails, positive=True, name=column)
    return cells.values


def _constant_within(values, gid, rows: Rows, column: str, found: Findings) -> None:
    """Per-district-year values (population, mean income) must be equal on every row."""
    n_groups = rows.n_groups
    nan = np.isnan(values)
    n = np.bincount(gid, minlength=n_groups)
    n_nan = np.bincount(gid, weights=nan, minlength=n_groups)
    lo = np.full(n_groups, np.inf)
    np.minimum.at(lo, gid, np.where(nan, np.inf, values))
    hi = np.full(n_groups, -np.inf)
    np.maximum.at(hi, gid, np.where(nan, -np.inf, values))
    mixed = (n_nan > 0) & (n_nan < n)
    differs = (n_nan == 0) & (hi - lo > 1e-9 * np.maximum(np.abs(hi), 1.0))
    bad = np.flatnonzero(mixed | differs)
    found.fails.groups(
        bad,
        rows.first_line[bad],
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
        found.notes.append(
            (
                f"{column} is missing for {len(all_nan)} district-year(s); indices are unaffected, "
                "but population weighting and decompositions leave them out",
                column,
            )
        )


def _wide_cells(rows: Rows, layout: Layout, found: Findings) -> pd.DataFrame:
    """share_1 … share_k across columns: one cell per bracket of equal population."""
    _duplicate_rows(rows, found)
    table, n_rows, k = rows.table, len(rows.table), len(layout.share_cols)
    stacked = [Cells.of(table, c, rows) for c in layout.share_cols]
    src = np.repeat(np.arange(n_rows), k)
    cells = Cells(
        np.column_stack([c.values for c in stacked]).ravel(),
        np.column_stack([c.missing for c in stacked]).ravel(),
        np.column_stack([c.text for c in stacked]).ravel(),
        np.column_stack([c.raw for c in stacked]).ravel(),
        rows.gid[src],
        rows.line[src],
        np.tile(np.array(layout.share_cols, dtype=object), n_rows),
    )
    cells.check(found.fails)
    return pd.DataFrame(
        {
            "bracket": np.tile(np.arange(1, k + 1), n_rows),
            "pop_share": np.full(n_rows * k, 1.0 / k),
            "income_share": cells.values,
            "_gid": cells.gid,
            "_src": src,
        }
    )


def _bracket_numbers(rows: Rows, found: Findings) -> np.ndarray:
    """The ``bracket`` column when given (whole numbers from 1 up, no repeats), else order."""
    g = rows.gid
    if "bracket" not in rows.table.columns:
        return pd.Series(g).groupby(g).cumcount().to_numpy() + 1
    cells = Cells.of(rows.table, "bracket", rows)
    b, fails = cells.values, found.fails
    fails.rows(
        cells.missing | cells.text,
        g,
        rows.line,
        "bracket",
        "the bracket number {value!r} is missing or not a number",
        cells.raw,
    )
    fails.rows(
        np.isfinite(b) & ((b != np.round(b)) | (b < 1)),
        g,
        rows.line,
        "bracket",
        "the bracket number {value!r} is not a whole number from 1 up",
        cells.raw,
    )
    bracket = np.where(np.isfinite(b), b, 0).astype(np.int64)
    dup = pd.DataFrame({"g": g, "b": bracket}).duplicated(keep=False).to_numpy() & np.isfinite(b)
    if dup.any():
        dg = np.unique(g[dup])
        fails.groups(
            dg,
            rows.first_line[dg],
            "bracket",
            [
                f"duplicate bracket rows: bracket {bracket[dup & (g == x)][0]} appears more than once"
                for x in dg
            ],
            priority=1,
        )
    return bracket


def _long_cells(rows: Rows, found: Findings) -> pd.DataFrame:
    """One row per bracket with its pop_share and income_share."""
    pop = Cells.of(rows.table, "pop_share", rows)
    income = Cells.of(rows.table, "income_share", rows)
    pop.check(found.fails, positive=True)
    income.check(found.fails)
    return pd.DataFrame(
        {
            "bracket": _bracket_numbers(rows, found),
            "pop_share": pop.values,
            "income_share": income.values,
            "_gid": rows.gid,
            "_src": np.arange(len(rows.table)),
        }
    )


def _percent_shares(out: pd.DataFrame, rows: Rows, found: Findings) -> None:
    """Shares given in percent (summing to 100) are common in published tables."""
    g = out["_gid"].to_numpy()
    clean = ~np.isin(g, found.fails.failing())
    for col in ("pop_share", "income_share"):
        sums = np.bincount(g[clean], weights=out[col].to_numpy()[clean], minlength=rows.n_groups)
        present = np.bincount(g[clean], minlength=rows.n_groups) > 0
        if present.any() and 99.0 <= np.median(sums[present]) <= 101.0:
            out[col] = out[col] / 100.0
            found.notes.append(
                (f"{col} reads as percentages (summing to 100) and was divided by 100", col)
            )


def _share_sums(out: pd.DataFrame, rows: Rows, found: Findings) -> None:
    """Shares must sum to 1: close sums are rescaled with a note, far ones set aside."""
    og = out["_gid"].to_numpy()
    clean = ~np.isin(og, found.fails.failing())
    rescaled: list[str] = []
    for col in ("pop_share", "income_share"):
        v = out[col].to_numpy()
        sums = np.bincount(og[clean], weights=v[clean], minlength=rows.n_groups)
        present = np.bincount(og[clean], minlength=rows.n_groups) > 0
        dev = np.abs(sums - 1.0)
        far = np.flatnonzero(present & (dev > SHARE_RESCALE))
        found.fails.groups(
            far,
            rows.first_line[far],
            col,
            [
                f"the {col} values sum to {sums[x]:.6g}, not 1 (more than {SHARE_RESCALE} away)"
                for x in far
            ],
            priority=3,
        )
        near = present & (dev > SHARE_EXACT) & (dev <= SHARE_RESCALE)
        if near.any():
            out[col] = v / np.where(near, sums, 1.0)[og]
            ex = np.flatnonzero(near)[0]
            rescaled.append(
                f"{col} of {near.sum()} district-year(s) (e.g. line {rows.first_line[ex]}: sum {sums[ex]:.6g})"
            )
    if rescaled:
        found.notes.append(
            (
                "shares within 0.01 of 1 were rescaled to sum to exactly 1: " + "; ".join(rescaled),
                "income_share",
            )
        )


def _convexity(out: pd.DataFrame, rows: Rows, found: Findings) -> None:
    """Bracket mean incomes relative to the district mean must not fall from bottom to top.

    References
    ----------
    Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index. *Review of
    Economics and Statistics* 54: 306-316 (a Lorenz curve is convex).
    """
    og = out["_gid"].to_numpy()
    clean = ~np.isin(og, found.fails.failing())
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = out["income_share"].to_numpy() / out["pop_share"].to_numpy()
    same = np.r_[False, og[1:] == og[:-1]]
    prev = np.r_[np.nan, rel[:-1]]
    drop = same & clean & (rel < prev * (1 - CONVEX_TOL) - CONVEX_TOL)
    if not drop.any():
        return
    first = pd.Series(np.flatnonzero(drop)).groupby(og[drop]).first()
    b = out["bracket"].to_numpy()
    found.fails.groups(
        first.index.to_numpy(),
        rows.first_line[first.index.to_numpy()],
        "income_share",
        [
            f"brackets out of order: bracket {b[i]}'s mean income ({rel[i]:.4g} times the district mean) "
            f"is below bracket {b[i - 1]}'s ({rel[i - 1]:.4g}); brackets must run from poorest to richest, "
            "so this Lorenz curve is not convex"
            for i in first.to_numpy()
        ],
        priority=4,
    )


def bracket_values(rows: Rows, layout: Layout, found: Findings) -> pd.DataFrame:
    """Bracket shares (long or wide), population and mean income, checked.

    Shares in percent are divided by 100; sums within ``SHARE_RESCALE`` of 1 are rescaled;
    the Lorenz sequence must be convex (:func:`_convexity`).
    """
    population = _optional_number(rows, "population", found)
    mean_income = _optional_number(rows, "mean_income", found)
    out = _wide_cells(rows, layout, found) if layout.wide else _long_cells(rows, found)
    src, g = out["_src"].to_numpy(), out["_gid"].to_numpy()
    _constant_within(population[src], g, rows, "population", found)
    _constant_within(mean_income[src], g, rows, "mean_income", found)
    out.insert(3, "population", population[src])
    out.insert(4, "mean_income", mean_income[src])
    _percent_shares(out, rows, found)
    # brackets bottom to top inside each district-year, then segment sums
    out = out.sort_values(["_gid", "bracket"], kind="stable").reset_index(drop=True)
    out["bracket"] = out["bracket"].astype(np.int64)
    _share_sums(out, rows, found)
    _convexity(out, rows, found)
    return out


def unit_values(rows: Rows, found: Findings, allow_negative: bool) -> pd.DataFrame:
    """Unit incomes and weights, checked; a district-year needs some weight and income."""
    n_rows, gid = len(rows.table), rows.gid
    income = Cells.of(rows.table, "income", rows)
    income.check(found.fails, signed=True)
    negative = np.isfinite(income.values) & (income.values < 0)
    if negative.any() and not allow_negative:
        found.log.add(
            f"negative incomes on {negative.sum()} line(s): {value_list(rows.line[negative], income.values[negative])}",
            "unit incomes must be zero or positive for these indices; remove or recode losses, "
            "or allow negative incomes explicitly",
            row=rows.line[negative][0],
            column="income",
        )
    weight = np.ones(n_rows)
    if "weight" in rows.table.columns:
        cells = Cells.of(rows.table, "weight", rows)
        cells.check(found.fails)
        weight = cells.values
    ok = np.isfinite(income.values) & np.isfinite(weight)
    w_tot = np.bincount(gid, weights=np.where(ok, weight, 0.0), minlength=rows.n_groups)
    y_tot = np.bincount(
        gid, weights=np.where(ok, weight * income.values, 0.0), minlength=rows.n_groups
    )
    del ok
    clean = ~np.isin(np.arange(rows.n_groups), found.fails.failing())
    zero_w = np.flatnonzero(clean & (w_tot <= 0))
    found.fails.groups(
        zero_w,
        rows.first_line[zero_w],
        "weight",
        ["every weight in this district-year is zero"] * len(zero_w),
    )
    zero_y = np.flatnonzero(clean & (w_tot > 0) & (y_tot <= 0))
    found.fails.groups(
        zero_y,
        rows.first_line[zero_y],
        "income",
        ["the total income of this district-year is zero or less"] * len(zero_y),
    )
    # the arrays as they are: a frame built with copies would hold each column twice
    return pd.DataFrame({"income": income.values, "weight": weight, "_gid": gid}, copy=False)


def mean_values(rows: Rows, found: Findings) -> pd.DataFrame:
    """One mean income (and optional population) per district-year, checked."""
    _duplicate_rows(rows, found)
    mean = Cells.of(rows.table, "mean_income", rows)
    mean.check(found.fails, positive=True)
    population = _optional_number(rows, "population", found)
    return pd.DataFrame(
        {
            "mean_income": mean.values,
            "population": population,
            "_gid": rows.gid,
            "_src": np.arange(len(rows.table)),
        }
    )


#: Published figures that are a part of the whole (written as percent or as proportion).
_RATIO_MEASURES = ("gini", "poverty_rate", "top10_share")


def published_scale(measure: str, values: np.ndarray) -> tuple[str, str]:
    """The scale a published figure is written on, and why we think so.

    Ratios of the whole are ``proportion`` when the column's median lies in [0, 1],
    ``percent`` when it lies in (1, 100]; amounts (incomes, people) are ``level``.
    """
    if measure not in _RATIO_MEASURES:
        return "level", "an amount, not a part of a whole"
    finite = values[np.isfinite(values)]
    if not finite.size:
        return "unknown", "the column holds no values"
    # Decided by the bulk of the column, so one mistyped value is set aside rather than
    # making the whole column unreadable.
    middle = float(np.median(finite))
    if middle <= 1:
        return "proportion", "the values lie between 0 and 1"
    if middle <= 100:
        return "percent", "the values lie between 1 and 100"
    return "unknown", "values above 100 cannot be a percent or a proportion"


def published_values(rows: Rows, found: Findings, scales=None) -> pd.DataFrame:
    """The published figures of each district-year, one row per figure, checked.

    A blank cell means the office published no such figure for that district-year (it is
    noted, never invented); text, negative or out-of-scale values set the district-year
    aside as for the other kinds. ``scales`` (measure -> scale) are those the reader saw
    written in the file (a ``%`` in a header or cell); otherwise they come from the values.
    """
    _duplicate_rows(rows, found)
    scales = dict(scales or {})
    parts = []
    source = np.arange(len(rows.table))
    for order, measure in enumerate(PUBLISHED_MEASURES):
        if measure not in rows.table.columns:
            continue
        cells = Cells.of(rows.table, measure, rows)
        cells.check(found.fails, name=measure)
        finite = np.isfinite(cells.values) & ~cells.text
        scale, why = published_scale(measure, cells.values)
        scale = scales.get(measure, scale)
        if scale == "unknown":
            found.notes.append(
                (
                    f"the scale of {measure} could not be told ({why}); it is shown as written",
                    measure,
                )
            )
        limit = {"percent": 100.0, "proportion": 1.0}.get(scale)
        if limit is not None:
            found.fails.rows(
                finite & (cells.values > limit),
                rows.gid,
                rows.line,
                measure,
                f"{measure} is {{value!r}}, above {limit:g} on a {scale} scale",
                cells.values,
            )
        blank = cells.missing.sum()
        if blank:
            found.notes.append(
                (
                    f"{int(blank)} district-year(s) have no {measure} figure (blank cells); "
                    "they are shown as missing, not estimated",
                    measure,
                )
            )
        parts.append(
            pd.DataFrame(
                {
                    "measure": measure,
                    "value": cells.values[finite],
                    "scale": scale,
                    "_order": order,
                    "_gid": rows.gid[finite],
                    "_src": source[finite],
                }
            )
        )
    table = pd.concat(parts, ignore_index=True)
    empty = np.setdiff1d(np.arange(rows.n_groups), table["_gid"].to_numpy())
    found.fails.groups(
        empty,
        rows.first_line[empty],
        "region",
        ["no published figure is given for this district-year"] * len(empty),
    )
    return table
