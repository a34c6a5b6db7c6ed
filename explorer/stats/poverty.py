"""Poverty measures on weighted units, for every group at once after one sort.

The Foster–Greer–Thorbecke family FGT(0), FGT(1), FGT(2), the Watts index and the Sen
index of every group (district-year) come from segment sums over units sorted once by
(group, income) (:func:`explorer.stats.measures.sort_units`). Weights may carry a leading
replicate axis, so bootstrap replicates go through the same sums. The bootstrap uses the
multinomial scheme and seeds of :mod:`explorer.stats.intervals`: the same seed resamples the
same units as the inequality intervals do.

The Sen index is the large-sample, weighted form ``S = (2/H) sum_i w_i g_i (H - F_i)``
(``g_i`` the normalised gap ``1 - y_i/z``, ``F_i`` the midpoint cumulative population share
of unit i, weights normalised to 1), which equals ``H [I + (1 - I) G_p]`` with ``G_p`` the
Gini of the poor on midpoint ranks; Sen's formula for q poor units, with its weights
``(q + 1 - i) / (q + 1)``, differs from it by terms of order 1/q.

References
----------
Foster, J., Greer, J. and Thorbecke, E. (1984). A class of decomposable poverty measures.
*Econometrica* 52: 761–766.
Watts, H. W. (1968). An economic definition of poverty. In D. P. Moynihan (ed.), *On
Understanding Poverty*. Basic Books.
Sen, A. (1976). Poverty: an ordinal approach to measurement. *Econometrica* 44: 219–231.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats import intervals
from explorer.stats.measures import SortedUnits

__all__ = [
    "POVERTY_INDICES",
    "Decomposition",
    "bootstrap",
    "decompose",
    "from_units",
    "measure_units",
]

#: The poverty keys, in table order.
POVERTY_INDICES: tuple[str, ...] = ("fgt_0", "fgt_1", "fgt_2", "watts", "sen_poverty")

_ZERO_INCOME_NOTE = "infinite: a poor unit has zero or negative income, so ln(z/y) is unbounded"
_NO_WEIGHT_NOTE = "undefined: the group has no weight"


def _segment_sum(x: np.ndarray, starts: np.ndarray) -> np.ndarray:
    return np.add.reduceat(x, starts, axis=-1)


def _local_cumsum(w: np.ndarray, starts: np.ndarray, codes: np.ndarray) -> np.ndarray:
    """Cumulative sums of ``w`` (R, n) restarting at each group start."""
    total = np.cumsum(w, axis=-1)
    before = np.concatenate([np.zeros(w.shape[:-1] + (1,)), total[..., :-1]], axis=-1)
    return total - before[..., starts][..., codes]


def measure_units(units: SortedUnits, line: np.ndarray, weights=None) -> dict[str, np.ndarray]:
    """Every poverty measure of every group, for one or many weightings.

    Parameters
    ----------
    units : SortedUnits
        From :func:`explorer.stats.measures.sort_units`, grouped by district-year.
    line : ndarray, shape (n_groups,)
        The poverty line of each group (same units as the incomes).
    weights : ndarray, shape (R, n), optional
        Replicate weights in sorted order; ``units.weights`` when omitted (R = 1).

    Returns
    -------
    dict of str to ndarray, shape (R, n_groups)
        Keys of :data:`POVERTY_INDICES`; NaN for a group without weight, inf Watts where a
        poor unit has an income <= 0.

    References
    ----------
    Foster, Greer & Thorbecke (1984); Watts (1968); Sen (1976) (module docstring).
    """
    w = np.atleast_2d(units.weights if weights is None else np.asarray(weights, float))
    y, starts, codes = units.values, units.starts, units.codes
    if units.n_groups == 0:
        return {key: np.zeros((w.shape[0], 0)) for key in POVERTY_INDICES}
    z = np.asarray(line, dtype=float)[codes]
    poor = y < z
    gap = np.where(poor, 1.0 - y / z, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_gap = np.where(poor, np.log(z) - np.log(np.where(y > 0, y, 1.0)), 0.0)
    log_gap = np.where(poor & (y <= 0), np.inf, log_gap)
    total = _segment_sum(w, starts)
    with np.errstate(divide="ignore", invalid="ignore"):
        inv = np.where(total > 0, 1.0 / total, np.nan)
        head = _segment_sum(w * poor, starts) * inv
        fgt1 = _segment_sum(w * gap, starts) * inv
        fgt2 = _segment_sum(w * gap * gap, starts) * inv
        watts = _segment_sum(np.where(w > 0, w * log_gap, 0.0), starts) * inv
        # midpoint cumulative share F_i; poor units come first in each group (sorted)
        mid = (_local_cumsum(w, starts, codes) - w / 2) * inv[..., codes]
        rank_gap = _segment_sum(w * gap * (head[..., codes] - mid), starts) * inv
        sen = np.where(head > 0, 2.0 * rank_gap / np.where(head > 0, head, 1.0), 0.0)
    sen = np.where(np.isfinite(total) & (total > 0), sen, np.nan)
    return {"fgt_0": head, "fgt_1": fgt1, "fgt_2": fgt2, "watts": watts, "sen_poverty": sen}


def bootstrap(
    units: SortedUnits,
    line: np.ndarray,
    reps: int = 199,
    seed: int | None = 0,
    level: float = 0.95,
) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Percentile bootstrap intervals of the poverty measures of every group.

    Each group's units are resampled within the group with the multinomial scheme and seed
    of :func:`explorer.stats.intervals.bootstrap` (the same draws for the same seed); the
    line is held fixed (for a relative line this ignores the line's own sampling error,
    which the note of :func:`from_units` says).

    Returns
    -------
    dict of str to (lower, upper), arrays of shape (n_groups,)

    References
    ----------
    Efron, B. and Tibshirani, R. J. (1993). *An Introduction to the Bootstrap*, ch. 13.
    Chapman & Hall.
    """
    if not 0.0 < level < 1.0:
        raise fail(f"level must be between 0 and 1, got {level}", "use e.g. 0.95")
    reps = int(reps)
    G, n = units.n_groups, len(units.values)
    replicates = {key: np.empty((G, reps)) for key in POVERTY_INDICES}
    # the same resampler and chunking rule as the inequality intervals
    resampler = intervals.Resampler(units, "multinomial", np.random.default_rng(seed))
    chunk = intervals.default_chunk(n, reps)
    for first in range(0, reps, chunk):
        size = min(chunk, reps - first)
        got = measure_units(units, line, units.weights * resampler.draw(size))
        for key in POVERTY_INDICES:
            replicates[key][:, first : first + size] = got[key].T
    tail = (1.0 - level) / 2.0
    out = {}
    for key in POVERTY_INDICES:
        out[key] = tuple(intervals.percentiles(replicates[key], (tail, 1 - tail), 0.9))
    return out


def from_units(
    units: SortedUnits,
    line: np.ndarray,
    ci: str | None = None,
    reps: int = 199,
    seed: int | None = 0,
    level: float = 0.95,
    line_note: str = "",
) -> pd.DataFrame:
    """The tidy poverty table of unit data.

    Parameters
    ----------
    units : SortedUnits
        Grouped by ``region, year`` (labels a DataFrame with those columns).
    line : ndarray, shape (n_groups,)
        Poverty line per group.
    ci : {None, "bootstrap"}
    reps, seed, level
        Bootstrap settings.
    line_note : str
        Text describing the line, carried in every note.

    Returns
    -------
    DataFrame
        ``region, year, index, value, lower, upper, method, note``; method ``units``.
    """
    got = measure_units(units, line)
    G = units.n_groups
    if ci == "bootstrap":
        bounds = bootstrap(units, line, reps, seed, level)
    else:
        bounds = {k: (np.full(G, np.nan), np.full(G, np.nan)) for k in POVERTY_INDICES}
    labels = units.labels
    keys = labels if isinstance(labels, pd.DataFrame) else pd.DataFrame({"region": labels})
    k = len(POVERTY_INDICES)
    value = np.stack([got[key][0] for key in POVERTY_INDICES], axis=1).ravel()
    notes = np.empty((G, k), dtype=object)
    notes.fill(line_note)
    watts = got["watts"][0]
    notes[np.isinf(watts), 3] = "; ".join(t for t in (line_note, _ZERO_INCOME_NOTE) if t)
    notes[~np.isfinite(got["fgt_0"][0]), :] = _NO_WEIGHT_NOTE
    table = pd.DataFrame(
        {
            "region": np.repeat(keys["region"].astype(str).to_numpy(), k),
            "year": np.repeat(keys["year"].to_numpy().astype(np.int64), k) if "year" in keys else 0,
            "index": np.tile(np.asarray(POVERTY_INDICES, dtype=object), G),
            "value": value,
            "lower": np.stack([bounds[key][0] for key in POVERTY_INDICES], axis=1).ravel(),
            "upper": np.stack([bounds[key][1] for key in POVERTY_INDICES], axis=1).ravel(),
            "method": "units",
            "note": notes.ravel(),
        }
    )
    return table


# ---------------------------------------------------------------------------- decomposition


@dataclass(frozen=True)
class Decomposition:
    """FGT(alpha) of a whole split additively into its parts' contributions.

    Attributes
    ----------
    total : ndarray, shape (n_parents,)
        FGT of each parent (e.g. the province in each year).
    contribution : ndarray, shape (n_parts,)
        Each part's population share of its parent times its FGT; a parent's
        contributions sum to its total.
    share : ndarray, shape (n_parts,)
        Each part's population share of its parent.
    parent : ndarray of int64, shape (n_parts,)
        The parent code of each part.
    """

    total: np.ndarray
    contribution: np.ndarray
    share: np.ndarray
    parent: np.ndarray

    @property
    def percent(self) -> np.ndarray:
        """Each part's contribution as a percentage of its parent's total."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return 100.0 * self.contribution / self.total[self.parent]


def decompose(values, population, parent) -> Decomposition:
    """Additive decomposition of an FGT measure by level (districts within a province).

    Parameters
    ----------
    values : array_like, shape (n_parts,)
        FGT(alpha) of each part, all at the same absolute line (the decomposition holds
        only when every part is measured against the same line).
    population : array_like, shape (n_parts,)
        Population of each part (> 0).
    parent : array_like of int, shape (n_parts,)
        Code of the parent each part belongs to (0 .. n_parents - 1).

    Returns
    -------
    Decomposition

    References
    ----------
    Foster, J., Greer, J. and Thorbecke, E. (1984). *Econometrica* 52: 761–766, eq. (4)
    (subgroup decomposability).
    """
    values = np.asarray(values, dtype=float)
    population = np.asarray(population, dtype=float)
    parent = np.asarray(parent, dtype=np.int64)
    bad = ~np.isfinite(population) | (population <= 0)
    if bad.any():
        where = np.flatnonzero(bad)[:5] + 1
        raise fail(
            f"population missing or not positive for parts {', '.join(map(str, where))}",
            "give every district's population to decompose poverty by level",
            column="population",
        )
    size = int(parent.max()) + 1 if parent.size else 0
    parent_pop = np.bincount(parent, weights=population, minlength=size)
    share = population / parent_pop[parent]
    contribution = share * values
    total = np.bincount(parent, weights=contribution, minlength=size)
    return Decomposition(total=total, contribution=contribution, share=share, parent=parent)
