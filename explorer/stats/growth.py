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

__all__ = ["GRID", "GrowthIncidence", "annualise", "incidence"]

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
    n = len(ratio)
    rate = _rates(first.slope(p), second.slope(p), ratio)
    fine = _rates(first.slope(_FINE), second.slope(_FINE), ratio)
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
