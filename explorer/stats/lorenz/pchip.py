"""The monotone cubic through the points (Fritsch & Carlson 1980).

References
----------
Fritsch, F. N. and Carlson, R. E. (1980). Monotone piecewise cubic interpolation. *SIAM
Journal on Numerical Analysis* 17: 238–246.
"""

from __future__ import annotations

import numpy as np

from explorer.stats.lorenz.points import _CONVEX_TOL, _blank, _gather, _row_search
from explorer.stats.lorenz.quadrature import _PIECE_T, _PIECE_W

__all__ = ["pchip_slopes"]


def pchip_slopes(P: np.ndarray, L: np.ndarray) -> np.ndarray:
    """Fritsch–Carlson knot derivatives for every row at once.

    The same rule as ``scipy.interpolate.PchipInterpolator``: a weighted harmonic mean of
    neighbouring chord slopes inside (zero where they differ in sign or vanish) and a
    shape-preserving three-point estimate at the ends.

    Parameters
    ----------
    P, L : ndarray, shape (n, k + 1)
        Knots of every row, ``P`` strictly increasing along axis 1.

    Returns
    -------
    ndarray, shape (n, k + 1)

    References
    ----------
    Fritsch, F. N. and Carlson, R. E. (1980). Monotone piecewise cubic interpolation.
    *SIAM Journal on Numerical Analysis* 17: 238–246.
    Moler, C. (2004). *Numerical Computing with MATLAB*, ch. 3.6. SIAM.
    """
    h = np.diff(P, axis=1)
    m = np.diff(L, axis=1) / h
    d = np.empty_like(P)
    if m.shape[1] == 1:
        d[:] = m
        return d
    sign = np.sign(m)
    zero = (sign[:, 1:] != sign[:, :-1]) | (m[:, 1:] == 0) | (m[:, :-1] == 0)
    w1 = 2 * h[:, 1:] + h[:, :-1]
    w2 = h[:, 1:] + 2 * h[:, :-1]
    with np.errstate(divide="ignore", invalid="ignore"):
        whmean = (w1 / m[:, :-1] + w2 / m[:, 1:]) / (w1 + w2)
        d[:, 1:-1] = np.where(zero, 0.0, 1.0 / whmean)

    def edge(h0, h1, m0, m1):
        est = ((2 * h0 + h1) * m0 - h0 * m1) / (h0 + h1)
        flip = np.sign(est) != np.sign(m0)
        big = (np.sign(m0) != np.sign(m1)) & (np.abs(est) > 3 * np.abs(m0))
        return np.where(flip, 0.0, np.where(big, 3 * m0, est))

    d[:, 0] = edge(h[:, 0], h[:, 1], m[:, 0], m[:, 1])
    d[:, -1] = edge(h[:, -1], h[:, -2], m[:, -1], m[:, -2])
    return d


def _fit_pchip(P, L):
    d = pchip_slopes(P, L)
    h = np.diff(P, axis=1)
    delta = np.diff(L, axis=1) / h
    # L'' is linear on each piece, so convexity holds iff it is >= 0 at both piece ends.
    left = (6 * delta - 4 * d[:, :-1] - 2 * d[:, 1:]) / h
    right = (4 * d[:, 1:] + 2 * d[:, :-1] - 6 * delta) / h
    scale = np.maximum(np.abs(d).max(axis=1, keepdims=True), 1.0)
    bad_convex = ((left < -_CONVEX_TOL * scale) | (right < -_CONVEX_TOL * scale)).any(axis=1)
    bad_mono = (d < 0).any(axis=1)
    reason = _blank(P.shape[0])
    reason[bad_convex] = "the monotone cubic through the points is not convex"
    reason[bad_mono] = "the monotone cubic through the points decreases"
    return d, ~(bad_convex | bad_mono), reason, {}


class _Pchip:
    @staticmethod
    def _piece(batch, p):
        j = _row_search(batch.P, p)
        x0 = _gather(batch.P, j)
        h = _gather(batch.P, j + 1) - x0
        y0, y1 = _gather(batch.L, j), _gather(batch.L, j + 1)
        d0, d1 = _gather(batch.params, j), _gather(batch.params, j + 1)
        return np.clip((p - x0) / h, 0.0, 1.0), h, y0, y1, d0, d1

    @classmethod
    def evaluate(cls, batch, p):
        t, h, y0, y1, d0, d1 = cls._piece(batch, p)
        t2, t3 = t * t, t * t * t
        return (
            (2 * t3 - 3 * t2 + 1) * y0
            + (t3 - 2 * t2 + t) * h * d0
            + (-2 * t3 + 3 * t2) * y1
            + (t3 - t2) * h * d1
        )

    @classmethod
    def slope(cls, batch, p):
        t, h, y0, y1, d0, d1 = cls._piece(batch, p)
        t2 = t * t
        return (6 * t2 - 6 * t) * (y0 - y1) / h + (3 * t2 - 4 * t + 1) * d0 + (3 * t2 - 2 * t) * d1

    @staticmethod
    def gini(batch):
        h = np.diff(batch.P, axis=1)
        d = batch.params
        area = h * (batch.L[:, 1:] + batch.L[:, :-1]) / 2 + h * h * (d[:, :-1] - d[:, 1:]) / 12
        return 1.0 - 2.0 * area.sum(axis=1)

    @staticmethod
    def relative_incomes(batch):
        # nodes sit inside known brackets: the Hermite slope needs no search
        h = np.diff(batch.P, axis=1)[:, :, None]
        weights = (h * _PIECE_W).reshape(batch.n, -1)
        t = _PIECE_T
        chord = (np.diff(batch.L, axis=1)[:, :, None]) / h
        d0, d1 = batch.params[:, :-1, None], batch.params[:, 1:, None]
        slope = (
            (6 * t * t - 6 * t) * -chord + (3 * t * t - 4 * t + 1) * d0 + (3 * t * t - 2 * t) * d1
        )
        return weights, slope.reshape(batch.n, -1)

    @staticmethod
    def jump(batch):
        return np.zeros(batch.n)
