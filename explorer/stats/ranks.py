"""Rankings of districts that carry their uncertainty: rank intervals and changes of rank.

Rank 1 goes to the smallest value (the least unequal or least poor district) unless
``descending`` is set. From bounds (grouped data), a district's best rank puts it at its
lower bound and every other district at its upper bound; its worst rank the reverse. Every
set of true values inside the bounds ranks each district within those two, so the interval
covers the true rank whenever the bounds hold. From bootstrap replicates (unit data), each
replicate is ranked and the percentiles of a district's ranks form its interval. Both run
on sorted arrays with ``searchsorted`` (no loop over districts).

A rank is a position, not a measure of need: an index alone must not decide funding, and
the office's own rules for allocation come first.

References
----------
Goldstein, H. and Spiegelhalter, D. J. (1996). League tables and their limitations:
statistical issues in comparisons of institutional performance. *Journal of the Royal
Statistical Society A* 159: 385–443.
Hall, P. and Miller, H. (2009). Using the bootstrap to quantify the authority of an
empirical ranking. *Annals of Statistics* 37: 3929–3959.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from explorer.data.model import fail

__all__ = [
    "CAUTION",
    "RANK_COLUMNS",
    "RankIntervals",
    "from_bounds",
    "from_replicates",
    "rank_change",
    "rank_table",
    "ranks",
]


@dataclass(frozen=True)
class RankIntervals:
    """Ranks of n districts with their intervals (NaN where the value is missing).

    Attributes
    ----------
    rank : ndarray of float, shape (n,)
        Rank of the point estimate (ties share the smallest rank).
    best, worst : ndarray of float, shape (n,)
        The interval of ranks.
    """

    rank: np.ndarray
    best: np.ndarray
    worst: np.ndarray

    @property
    def clear(self) -> np.ndarray:
        """Whether the rank is certain (best equals worst)."""
        return self.best == self.worst


def _oriented(values, descending):
    values = np.asarray(values, dtype=float)
    return -values if descending else values


def ranks(values, descending: bool = False) -> np.ndarray:
    """Rank of each value among the finite ones: 1 + how many are strictly smaller."""
    v = _oriented(values, descending)
    ok = np.isfinite(v)
    ordered = np.sort(v[ok])
    out = np.full(v.shape, np.nan)
    out[ok] = 1 + np.searchsorted(ordered, v[ok], side="left")
    return out


def from_bounds(values, lower, upper, descending: bool = False) -> RankIntervals:
    """Best and worst ranks given every district's bounds.

    Parameters
    ----------
    values, lower, upper : array_like, shape (n,)
        Point values and their bounds (``lower <= values <= upper``). A district with a
        missing bound is ranked with its missing side unbounded.
    descending : bool
        Rank 1 to the largest value.

    Returns
    -------
    RankIntervals
        ``best = 1 + #{j: upper_j < lower_i}``, ``worst = #{j: lower_j < upper_i}`` with i
        itself counted once.
    """
    v = _oriented(values, descending)
    lo, hi = _oriented(lower, descending), _oriented(upper, descending)
    if descending:
        lo, hi = hi, lo
    ok = np.isfinite(v)
    lo = np.where(np.isnan(lo), -np.inf, lo)
    hi = np.where(np.isnan(hi), np.inf, hi)
    lo, hi = np.minimum(lo, v), np.maximum(hi, v)
    lo_ok, hi_ok = np.sort(lo[ok]), np.sort(hi[ok])
    best = 1 + np.searchsorted(hi_ok, lo, side="left")
    below = np.searchsorted(lo_ok, hi, side="left")  # includes i itself when lo_i < hi_i
    worst = np.maximum(below + (lo >= hi), 1)
    nan = np.full(v.shape, np.nan)
    return RankIntervals(
        rank=ranks(values, descending),
        best=np.where(ok, best, nan),
        worst=np.where(ok, worst, nan),
    )


def from_replicates(
    values, replicates, level: float = 0.95, descending: bool = False
) -> RankIntervals:
    """Rank intervals from bootstrap replicates: percentiles of each district's ranks.

    Parameters
    ----------
    values : array_like, shape (n,)
        Point values.
    replicates : ndarray, shape (n, R)
        Replicates of every district's value (the same resample index across districts
        only matters for correlated districts; independent samples are the usual case).
    level : float
        Coverage of each district's interval.

    Returns
    -------
    RankIntervals

    References
    ----------
    Hall & Miller (2009) (module docstring).
    """
    rep = _oriented(replicates, descending)
    # ranks within each replicate column, ties sharing the smallest rank: sort each column,
    # mark where a new value starts, carry that position forward, scatter back
    n, R = rep.shape
    order = np.argsort(rep, axis=0, kind="stable")
    ordered = np.take_along_axis(rep, order, axis=0)
    start = np.ones((n, R), bool)
    start[1:] = ordered[1:] != ordered[:-1]
    position = np.where(start, np.arange(n)[:, None], 0)
    first = np.maximum.accumulate(position, axis=0)
    rank = np.empty((n, R))
    np.put_along_axis(rank, order, 1.0 + first, axis=0)
    rank = np.where(np.isfinite(rep), rank, np.nan)
    tail = (1.0 - level) / 2.0
    quantile = np.quantile if np.isfinite(rank).all() else np.nanquantile
    with np.errstate(invalid="ignore"):
        best = np.floor(quantile(rank, tail, axis=1))
        worst = np.ceil(quantile(rank, 1 - tail, axis=1))
    point = ranks(values, descending)
    ok = np.isfinite(point)
    return RankIntervals(
        rank=point,
        best=np.where(ok, np.minimum(best, point), np.nan),
        worst=np.where(ok, np.maximum(worst, point), np.nan),
    )


def rank_change(first: RankIntervals, second: RankIntervals):
    """Change of rank from a first to a second year, with its interval.

    Returns
    -------
    change, low, high : ndarray, shape (n,)
        ``second.rank - first.rank`` and the range the change could take given both
        intervals (``second.best - first.worst`` to ``second.worst - first.best``).
    clear : ndarray of bool
        Whether the interval of the change excludes 0 (the district surely moved).
    """
    change = second.rank - first.rank
    low = second.best - first.worst
    high = second.worst - first.best
    with np.errstate(invalid="ignore"):
        clear = (low > 0) | (high < 0)
    return change, low, high, clear


RANK_COLUMNS = ("region", "year", "index", "method", "value", "rank", "best", "worst", "clear")
CAUTION = (
    "A rank is a position, not a measure of need: an index alone must not decide funding. "
    "Districts whose rank intervals overlap cannot be told apart, and the office's own rules "
    "for allocation come first."
)


def rank_table(table, index: str, year, method: str | None = None, descending=False):
    """Rank the districts of one year by one index of a tidy table, with rank intervals.

    Parameters
    ----------
    table : DataFrame
        A tidy table with ``region, year, index, value, lower, upper, method`` (the index,
        poverty or welfare table). ``lower``/``upper`` are bounds (bracket panels) or
        bootstrap intervals (unit panels); where they are missing the district is ranked
        with that side unbounded, so its interval is honest, if wide.
    index, year, method
        Which rows; ``method`` may be omitted when the table has one.
    descending : bool
        Rank 1 to the largest value (e.g. for welfare).

    Returns
    -------
    DataFrame
        Columns :data:`RANK_COLUMNS`, sorted by rank; ``attrs["caution"]`` holds
        :data:`CAUTION`.

    Notes
    -----
    An interval built from each district's own 95 % interval is not a 95 % interval for
    the rank: it covers the true rank whenever every district's interval covers its value.
    Use :func:`from_replicates` on bootstrap replicates for a rank interval at a stated level.
    """
    rows = table[(table["index"] == index) & (table["year"] == year)]
    if method is not None:
        rows = rows[rows["method"] == method]
    if rows["method"].nunique() > 1:
        raise fail(
            f"the table holds {index} for several methods ({', '.join(rows['method'].unique())})",
            "choose one method to rank by",
            column="method",
        )
    got = from_bounds(
        rows["value"].to_numpy(float),
        rows["lower"].to_numpy(float),
        rows["upper"].to_numpy(float),
        descending,
    )
    out = pd.DataFrame(
        {
            "region": rows["region"].to_numpy(),
            "year": rows["year"].to_numpy(),
            "index": index,
            "method": rows["method"].to_numpy(),
            "value": rows["value"].to_numpy(float),
            "rank": got.rank,
            "best": got.best,
            "worst": got.worst,
            "clear": got.clear,
        }
    )
    out = out.sort_values(["rank", "region"], na_position="last").reset_index(drop=True)
    out.attrs["caution"] = CAUTION
    return out
