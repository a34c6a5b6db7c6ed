"""A panel and a poverty line to the tidy poverty table.

The same columns as the index table (:mod:`explorer.stats.indices`):
``region, year, index, value, lower, upper, method, note`` with the keys ``fgt_0, fgt_1,
fgt_2, watts, sen_poverty``.

* brackets: one block per Lorenz method (:mod:`explorer.stats.poverty_curves`); ``lower`` and
  ``upper`` are the bounds given the bracket shares and the district mean, and the note says
  where a measure has none.
* units: direct weighted measures (:mod:`explorer.stats.poverty`), with bootstrap intervals
  on request.
* means: refused: poverty cannot be measured from district means alone.

A relative line is resolved once per district-year before any method runs, so every method
measures poverty against the same amount: the province's (all districts of the year in the
panel) or each district's own median or mean. For bracket panels the median is the ``auto``
curve's ``mu L'(1/2)``; the province median of a bracket panel is the median of the pooled
district distributions of the ``auto`` curves (districts weighted by population, or equally
where populations are missing, which the note says).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats import lorenz, measures, poverty, poverty_curves, poverty_lines, welfare
from explorer.stats.poverty import POVERTY_INDICES
from explorer.stats.poverty_lines import PovertyLine

__all__ = ["compute"]

_OUTSIDE = "the fitted curve gives a value outside the bounds the bracket shares allow"
_NO_SAMPLING = "the interval ignores the sampling error of the relative line itself"


def _line(line) -> PovertyLine:
    return line if isinstance(line, PovertyLine) else poverty_lines.parse_line(line)


def _province_mean(values, population, year) -> tuple[np.ndarray, str]:
    """Population-weighted mean of the district means by year, spread back to the rows."""
    given = np.isfinite(population) & (population > 0)
    weights = np.where(given.all(), population, 1.0)
    note = "" if given.all() else "province mean weights districts equally (populations missing)"
    _, code = np.unique(year, return_inverse=True)
    total = np.bincount(code, weights=weights * values) / np.bincount(code, weights=weights)
    return total[code], note


def _bracket_line(panel, line, keys, batches) -> tuple[np.ndarray, np.ndarray, str]:
    first = panel.data.groupby(["region", "year"], sort=False)[["mean_income", "population"]]
    per = first.first().reindex(pd.MultiIndex.from_frame(keys))
    mean = per["mean_income"].to_numpy(float)
    population = per["population"].to_numpy(float)
    year = keys["year"].to_numpy().astype(np.int64)
    if not line.relative:
        return poverty_lines.resolve(line, n=len(keys)), mean, ""
    if np.isnan(mean).any():
        raise fail(
            f"a line of {line.label()} needs every district's mean income",
            "add mean_income to the bracket table, or give an absolute line",
            column="mean_income",
        )
    if line.base == "mean" and line.scope == "district":
        return line.fraction * mean, mean, ""
    if line.base == "mean":
        base, note = _province_mean(mean, population, year)
        return line.fraction * base, mean, note
    grid = poverty_curves.GRID_P
    slopes = np.full((len(keys), grid.size), np.nan)
    median = np.full(len(keys), np.nan)
    for rows, P, L in batches:
        fits = lorenz.fit_points(P, L, "auto")
        slopes[rows], median[rows] = fits.slope(grid), fits.slope([0.5])[:, 0]
    if line.scope == "district":
        return line.fraction * mean * median, mean, ""
    given = np.isfinite(population) & (population > 0)
    weight = np.where(given.all(), population, 1.0)
    z = line.fraction * _pooled_median(slopes, mean, weight, year, mean * median)
    note = "" if given.all() else "province median weights districts equally (populations missing)"
    return z, mean, note


def _pooled_median(slopes, mean, weight, year, district_median) -> np.ndarray:
    """The median of the pooled district distributions of each year, spread to the rows.

    Bisection on the pooled distribution function ``sum_d w_d H_d(x / mu_d) / sum_d w_d``
    (each district's headcount at ``x`` from its curve on the grid), between the smallest
    and largest district medians, which bracket it; every year at once.
    """
    _, code = np.unique(year, return_inverse=True)
    total = np.bincount(code, weights=weight)
    ok = np.isfinite(district_median)
    lo = np.full(total.size, np.inf)
    hi = np.zeros(total.size)
    np.minimum.at(lo, code[ok], district_median[ok])
    np.maximum.at(hi, code[ok], district_median[ok])
    lo, hi = np.log(lo), np.log(hi)
    usable = np.isfinite(slopes).all(axis=1)
    slopes = np.nan_to_num(slopes)  # once, not on every step of the bisection
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        head = poverty_curves.crossing(poverty_curves.GRID_P, slopes, np.exp(mid[code]) / mean)
        share = np.bincount(code, weights=np.where(usable, weight * head, 0.0)) / np.bincount(
            code, weights=np.where(usable, weight, 0.0)
        )
        below = share < 0.5
        lo, hi = np.where(below, mid, lo), np.where(below, hi, mid)
    return np.exp(0.5 * (lo + hi))[code]


def _block(keys, values, lower, upper, method, notes) -> pd.DataFrame:
    k, n = len(POVERTY_INDICES), len(keys)
    return pd.DataFrame(
        {
            "region": np.repeat(keys["region"].astype(str).to_numpy(), k),
            "year": np.repeat(keys["year"].to_numpy().astype(np.int64), k),
            "index": np.tile(np.asarray(POVERTY_INDICES, dtype=object), n),
            "value": np.column_stack([values[x] for x in POVERTY_INDICES]).ravel(),
            "lower": np.column_stack([lower[x] for x in POVERTY_INDICES]).ravel(),
            "upper": np.column_stack([upper[x] for x in POVERTY_INDICES]).ravel(),
            "method": method,
            "note": np.column_stack([notes[x] for x in POVERTY_INDICES]).ravel(),
        }
    )


def _join(*texts) -> str:
    return "; ".join(t for t in texts if t)


def _only(regions, keys, batches, z, mean):
    """The rows of ``regions`` alone, once the line has been set from every district."""
    keep = keys["region"].astype(str).isin([str(r) for r in regions]).to_numpy()
    position = np.cumsum(keep) - 1
    kept = []
    for rows, P, L in batches:
        mine = keep[rows]
        if mine.any():
            kept.append((position[rows[mine]], P[mine], L[mine]))
    return keys[keep].reset_index(drop=True), kept, z[keep], mean[keep]


def _brackets(panel, line, methods, regions=None) -> pd.DataFrame:
    keys, batches = lorenz.panel_points(panel)
    z, mean, line_note = _bracket_line(panel, line, keys, batches)
    if regions is not None:
        keys, batches, z, mean = _only(regions, keys, batches, z, mean)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = z / mean
    n = len(keys)
    lower = {x: np.full(n, np.nan) for x in POVERTY_INDICES}
    upper = {x: np.full(n, np.nan) for x in POVERTY_INDICES}
    bound_note = {x: np.full(n, "", dtype=object) for x in POVERTY_INDICES}
    for rows, P, L in batches:
        lo, hi, why = poverty_curves.bounds(P, L, ratio[rows])
        for x in POVERTY_INDICES:
            lower[x][rows], upper[x][rows], bound_note[x][rows] = lo[x], hi[x], why[x]
    label = _join(f"line {line.label()}", line_note)
    blocks = []
    for method in methods:
        values = {x: np.full(n, np.nan) for x in POVERTY_INDICES}
        notes = {x: np.full(n, "", dtype=object) for x in POVERTY_INDICES}
        for rows, P, L in batches:
            got, why, _ = poverty_curves.from_points(P, L, ratio[rows], method)
            for x in POVERTY_INDICES:
                values[x][rows], notes[x][rows] = got[x], why[x]
        for x in POVERTY_INDICES:
            v = values[x]
            slack = 1e-9 * np.maximum(1.0, np.abs(np.nan_to_num(v)))
            with np.errstate(invalid="ignore"):
                outside = (v < lower[x] - slack) | (v > upper[x] + slack)
            joined = [
                _join(label, a, b, _OUTSIDE if c else "")
                for a, b, c in zip(notes[x], bound_note[x], outside, strict=True)
            ]
            notes[x] = np.asarray(joined, dtype=object)
        blocks.append(_block(keys, values, lower, upper, method, notes))
    return pd.concat(blocks, ignore_index=True)


def _units(panel, line, ci, reps, seed, level) -> pd.DataFrame:
    data = panel.data
    income = data["income"].to_numpy(float)
    weight = data["weight"].to_numpy(float)
    units = measures.sort_units(income, weight, data[["region", "year"]].reset_index(drop=True))
    years = units.labels["year"].to_numpy().astype(np.int64)
    if not line.relative:
        z = poverty_lines.resolve(line, n=units.n_groups)
    else:
        if line.scope == "district":
            grouped = units
        else:
            grouped = measures.sort_units(income, weight, data["year"].to_numpy().astype(np.int64))
        if line.base == "median":
            base = welfare.weighted_median(grouped)
        else:
            total = np.add.reduceat(grouped.weights, grouped.starts)
            base = np.add.reduceat(grouped.weights * grouped.values, grouped.starts) / total
        if line.scope == "province":
            labels = np.asarray(grouped.labels).astype(np.int64)
            base = base[np.searchsorted(labels, years)]
        z = line.fraction * base
    note = f"line {line.label()}"
    if line.relative and ci:
        note = _join(note, _NO_SAMPLING)
    return poverty.from_units(units, z, ci, reps, seed, level, line_note=note)


def compute(
    panel,
    line,
    methods=("auto",),
    ci: str | None = None,
    reps: int = 199,
    seed: int | None = 0,
    level: float = 0.95,
    regions=None,
) -> pd.DataFrame:
    """The tidy poverty table of a panel.

    Parameters
    ----------
    panel : explorer.data.model.Panel
    line : PovertyLine, str or float
        The poverty line (:func:`explorer.stats.poverty_lines.parse_line` forms).
    methods : str or sequence of str
        Lorenz methods for bracket panels.
    ci : {None, "bootstrap"}
        Intervals for unit panels.
    reps, seed, level
        Bootstrap settings.
    regions : sequence of str, optional
        Measure these districts only (bracket panels). A relative line is still set from
        every district of the panel, so their rows equal those of the whole table.

    Returns
    -------
    DataFrame
        ``region, year, index, value, lower, upper, method, note``; ``attrs`` holds
        ``kind`` and ``line`` (its label).

    Raises
    ------
    explorer.data.model.DataError
        For a means panel, an unreadable line, or a relative line without the means it
        needs.

    References
    ----------
    Foster, J., Greer, J. and Thorbecke, E. (1984). *Econometrica* 52: 761–766.
    """
    line = _line(line)
    methods = (methods,) if isinstance(methods, str) else tuple(methods)
    if panel.kind == "means":
        raise fail(
            "poverty cannot be measured from district means alone: a mean says nothing "
            "about how many people fall below the line",
            "load bracket income shares or unit records for the districts",
        )
    if ci not in (None, "bootstrap"):
        raise fail(f"unknown interval {ci!r}", "use bootstrap or none", column="ci")
    if len(panel.data) == 0:
        table = _block(pd.DataFrame({"region": [], "year": []}), {}, {}, {}, "", {})
    elif panel.kind == "brackets":
        table = _brackets(panel, line, methods, regions)
    else:
        table = _units(panel, line, ci, reps, seed, level)
        if regions is not None:
            wanted = table["region"].astype(str).isin([str(r) for r in regions])
            table = table[wanted].reset_index(drop=True)
    table.attrs.update(kind=panel.kind, line=line.label())
    return table
