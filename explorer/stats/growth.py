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

__all__ = ["GRID", "SUMMARY_KEYS", "GrowthIncidence", "annualise", "from_panel", "incidence"]

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
            f"no district has brackets in both {first_year} and {second_year}",
            "choose two years that the same districts report",
            column="year",
        )
    a = np.array([where[(r, first_year)] for r in regions])
    b = np.array([where[(r, second_year)] for r in regions])
    return regions, a, b


def from_panel(panel, first_year, second_year, method: str = "auto", line=None):
    """Growth incidence of every district present in both years of a bracket panel.

    Parameters
    ----------
    panel : explorer.data.model.Panel
        A bracket panel with each district's mean income in both years (same price base).
    first_year, second_year : int
    method : str
        The Lorenz method for both years.
    line : PovertyLine, str or float, optional
        The line whose first-year headcount sets the poorest H % for the rate of pro-poor
        growth (an amount in the first year's prices).

    Returns
    -------
    summary : DataFrame
        ``region, year, index, value, lower, upper, method, note`` with ``year`` the second
        year and the keys of :data:`SUMMARY_KEYS`.
    curves : DataFrame
        ``region, p, rate``: the growth incidence curve of each district on :data:`GRID`.

    Districts with brackets in only one of the two years are named in
    ``summary.attrs["left_out"]`` for the caller to show.

    References
    ----------
    Ravallion & Chen (2003) (module docstring).
    """
    if panel.kind != "brackets":
        raise fail(
            "growth incidence here needs bracket shares with district means",
            "load a bracket table with mean_income for both years",
        )
    fits = lorenz.fit_panel(panel, method)
    keys = fits.keys.reset_index(drop=True)
    first = panel.data.groupby(["region", "year"], sort=False)["mean_income"].first()
    mean = first.reindex(pd.MultiIndex.from_frame(keys)).to_numpy(float)
    regions, a, b = _pairs(keys, first_year, second_year)
    s_p, s_fine = fits.slope(GRID), fits.slope(_FINE)
    head = None
    if line is not None:
        table = poverty_table.compute(panel, line, method)
        h = table[(table["index"] == "fgt_0") & (table["year"] == first_year)]
        head = h.set_index("region")["value"].reindex(regions).to_numpy(float)
    got = _incidence(GRID, s_p[a], s_p[b], s_fine[a], s_fine[b], mean[b] / mean[a], head)
    note = np.where(
        np.isnan(mean[a]) | np.isnan(mean[b]), "undefined: a district mean is missing", ""
    )
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
            "p": np.tile(GRID, len(regions)),
            "rate": got.rate.ravel(),
        }
    )
    seen = set(keys["region"][keys["year"].isin([first_year, second_year])])
    summary.attrs["left_out"] = sorted(seen - set(regions))  # in only one of the two years
    return summary, curves
