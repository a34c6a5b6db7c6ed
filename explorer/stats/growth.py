"""Growth incidence: the growth rate of income at each percentile between two years.

With ``L_0, L_1`` the Lorenz curves and ``mu_0, mu_1`` the means of the two years, the income
at percentile ``p`` is ``mu L'(p)``, so its growth rate is
``g(p) = [L_1'(p) / L_0'(p)] (mu_1 / mu_0) - 1`` (Ravallion & Chen 2003, eq. 1). Summaries:
the growth of the mean, the mean of ``g`` over the poorest ``H`` (their rate of pro-poor
growth, with H the first year's headcount), and the mean of ``g`` over the bottom 40 %.
Everything runs on every district at once on a shared percentile grid.

Rates are over the whole period (not per year); :func:`annualise` turns them into
compound annual rates.

References
----------
Ravallion, M. and Chen, S. (2003). Measuring pro-poor growth. *Economics Letters* 78:
93–99.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats import lorenz, poverty_table

__all__ = [
    "GRID",
    "SUMMARY_KEYS",
    "GrowthIncidence",
    "annualise",
    "from_panel",
    "incidence",
    "since",
    "slope_bounds",
    "weighted_quantiles",
]

SUMMARY_KEYS = ("growth_mean", "growth_bottom40", "growth_pro_poor")

GRID = (np.arange(1, 100) / 100.0).copy()
"""Percentiles 1 .. 99, where growth incidence curves are drawn."""
GRID.setflags(write=False)

_U = (np.arange(2000) + 0.5) / 2000
_FINE = _U * _U  # p = u^2 with u on midpoints: nodes crowd where g changes fastest, near 0


@dataclass(frozen=True)
class GrowthIncidence:
    """Growth incidence of n districts between two years.

    Attributes
    ----------
    p : ndarray, shape (m,)
        Percentiles of the curve.
    rate : ndarray, shape (n, m)
        ``g(p)``; NaN where a slope is zero or unknown.
    mean_growth : ndarray, shape (n,)
        ``mu_1 / mu_0 - 1``.
    pro_poor : ndarray, shape (n,)
        Mean of ``g`` over ``(0, H]`` (NaN where H = 0).
    bottom40 : ndarray, shape (n,)
        Mean of ``g`` over ``(0, 0.4]``.
    """

    p: np.ndarray
    rate: np.ndarray
    mean_growth: np.ndarray
    pro_poor: np.ndarray
    bottom40: np.ndarray


def _rates(slope_0, slope_1, ratio):
    with np.errstate(divide="ignore", invalid="ignore"):
        g = slope_1 / slope_0 * ratio[:, None] - 1.0
    return np.where(np.isfinite(g), g, np.nan)


def _mean_below(g, cut):
    """Mean of g over (0, cut] per row: the midpoint rule in u = sqrt(p) over whole cells,
    plus the part of the cell holding ``sqrt(cut)``."""
    size = _U.size
    cells = np.nan_to_num(g) * (2 * _U / size)  # dp = 2u du
    before = np.hstack([np.zeros((g.shape[0], 1)), np.cumsum(cells, axis=1)])
    root = np.sqrt(np.clip(cut, 0.0, 1.0))
    j = np.clip(np.floor(root * size).astype(np.int64), 0, size - 1)
    rows = np.arange(g.shape[0])
    part = (cut - (j / size) ** 2) * np.nan_to_num(g[rows, j])  # the cell's share of (0, cut]
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = (before[rows, j] + part) / cut
        return np.where((cut > 0) & np.isfinite(g).all(axis=1), mean, np.nan)


def incidence(first, second, mean_0, mean_1, headcount=None, p=GRID) -> GrowthIncidence:
    """Growth incidence curves and their summaries for every district.

    Parameters
    ----------
    first, second : LorenzFits
        The two years' curves, row i of each for the same district
        (:func:`explorer.stats.lorenz.fit_panel` or ``fit_points``).
    mean_0, mean_1 : array_like, shape (n,)
        The two years' mean incomes (same price base).
    headcount : array_like, shape (n,), optional
        The first year's headcount ratio H for the rate of pro-poor growth; NaN without.
    p : array_like
        Percentiles of the returned curve.

    Returns
    -------
    GrowthIncidence

    References
    ----------
    Ravallion & Chen (2003), eq. (1) and the rate of pro-poor growth, eq. (4).
    """
    p = np.asarray(p, dtype=float)
    ratio = np.asarray(mean_1, float) / np.asarray(mean_0, float)
    slopes = (first.slope(p), second.slope(p), first.slope(_FINE), second.slope(_FINE))
    return _incidence(p, *slopes, ratio, headcount)


def _incidence(p, slope_0, slope_1, fine_0, fine_1, ratio, headcount) -> GrowthIncidence:
    n = len(ratio)
    rate = _rates(slope_0, slope_1, ratio)
    fine = _rates(fine_0, fine_1, ratio)
    head = np.full(n, np.nan) if headcount is None else np.asarray(headcount, float)
    pro_poor = np.where(head > 0, _mean_below(fine, np.nan_to_num(head)), np.nan)
    return GrowthIncidence(
        p=p,
        rate=rate,
        mean_growth=ratio - 1.0,
        pro_poor=pro_poor,
        bottom40=_mean_below(fine, np.full(n, 0.4)),
    )


def annualise(rate, years) -> np.ndarray:
    """Compound annual rate of a growth ``rate`` over ``years`` years."""
    years = np.asarray(years, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.power(1.0 + np.asarray(rate, float), 1.0 / years) - 1.0


def _pairs(keys, first_year, second_year):
    """Districts present in both years, and their rows in each."""
    where = {
        (r, int(y)): i for i, (r, y) in enumerate(zip(keys["region"], keys["year"], strict=True))
    }
    regions = sorted(
        {r for r, y in where if y == first_year} & {r for r, y in where if y == second_year}
    )
    if not regions:
        raise fail(
            f"no district has figures in both {first_year} and {second_year}",
            "choose two years that the same districts report",
            column="year",
        )
    a = np.array([where[(r, first_year)] for r in regions])
    b = np.array([where[(r, second_year)] for r in regions])
    return regions, a, b


def slope_bounds(P, L, p) -> tuple[np.ndarray, np.ndarray]:
    """Bounds of ``L'(p)`` (the income at ``p`` over the mean) from ordered brackets.

    For ``p`` a share ``t`` of the way through bracket ``j`` (mean slope ``s_j``), every
    income of bracket ``j`` is at least the bracket's lower limit, itself at least the mean
    of bracket ``j - 1`` (``s_{j-1}``, 0 below the first), and at most its upper limit,
    itself at most ``s_{j+1}`` (unbounded above the last). Since the bracket's incomes
    average ``s_j`` and rise through it,
    ``max(s_{j-1}, (s_j - (1 - t) s_{j+1}) / t) <= L'(p) <= min(s_{j+1}, (s_j - t s_{j-1}) / (1 - t))``.
    Every distribution with the published shares has its quantile inside (derived here from
    the ordering of incomes across brackets; the same argument bounds the median in
    :mod:`explorer.stats.welfare`).

    Parameters
    ----------
    P, L : ndarray, shape (n, k + 1)
        Cumulative population and income shares from (0, 0) to (1, 1).
    p : array_like, shape (m,)
        Percentiles strictly inside (0, 1).

    Returns
    -------
    low, high : ndarray, shape (n, m)
    """
    p = np.asarray(p, dtype=float)
    dp, dl = np.diff(P, axis=1), np.diff(L, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        s = np.where(dp > 0, dl / dp, 0.0)
    n, k = s.shape
    # the bracket holding each p: panels mostly share their population shares (deciles),
    # so each distinct row of P is searched once
    distinct, inverse = np.unique(P, axis=0, return_inverse=True)
    found = np.stack([np.searchsorted(row[1:-1], p, side="left") for row in distinct])
    j = np.clip(found[np.ravel(inverse)], 0, k - 1)  # (n, m)
    rows = np.arange(n)[:, None]
    own = s[rows, j]
    prev = np.where(j > 0, s[rows, np.clip(j - 1, 0, k - 1)], 0.0)
    nxt = np.where(j < k - 1, s[rows, np.clip(j + 1, 0, k - 1)], np.inf)
    start, width = P[rows, j], dp[rows, j]
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.clip((p[None, :] - start) / width, 0.0, 1.0)
        from_above = np.where(np.isinf(nxt), -np.inf, (own - (1 - t) * nxt) / t)
        from_below = np.where(t < 1, (own - t * prev) / (1 - t), np.inf)
    low = np.maximum(prev, np.nan_to_num(from_above, nan=-np.inf, neginf=-np.inf))
    high = np.minimum(nxt, np.nan_to_num(from_below, nan=np.inf, posinf=np.inf))
    return low, high


def _bounded_rates(low_0, high_0, low_1, high_1, ratio):
    """The range of g(p) = L_1'(p) / L_0'(p) * ratio - 1 given bounds on both slopes."""
    with np.errstate(divide="ignore", invalid="ignore"):
        low = low_1 / high_0 * ratio[:, None] - 1.0
        high = high_1 / low_0 * ratio[:, None] - 1.0
    return np.where(np.isnan(low), -1.0, low), np.where(np.isnan(high), np.inf, high)


def _bound_below(g, cut, upper: bool):
    """The mean of a bound of g over (0, cut]: infinite when the bound is, anywhere there."""
    within = _FINE[None, :] <= cut + 1.0 / _U.size
    bad = (~np.isfinite(g) & within).any(axis=1)
    mean = _mean_below(np.where(within, g, 0.0), np.full(g.shape[0], cut))
    return np.where(bad, np.inf if upper else -np.inf, mean)


def _slopes(panel, method):
    """keys, means and the slopes ``L'(p)`` on GRID and on the fine grid of every
    district-year: from each fitted curve for brackets, from the sample quantiles over the
    mean for unit records (``mu L'(p)`` is the income at ``p``)."""
    if panel.kind == "units":
        from explorer.stats import measures

        data = panel.data
        units = measures.sort_units(
            data["income"].to_numpy(float),
            data["weight"].to_numpy(float),
            data[["region", "year"]].reset_index(drop=True),
        )
        keys = units.labels.reset_index(drop=True)
        total = np.add.reduceat(units.weights, units.starts)
        mean = np.add.reduceat(units.weights * units.values, units.starts) / total
        q_p, q_fine = weighted_quantiles(units, GRID), weighted_quantiles(units, _FINE)
        return keys, mean, q_p / mean[:, None], q_fine / mean[:, None], None
    if panel.kind != "brackets":
        raise fail(
            "growth incidence needs the distribution within districts: bracket shares with "
            "district means, or household records",
            "load a bracket table with mean_income for both years, or unit records",
        )
    fits = lorenz.fit_panel(panel, method)
    keys = fits.keys.reset_index(drop=True)
    first = panel.data.groupby(["region", "year"], sort=False)["mean_income"].first()
    mean = first.reindex(pd.MultiIndex.from_frame(keys)).to_numpy(float)
    return keys, mean, fits.slope(GRID), fits.slope(_FINE), _panel_bounds(panel, keys)


def _panel_bounds(panel, keys):
    """Slope bounds of every district-year on GRID and the fine grid, rows as ``keys``."""
    order, batches = lorenz.panel_points(panel)
    where = {
        (r, int(y)): i for i, (r, y) in enumerate(zip(keys["region"], keys["year"], strict=True))
    }
    position = np.array(
        [where[(r, int(y))] for r, y in zip(order["region"], order["year"], strict=True)]
    )
    n = len(keys)
    out = [np.full((n, GRID.size), np.nan), np.full((n, GRID.size), np.nan)]
    out += [np.full((n, _FINE.size), np.nan), np.full((n, _FINE.size), np.nan)]
    for rows, P, L in batches:
        at = position[rows]
        out[0][at], out[1][at] = slope_bounds(P, L, GRID)
        out[2][at], out[3][at] = slope_bounds(P, L, _FINE)
    return out


def from_panel(panel, first_year, second_year, method: str = "auto", line=None):
    """Growth incidence of every district present in both years.

    Parameters
    ----------
    panel : explorer.data.model.Panel
        A bracket panel with each district's mean income in both years (same price base),
        or unit records.
    first_year, second_year : int
    method : str
        The Lorenz method for both years (bracket panels).
    line : PovertyLine, str or float, optional
        The line whose first-year headcount sets the poorest H % for the rate of pro-poor
        growth (an amount in the first year's prices).

    Returns
    -------
    summary : DataFrame
        ``region, year, index, value, lower, upper, method, note`` with ``year`` the second
        year and the keys of :data:`SUMMARY_KEYS`.
    curves : DataFrame
        ``region, year, p, rate``: the growth incidence curve of each district on
        :data:`GRID`.

    Districts in only one of the two years are named in ``summary.attrs["left_out"]`` for
    the caller to show.

    References
    ----------
    Ravallion & Chen (2003) (module docstring).
    """
    return since(panel, first_year, method, line, later=(int(second_year),))


def since(panel, first_year, method: str = "auto", line=None, later=None, headcount=None):
    """Growth incidence from ``first_year`` to every later year (or the years ``later``),
    with one fit of the panel: the tables of :func:`from_panel`, stacked by second year.

    ``headcount`` (a Series by district) gives the first year's headcount ratios at
    ``line`` when they were measured on a larger panel than this one."""
    first_year = int(first_year)
    keys, mean, s_p, s_fine, bounds = _slopes(panel, method)
    keys = keys.assign(region=keys["region"].astype(str), year=keys["year"].astype(int))
    years = sorted({int(y) for y in keys["year"]} - {first_year}) if later is None else later
    years = [y for y in years if y > first_year] if later is None else list(years)
    used = "units" if panel.kind == "units" else method
    head = headcount
    if line is not None and headcount is None:
        table = poverty_table.compute(panel, line, method if panel.kind == "brackets" else "auto")
        h = table[(table["index"] == "fgt_0") & (table["year"] == first_year)]
        head = h.assign(region=h["region"].astype(str)).set_index("region")["value"]
    summaries, curves, left_out = [], [], set()
    present = {int(y): set(keys["region"][keys["year"] == y]) for y in set(keys["year"])}
    for second in years:
        if later is None and not present.get(first_year, set()) & present[int(second)]:
            continue  # a year no district shares with the first: nothing to compare
        regions, a, b = _pairs(keys, first_year, int(second))
        h = None if head is None else head.reindex(regions).to_numpy(float)
        got = _incidence(GRID, s_p[a], s_p[b], s_fine[a], s_fine[b], mean[b] / mean[a], h)
        if panel.kind == "units":
            note = np.full(len(regions), _SAMPLE_NOTE, dtype=object)
        else:
            note = np.where(
                np.isnan(mean[a]) | np.isnan(mean[b]), "undefined: a district mean is missing", ""
            ).astype(object)
        summary, curve = _tables(got, regions, int(second), used, note, line)
        if bounds is not None:
            _put_bounds(summary, curve, bounds, a, b, mean[b] / mean[a])
        summaries.append(summary)
        curves.append(curve)
        seen = set(keys["region"][keys["year"].isin([first_year, int(second)])])
        left_out |= seen - set(regions)  # in only one of the two years
    if not summaries:
        raise fail(
            f"no year after {first_year} to measure growth to",
            "choose an earlier first year",
            column="year",
        )
    summary = pd.concat(summaries, ignore_index=True)
    summary.attrs["left_out"] = sorted(left_out)
    return summary, pd.concat(curves, ignore_index=True)


_SAMPLE_NOTE = "from the sample records; their sampling error is not included"


def _put_bounds(summary, curve, bounds, a, b, ratio) -> None:
    """Bounds of the curve and of the bottom 40 %'s growth from the brackets of both years;
    the growth of the mean is exact (the means are given); the rate of pro-poor growth has
    none here (its poorest H % is itself uncertain)."""
    low_p, high_p = _bounded_rates(bounds[0][a], bounds[1][a], bounds[0][b], bounds[1][b], ratio)
    low_f, high_f = _bounded_rates(bounds[2][a], bounds[3][a], bounds[2][b], bounds[3][b], ratio)
    curve["lower"] = low_p.ravel()
    curve["upper"] = high_p.ravel()
    k = len(SUMMARY_KEYS)
    lower = np.full((len(a), k), np.nan)
    upper = np.full((len(a), k), np.nan)
    lower[:, 0] = upper[:, 0] = ratio - 1.0
    lower[:, 1] = _bound_below(low_f, 0.4, upper=False)
    upper[:, 1] = _bound_below(high_f, 0.4, upper=True)
    summary["lower"] = lower.ravel()
    summary["upper"] = upper.ravel()


def _tables(got, regions, second_year, method, note, line):
    pro_note = "" if line is not None else "needs a poverty line (the first year's headcount)"
    k = len(SUMMARY_KEYS)
    summary = pd.DataFrame(
        {
            "region": np.repeat(regions, k),
            "year": int(second_year),
            "index": np.tile(np.asarray(SUMMARY_KEYS, dtype=object), len(regions)),
            "value": np.column_stack([got.mean_growth, got.bottom40, got.pro_poor]).ravel(),
            "lower": np.nan,
            "upper": np.nan,
            "method": method,
            "note": np.column_stack([note, note, np.where(note == "", pro_note, note)]).ravel(),
        }
    )
    curves = pd.DataFrame(
        {
            "region": np.repeat(regions, GRID.size),
            "year": int(second_year),
            "p": np.tile(GRID, len(regions)),
            "rate": got.rate.ravel(),
            "lower": np.nan,
            "upper": np.nan,
        }
    )
    return summary, curves


def weighted_quantiles(units, p) -> np.ndarray:
    """Income at each percentile ``p`` of every group of sorted units, shape (groups, len(p)).

    The weighted empirical quantile function, linear between the midpoints of each unit's
    weight (common practice: the ``midpoint`` plotting positions), so that a percentile's
    income moves smoothly and two samples' growth rates are defined at every ``p``.
    """
    p = np.asarray(p, dtype=float)
    out = np.full((units.n_groups, p.size), np.nan)
    ends = np.append(units.starts[1:], len(units.values))
    for g, (start, end) in enumerate(zip(units.starts, ends, strict=True)):
        w = units.weights[start:end]
        total = w.sum()
        if total <= 0:
            continue
        middle = (np.cumsum(w) - 0.5 * w) / total
        out[g] = np.interp(p, middle, units.values[start:end])
    return out
