"""The two piecewise-linear curves: straight lines through the points and the upper bound.

References
----------
Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index. *Review of
Economics and Statistics* 54: 306–316.
"""

from __future__ import annotations

import numpy as np

from explorer.stats.lorenz.points import _blank, _gather, _row_search

__all__: list[str] = []


def _bracket_slopes(P, L):
    dp = np.diff(P, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        return dp, np.diff(L, axis=1) / dp


def _upper_pieces(P, L):
    """Knots, piece lengths/slopes and jump of the lower envelope of convex curves.

    In bracket i every convex curve through the points lies above the extensions of the
    neighbouring chords, so the envelope follows bracket i-1's chord extended up to where it
    meets bracket i+1's chord extended (Gastwirth 1972). Slopes s_0 = 0 (the floor) and
    s_{k+1} = inf (the vertical jump at p = 1) make the first and last brackets the same
    rule. The envelope is convex inside each bracket but not across knots; its slopes,
    rearranged in increasing order, are the quantile function of a distribution whose curve
    lies below every curve consistent with the points, which is why mean-based indices
    computed from them (rearrangement does not change an integral of f(L')) are upper bounds.
    """
    # worked point by point (transposed), so each step runs along all rows at once; the
    # results are handed back as transposed views of shape (n, ...)
    pt, lt = np.ascontiguousarray(P.T), np.ascontiguousarray(L.T)
    dp = pt[1:] - pt[:-1]
    with np.errstate(divide="ignore", invalid="ignore"):
        s = (lt[1:] - lt[:-1]) / dp
    k, n = s.shape
    left = np.concatenate([np.zeros((1, n)), s[:-1]])  # s_{i-1}
    right = np.concatenate([s[1:], np.full((1, n), np.inf)])  # s_{i+1}
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = (right - s) / (right - left)
    frac = np.where(np.isinf(right), 1.0, frac)
    frac = np.where(np.isfinite(frac), np.clip(frac, 0.0, 1.0), 1.0)
    x = dp * frac  # population on the left chord's slope
    knots_p = np.empty((2 * k + 1, n))
    knots_l = np.empty((2 * k + 1, n))
    knots_p[0::2], knots_l[0::2] = pt, lt
    knots_p[1::2], knots_l[1::2] = pt[:-1] + x, lt[:-1] + left * x
    top = lt[-2] + left[-1] * dp[-1]  # L(1-) on the extended chord
    knots_l[-1] = top
    knots_p[-2] = 1.0
    lengths = np.empty((2 * k, n))
    slopes = np.empty((2 * k, n))
    # pieces of zero length get a harmless slope so 0 * log(0) or 0 * inf never appears
    lengths[0::2], slopes[0::2] = x, np.where(x > 0, left, 1.0)
    lengths[1::2] = dp - x
    slopes[1::2] = np.where(lengths[1::2] > 0, right, 1.0)
    return knots_p.T, knots_l.T, lengths.T, slopes.T, 1.0 - top


class _Piecewise:
    """Shared code for curves made of straight pieces between knots."""

    @staticmethod
    def knots(batch):
        if batch.method == "linear":
            return batch.P, batch.L
        return batch.extra["knots_p"], batch.extra["knots_l"]

    @classmethod
    def _piece_ends(cls, batch, p):
        """Knots on either side of every point: x0, x1, y0, y1."""
        xs, ys = cls.knots(batch)
        j = _row_search(xs, p)
        return _gather(xs, j), _gather(xs, j + 1), _gather(ys, j), _gather(ys, j + 1)

    @classmethod
    def evaluate(cls, batch, p):
        x0, x1, y0, y1 = cls._piece_ends(batch, p)
        width = x1 - x0
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.where(width > 0, (p - x0) / width, 1.0)
        out = y0 + np.clip(t, 0.0, 1.0) * (y1 - y0)
        return np.where(p >= 1.0, 1.0, np.where(p <= 0.0, 0.0, out))

    @classmethod
    def slope(cls, batch, p):
        x0, x1, y0, y1 = cls._piece_ends(batch, p)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(x1 > x0, (y1 - y0) / (x1 - x0), np.inf)

    @classmethod
    def gini(cls, batch):
        return _piecewise_gini(*cls.knots(batch))

    @staticmethod
    def relative_incomes(batch):
        if batch.method == "linear":
            dp, s = _bracket_slopes(batch.P, batch.L)
            return dp, s
        return batch.extra["lengths"], batch.extra["slopes"]

    @staticmethod
    def jump(batch):
        if batch.method == "linear":
            return np.zeros(batch.n)
        return batch.extra["jump"]


def _fit_linear(P, L):
    n = P.shape[0]
    return np.empty((n, 0)), np.ones(n, bool), _blank(n), {}


def _fit_upper(P, L):
    knots_p, knots_l, lengths, slopes, jump = _upper_pieces(P, L)
    n = P.shape[0]
    extra = dict(knots_p=knots_p, knots_l=knots_l, lengths=lengths, slopes=slopes, jump=jump)
    return np.empty((n, 0)), np.ones(n, bool), _blank(n), extra


def _piecewise_gini(xs, ys):
    """1 - 2 * area under the straight pieces through the knots ``(xs, ys)`` of every row."""
    return 1.0 - np.sum(np.diff(xs, axis=1) * (ys[:, 1:] + ys[:, :-1]), axis=1)
