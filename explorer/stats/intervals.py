"""Sampling uncertainty of unit-data indices: bootstrap and analytic intervals.

The bootstrap never re-sorts: a resample of a group's units is the same sorted units
with integer multiplicities on their weights, so every replicate of every group goes
through the same segment reductions as the point estimate, replicates on a second axis.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np
from scipy import stats

from explorer.stats.measures import (
    STANDARD_INDICES,
    SortedUnits,
    compute,
    replicate_values,
)

__all__ = [
    "SCHEMES",
    "Resampler",
    "bootstrap",
    "bootstrap_replicates",
    "default_chunk",
    "gini_analytic",
    "gini_se",
    "percentiles",
]

#: Resampling schemes: how a replicate's multiplicities are drawn.
SCHEMES = ("multinomial", "poisson", "bayesian")

# Memory for one chunk of replicate weights and their temporaries, in float64 cells.
_CHUNK_CELLS = 4_000_000


def default_chunk(n: int, reps: int) -> int:
    """How many replicates to draw at once for ``n`` units so a chunk stays within memory."""
    return int(max(1, min(reps, _CHUNK_CELLS // max(n, 1))))


class Resampler:
    """Draws multiplicities for R replicates at once, shape (R, n), sorted order.

    Draws are made replicate by replicate from one generator, so a replicate's
    multiplicities do not depend on how replicates are chunked.
    """

    def __init__(self, units: SortedUnits, scheme: str, rng: np.random.Generator):
        self.n, self.scheme, self.rng = len(units.values), scheme, rng
        if scheme == "multinomial":
            # Resample among units that carry weight, each group to its own size.
            self.candidates = np.flatnonzero(units.weights > 0)
            codes = units.codes[self.candidates]
            sizes = np.bincount(codes, minlength=units.n_groups)
            first = np.concatenate(([0], np.cumsum(sizes)[:-1]))
            self.slot_first = first[codes]
            self.slot_size = sizes[codes]

    def draw(self, reps: int) -> np.ndarray:
        n = self.n
        if self.scheme == "poisson":
            counts = self.rng.poisson(1.0, size=(reps, n)).astype(np.float64)
        elif self.scheme == "bayesian":
            counts = self.rng.standard_exponential(size=(reps, n))
        else:
            k = len(self.candidates)
            uniform = self.rng.random(size=(reps, k))
            pick = self.slot_first + np.minimum(
                (uniform * self.slot_size).astype(np.int64), self.slot_size - 1
            )
            chosen = self.candidates[pick] + n * np.arange(reps)[:, None]
            counts = np.bincount(chosen.ravel(), minlength=n * reps).astype(np.float64)
            counts = counts.reshape(reps, n)
        return counts


def bootstrap_replicates(
    sorted_units: SortedUnits,
    indices: Iterable[str] | str = STANDARD_INDICES,
    reps: int = 199,
    seed: int | None = 0,
    chunk: int | None = None,
    scheme: str = "multinomial",
) -> dict[str, np.ndarray]:
    """Bootstrap replicates of every index for every group.

    Parameters
    ----------
    sorted_units : SortedUnits
        From :func:`explorer.stats.measures.sort_units`.
    indices : str or iterable of str
        Index keys.
    reps : int
        Number of replicates.
    seed : int or None
        Seed of ``np.random.default_rng``; the same seed gives the same replicates,
        whatever ``chunk`` is.
    chunk : int, optional
        Replicates processed together (bounds memory: a few ``n * chunk`` arrays);
        chosen from the data size when omitted.
    scheme : {"multinomial", "poisson", "bayesian"}
        ``multinomial``: each group's units (those with positive weight) resampled with
        replacement to the group's own size, the classical bootstrap. ``poisson``:
        independent Poisson(1) multiplicities. ``bayesian``: standard exponential
        weights (Dirichlet(1, ..., 1) up to scale, which the indices ignore).

    Returns
    -------
    dict of str to ndarray, shape (n_groups, reps)
        NaN where an index is undefined in a replicate.

    References
    ----------
    Efron, B. (1979). Bootstrap methods: another look at the jackknife. *Annals of
    Statistics* 7: 1-26.
    Hanley, J. A. and MacGibbon, B. (2006). Creating non-parametric bootstrap samples
    using Poisson frequencies. *Computer Methods and Programs in Biomedicine* 83: 57-62.
    Rubin, D. B. (1981). The Bayesian bootstrap. *Annals of Statistics* 9: 130-134.
    """
    if scheme not in SCHEMES:
        raise ValueError(f"unknown resampling scheme {scheme!r}; choose one of {SCHEMES}")
    reps = int(reps)
    if reps < 1:
        raise ValueError(f"reps must be at least 1, got {reps}")
    keys = [indices] if isinstance(indices, str) else list(indices)
    G, n = sorted_units.n_groups, len(sorted_units.values)
    out = {key: np.empty((G, reps)) for key in keys}
    if G == 0:
        return out
    chunk = default_chunk(n, reps) if chunk is None else max(1, int(chunk))
    resampler = Resampler(sorted_units, scheme, np.random.default_rng(seed))
    base = sorted_units.weights
    for first in range(0, reps, chunk):
        size = min(chunk, reps - first)
        weights = base * resampler.draw(size)
        for key, value in replicate_values(sorted_units, keys, weights).items():
            out[key][:, first : first + size] = value
    return out


def percentiles(replicates: np.ndarray, probs: tuple[float, float], min_finite: float):
    """Percentiles of each row's finite replicates, the (R + 1) p order-statistic rule.

    ``numpy.quantile(method="weibull")`` on each row's finite values, vectorised: NaN
    sort last, so each row's k finite values are its first k.
    """
    ordered = np.sort(replicates, axis=1)
    finite = np.isfinite(ordered).sum(axis=1)
    enough = finite >= max(1, min_finite * replicates.shape[1])
    k = np.maximum(finite, 1)
    bounds = []
    for p in probs:
        h = np.clip(p * (k + 1), 1.0, k.astype(np.float64)) - 1.0  # 0-based position
        below = np.floor(h).astype(np.int64)
        above = np.minimum(below + 1, k - 1)
        lo = np.take_along_axis(ordered, below[:, None], axis=1)[:, 0]
        hi = np.take_along_axis(ordered, above[:, None], axis=1)[:, 0]
        bounds.append(np.where(enough, lo + (h - below) * (hi - lo), np.nan))
    return bounds


def bootstrap(
    sorted_units: SortedUnits,
    indices: Iterable[str] | str = STANDARD_INDICES,
    reps: int = 199,
    seed: int | None = 0,
    level: float = 0.95,
    chunk: int | None = None,
    scheme: str = "multinomial",
) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Percentile bootstrap intervals of every index for every group.

    Each group's units are resampled within the group (the groups are independent
    samples), by default with the classical multinomial bootstrap: ``n_g`` draws with
    replacement among the group's units, each drawn unit keeping its weight. It keeps
    every district's sample size, which matters for the small samples where intervals
    matter most; the draws are uniform positions turned into multiplicities with one
    ``np.bincount``, so it costs no more than Poisson multiplicities (Hanley & MacGibbon
    2006, ``scheme="poisson"``), whose random sample sizes add noise in small groups.
    The Bayesian bootstrap (Rubin 1981, ``scheme="bayesian"``) never drops a unit, so
    indices undefined with zero incomes stay undefined in every replicate.

    Parameters
    ----------
    sorted_units : SortedUnits
        From :func:`explorer.stats.measures.sort_units`.
    indices : str or iterable of str
        Index keys.
    reps : int
        Number of replicates; 199 puts the 95% bounds on order statistics 5 and 195.
    seed : int or None
        Seed of ``np.random.default_rng`` (reproducible for the same seed).
    level : float
        Coverage of the interval, in (0, 1).
    chunk : int, optional
        Replicates processed together; bounds memory, does not change the result.
    scheme : {"multinomial", "poisson", "bayesian"}
        See :func:`bootstrap_replicates`.

    Returns
    -------
    dict of str to (lower, upper)
        Arrays of shape (n_groups,). NaN where the point estimate is undefined or fewer
        than 90% of the replicates are defined (e.g. most resamples of a tiny group).

    References
    ----------
    Efron, B. (1979). Bootstrap methods: another look at the jackknife. *Annals of
    Statistics* 7: 1-26.
    Efron, B. and Tibshirani, R. J. (1993). *An Introduction to the Bootstrap*, ch. 13
    (percentile intervals). Chapman & Hall.
    Hanley, J. A. and MacGibbon, B. (2006). Creating non-parametric bootstrap samples
    using Poisson frequencies. *Computer Methods and Programs in Biomedicine* 83: 57-62.
    Rubin, D. B. (1981). The Bayesian bootstrap. *Annals of Statistics* 9: 130-134.
    """
    if not 0.0 < level < 1.0:
        raise ValueError(f"level must be between 0 and 1 (e.g. 0.95), got {level}")
    keys = [indices] if isinstance(indices, str) else list(indices)
    point = compute(sorted_units, keys)
    replicates = bootstrap_replicates(sorted_units, keys, reps, seed, chunk, scheme)
    tail = (1.0 - level) / 2.0
    out = {}
    for key in keys:
        lower, upper = percentiles(replicates[key], (tail, 1.0 - tail), min_finite=0.9)
        defined = np.isfinite(point[key].value)
        out[key] = (np.where(defined, lower, np.nan), np.where(defined, upper, np.nan))
    return out


def gini_se(sorted_units: SortedUnits) -> np.ndarray:
    """Asymptotic standard error of each group's weighted Gini.

    The linearisation (influence function) of the Gini: with units in ascending order,
    ``F_i`` the midpoint of unit i's cumulative population share and ``Lbar_i`` the
    mean income per head of the units below it (half its own),
    ``Z_i = (2 F_i - G - 1) y_i - 2 Lbar_i``, and
    ``Var(G) = sum_i w_i^2 (Z_i - Zbar)^2 / (W mu)^2`` with ``Zbar`` the weighted mean.
    With unit weights this is Davidson's (2009) estimator up to terms of order 1/n;
    units are treated as independent draws, each carrying its weight.

    Parameters
    ----------
    sorted_units : SortedUnits

    Returns
    -------
    ndarray, shape (n_groups,)
        NaN where the Gini is undefined.

    References
    ----------
    Davidson, R. (2009). Reliable inference for the Gini index. *Journal of
    Econometrics* 150: 30-40.
    Lerman, R. I. and Yitzhaki, S. (1984). A note on the calculation and interpretation
    of the Gini index. *Economics Letters* 15: 363-368.
    """
    return _gini_and_se(sorted_units)[1]


def _gini_and_se(units: SortedUnits) -> tuple[np.ndarray, np.ndarray]:
    if units.n_groups == 0:
        return np.zeros(0), np.zeros(0)
    gini = compute(units, ["gini"])["gini"].value
    w, y, codes, starts = units.weights, units.values, units.codes, units.starts
    W = np.add.reduceat(w, starts)
    cum_w = _local(w, starts, codes)
    cum_income = _local(w * y, starts, codes)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.add.reduceat(w * y, starts) / W
        F = (cum_w - 0.5 * w) / W[codes]
        partial = (cum_income - 0.5 * w * y) / W[codes]
        Z = (2.0 * F - gini[codes] - 1.0) * y - 2.0 * partial
        Zbar = np.add.reduceat(w * Z, starts) / W
        variance = np.add.reduceat(w**2 * (Z - Zbar[codes]) ** 2, starts) / (W * mean) ** 2
    return gini, np.where(np.isfinite(gini), np.sqrt(variance), np.nan)


def _local(x: np.ndarray, starts: np.ndarray, codes: np.ndarray) -> np.ndarray:
    total = np.cumsum(x)
    before = np.concatenate(([0.0], total[:-1]))
    return total - before[starts][codes]


def gini_analytic(sorted_units: SortedUnits, level: float = 0.95) -> tuple[np.ndarray, np.ndarray]:
    """Normal-approximation interval of each group's Gini from :func:`gini_se`.

    Parameters
    ----------
    sorted_units : SortedUnits
    level : float
        Coverage, in (0, 1).

    Returns
    -------
    (lower, upper) : ndarrays of shape (n_groups,)
        ``G -/+ z SE``, z the standard normal quantile; NaN where the Gini is undefined.

    References
    ----------
    Davidson, R. (2009). Reliable inference for the Gini index. *Journal of
    Econometrics* 150: 30-40.
    """
    if not 0.0 < level < 1.0:
        raise ValueError(f"level must be between 0 and 1 (e.g. 0.95), got {level}")
    gini, se = _gini_and_se(sorted_units)
    z = stats.norm.ppf(0.5 + level / 2.0)
    return gini - z * se, gini + z * se
