"""Dominance verdicts for a pair of Lorenz (or generalised Lorenz) curves, in plain words.

A curve above another everywhere means every inequality index that respects the Lorenz
ordering (every index that falls when income moves from richer to poorer) calls the first
distribution less unequal (Atkinson 1970). For generalised Lorenz curves ``mu L(p)``,
dominance means every increasing, inequality-averse social welfare function prefers the
first (Shorrocks 1983). Curves that cross leave the verdict to the index: indices that
weigh the top and the bottom differently disagree.

Grouped data fix each curve only at its published points. Every convex curve through the
points lies between the chord interpolation (``linear``, the highest) and the ``upper``
curve (the lowest; Gastwirth 1972). So "A above B even at the bounds" means A's lowest
possible curve lies above B's highest possible curve between the first and the last
interior published points: no distributions consistent with the two sets of shares can
reverse the order there. Inside the bottom and the top bracket the shares allow almost any
shape (the lowest curve gives part of the bottom bracket no income at all), so no verdict
can be certain there, and none is claimed.

References
----------
Atkinson, A. B. (1970). On the measurement of inequality. *Journal of Economic Theory* 2:
244–263.
Shorrocks, A. F. (1983). Ranking income distributions. *Economica* 50: 3–17.
Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index. *Review of
Economics and Statistics* 54: 306–316.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats import intervals, lorenz

__all__ = ["DECILES", "KINDS", "Verdict", "compare", "decile_differences"]

KINDS = ("above", "below", "cross", "undecided")
_TOL = 1e-9
_FINE = np.linspace(0.0, 1.0, 2001)
_ORDINALS = {1: "st", 2: "nd", 3: "rd"}


@dataclass(frozen=True)
class Verdict:
    """The verdict for one pair.

    Attributes
    ----------
    kind : {"above", "below", "cross", "undecided"}
        At the published points: the first curve above the second, below it, crossing it,
        or the two indistinguishable (equal at every published point).
    robust : bool
        Whether the verdict holds for every pair of curves consistent with the published
        points (for "above"/"below": the bounds do not overlap anywhere; for "cross": each
        curve is surely above the other somewhere).
    crossings : tuple of float
        Population shares where the point curves cross (first one first).
    largest_gap : float
        Largest absolute difference between the point curves.
    sentence : str
        The verdict in plain words.
    """

    kind: str
    robust: bool
    crossings: tuple[float, ...]
    largest_gap: float
    sentence: str


def _points(curve, name):
    P, L = (np.asarray(x, dtype=float) for x in curve)
    if P.ndim != 1 or P.shape != L.shape or P.size < 2:
        raise fail(
            f"the curve of {name} needs matching 1-D population and income shares",
            "pass (P, L) with P from 0 to 1 and L the cumulative income shares",
        )
    return P, L


def _envelopes(P, L, grid):
    """Highest (chord) and lowest (upper curve) consistent Lorenz curves on ``grid``."""
    high = np.interp(grid, P, L)
    low = lorenz.fit_points(P[None, :], L[None, :], "upper").evaluate(grid)[0]
    return np.minimum(low, high), high


def _decile(p: float) -> str:
    k = int(np.clip(np.rint(10 * p), 1, 9))
    return f"{k}{_ORDINALS.get(k, 'th')} decile"


def _crossings(grid, diff) -> tuple[float, ...]:
    sign = np.sign(np.where(np.abs(diff) <= _TOL, 0.0, diff))
    nonzero = np.flatnonzero(sign)
    out = []
    for a, b in zip(nonzero[:-1], nonzero[1:], strict=True):  # few sign changes
        if sign[a] != sign[b]:
            t = diff[a] / (diff[a] - diff[b])
            out.append(float(grid[a] + t * (grid[b] - grid[a])))
    return tuple(out)


def _sentence(kind, robust, names, crossings, generalised):
    a, b = names
    what = "generalised Lorenz curve" if generalised else "Lorenz curve"
    meaning = (
        "every increasing, inequality-averse welfare measure ranks {x} higher"
        if generalised
        else "every inequality index consistent with the Lorenz ordering says {x} is less unequal"
    )
    if kind in ("above", "below"):
        top, bottom = (a, b) if kind == "above" else (b, a)
        text = f"{top}'s {what} lies above {bottom}'s at every published point"
        if robust:
            return f"{text}, even at the bounds: {meaning.format(x=top)}"
        return (
            f"{text}, but not at the bounds: other distributions with the same shares could "
            "reverse the order somewhere, so treat the ranking as likely, not certain"
        )
    if kind == "cross":
        text = f"the curves cross near the {_decile(crossings[0])}"
        if len(crossings) > 1:
            text += f" (and {len(crossings) - 1} more time{'s' if len(crossings) > 2 else ''})"
        tail = (
            "indices that weigh the top and the bottom differently will disagree"
            if not generalised
            else "welfare measures that weigh the poor and the rich differently will disagree"
        )
        if not robust:
            tail += "; the bounds also allow curves that do not cross"
        return f"{text}: {tail}"
    return "the published shares cannot tell them apart"


def compare(a, b, names=("A", "B"), means=None) -> Verdict:
    """The dominance verdict for two curves given by their published points.

    Parameters
    ----------
    a, b : tuple of array_like
        ``(P, L)``: cumulative population and income shares from (0, 0) to (1, 1); the two
        may have different points.
    names : tuple of str
        How the sentence names the two.
    means : tuple of float, optional
        Mean incomes: compare the generalised Lorenz curves ``mu L(p)`` instead.

    Returns
    -------
    Verdict

    References
    ----------
    Atkinson (1970); Shorrocks (1983); Gastwirth (1972) (module docstring).
    """
    (pa, la), (pb, lb) = _points(a, names[0]), _points(b, names[1])
    scale_a, scale_b = (1.0, 1.0) if means is None else (float(means[0]), float(means[1]))
    points = np.union1d(pa, pb)
    diff = scale_a * np.interp(points, pa, la) - scale_b * np.interp(points, pb, lb)
    inner = diff[1:-1] if means is None else diff[1:]  # L(0) = 0, L(1) = 1 always
    crossings = _crossings(points, diff)
    largest = float(np.max(np.abs(diff)))
    low_a, high_a = _envelopes(pa, la, _FINE)
    low_b, high_b = _envelopes(pb, lb, _FINE)
    low_a, high_a, low_b, high_b = (
        scale_a * low_a,
        scale_a * high_a,
        scale_b * low_b,
        scale_b * high_b,
    )
    span = (_FINE >= max(pa[1], pb[1])) & (_FINE <= min(pa[-2], pb[-2]))
    a_surely_above = (low_a - high_b)[span]
    b_surely_above = (low_b - high_a)[span]
    if inner.size == 0 or np.all(np.abs(inner) <= _TOL):
        kind, robust = "undecided", False
    elif np.all(inner >= -_TOL):
        kind, robust = "above", bool(np.all(a_surely_above >= -_TOL))
    elif np.all(inner <= _TOL):
        kind, robust = "below", bool(np.all(b_surely_above >= -_TOL))
    else:
        kind = "cross"
        robust = bool(np.any(a_surely_above > _TOL) and np.any(b_surely_above > _TOL))
    sentence = _sentence(kind, robust, names, crossings, means is not None)
    return Verdict(kind, robust, crossings, largest, sentence)


# ---------------------------------------------------------------------------- unit data

DECILES = np.arange(1, 10) / 10.0


def _ordinates(units, weights, p):
    """Lorenz ordinates of every group at shares ``p`` for weightings ``weights`` (R, n).

    Within a unit the curve is linear (the unit's weight spread evenly), so the ordinate at
    ``p`` is interpolated between the cumulative shares before and after the unit that
    holds it.
    """
    codes, starts = units.codes, units.starts
    w = np.atleast_2d(weights)
    income = w * units.values
    out = np.empty((w.shape[0], units.n_groups, p.size))
    for r in range(w.shape[0]):  # replicates: each row is one vectorised pass over all groups
        cw, ci = np.cumsum(w[r]), np.cumsum(income[r])
        base_w = np.concatenate([[0.0], cw])[starts]
        base_i = np.concatenate([[0.0], ci])[starts]
        ends = np.append(starts[1:], len(cw)) - 1
        tw, ti = cw[ends] - base_w, ci[ends] - base_i
        share_w = (cw - base_w[codes]) / tw[codes]
        share_i = (ci - base_i[codes]) / ti[codes]
        # one sorted key across groups: group code + share (shares are in [0, 1])
        key = codes + share_w * (1 - 1e-12)
        query = np.arange(units.n_groups)[:, None] + p[None, :] * (1 - 1e-12)
        j = np.clip(np.searchsorted(key, query.ravel(), side="left"), 0, len(key) - 1)
        j = j.reshape(query.shape)
        first = j == starts[:, None]
        prev_w = np.where(first, 0.0, share_w[np.maximum(j - 1, 0)])
        prev_i = np.where(first, 0.0, share_i[np.maximum(j - 1, 0)])
        step = share_w[j] - prev_w
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.where(step > 0, (p[None, :] - prev_w) / step, 1.0)
        out[r] = prev_i + np.clip(t, 0, 1) * (share_i[j] - prev_i)
    return out


def decile_differences(units, first: int, second: int, reps=199, seed=0, level=0.95):
    """Differences of two groups' Lorenz ordinates at each decile, with bootstrap intervals.

    Parameters
    ----------
    units : SortedUnits
        Unit records grouped by district (or district-year).
    first, second : int
        The group codes of the two districts compared.
    reps, seed, level
        Bootstrap settings: the multinomial scheme and seeds of
        :mod:`explorer.stats.intervals`, each district resampled within itself.

    Returns
    -------
    DataFrame
        ``p, difference, lower, upper, exceeds``: ``L_first(p) - L_second(p)`` at the
        deciles, its percentile interval, and whether the interval excludes 0.
    """

    point = _ordinates(units, units.weights, DECILES)[0]
    resampler = intervals.Resampler(units, "multinomial", np.random.default_rng(seed))
    chunk = intervals.default_chunk(len(units.values), reps)
    diffs = np.empty((DECILES.size, reps))
    for start in range(0, reps, chunk):
        size = min(chunk, reps - start)
        got = _ordinates(units, units.weights * resampler.draw(size), DECILES)
        diffs[:, start : start + size] = (got[:, first] - got[:, second]).T
    tail = (1 - level) / 2
    lower, upper = intervals.percentiles(diffs, (tail, 1 - tail), 0.9)
    return pd.DataFrame(
        {
            "p": DECILES,
            "difference": point[first] - point[second],
            "lower": lower,
            "upper": upper,
            "exceeds": (lower > 0) | (upper < 0),
        }
    )
