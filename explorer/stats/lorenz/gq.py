"""The general quadratic Lorenz curve (Villaseñor & Arnold 1989).

References
----------
Villaseñor, J. A. and Arnold, B. C. (1989). Elliptical Lorenz curves. *Journal of
Econometrics* 40: 327–338.
Datt, G. (1998). Computational tools for poverty measurement and analysis. FCND Discussion
Paper 50, IFPRI.
"""

from __future__ import annotations

import numpy as np

from explorer.stats.lorenz.parametric import _lstsq_rows, _Parametric
from explorer.stats.lorenz.points import _blank
from explorer.stats.lorenz.quadrature import _GRID_P, _gini_by_quadrature

__all__: list[str] = []


def _gq_terms(params):
    a, b, c = params[:, 0], params[:, 1], params[:, 2]
    e = -(a + b + c + 1)
    m = b * b - 4 * a
    n = 2 * b * e - 4 * c
    return a, b, c, e, m, n


def _fit_gq(P, L):
    """General quadratic Lorenz curve (Villaseñor & Arnold 1989) by least squares."""
    p, l_ = P[:, 1:-1], L[:, 1:-1]
    n_rows = P.shape[0]
    reason = _blank(n_rows)
    if p.shape[1] < 3:
        reason[:] = "needs at least 4 brackets (3 interior points) for 3 parameters"
        return np.full((n_rows, 3), np.nan), np.zeros(n_rows, bool), reason, {}
    pt, lt = np.ascontiguousarray(p.T), np.ascontiguousarray(l_.T)  # point by point
    params, ok = _lstsq_rows([pt * pt - lt, lt * (pt - 1), pt - lt], lt * (1 - lt))
    a, b, c, e, m, n = _gq_terms(params)
    r2 = n * n - 4 * m * e * e
    inside = np.zeros(n_rows, bool)  # D(p) < 0 somewhere in (0, 1)
    pos = m > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        vertex = -n / (2 * m)
    inside[pos] = (vertex[pos] > 0) & (vertex[pos] < 1) & (r2[pos] > 0)
    tol = 1e-9  # exact GQ points (e.g. Pareto alpha = 2: a + c = 1) fit to rounding error
    checks = [
        (inside, "curve undefined inside (0, 1): m > 0 with the root of D inside"),
        (r2 < -tol, "not convex: n^2 < 4 m e^2"),
        (c < -tol, "decreasing near p = 0: c < 0"),
        (a + c < 1 - tol, "does not reach (1, 1): a + c < 1"),
        (e >= 0, "does not start at (0, 0): e >= 0"),
        (~ok, "least squares is rank deficient (collinear points)"),
    ]
    for bad, text in checks:  # later checks overwrite: the most basic failure is reported
        reason[bad] = text
    valid = np.array([r == "" for r in reason], dtype=bool)
    return params, valid, reason, {}


class _GQ(_Parametric):
    @staticmethod
    def evaluate(batch, p):
        a, b, c, e, m, n = (t[:, None] for t in _gq_terms(batch.params))
        root = np.sqrt(np.maximum(m * p * p + n * p + e * e, 0.0))
        out = -(b * p + e + root) / 2
        return np.where(p >= 1.0, 1.0, np.where(p <= 0.0, 0.0, out))

    @staticmethod
    def grid_slope(batch, p, q):
        a, b, c, e, m, n = (t[:, None] for t in _gq_terms(batch.params))
        root = np.sqrt(np.maximum(m * p * p + n * p + e * e, 0.0))
        with np.errstate(divide="ignore", invalid="ignore"):
            return -(b + (2 * m * p + n) / (2 * root)) / 2

    @staticmethod
    def grid_incomes(batch, y, t, u):
        """grid_slope on the probit grid, in place: y gets the slopes, t and u are scratch.

        The same operations in the same order as :meth:`grid_slope`, except that the
        factors of 2 are moved (exact in binary floating point).
        """
        a, b, c, e, m, n = (v[:, None] for v in _gq_terms(batch.params))
        p = _GRID_P
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            np.multiply(m, p, out=t)
            np.multiply(t, p, out=u)
            np.multiply(n, p, out=y)
            u += y
            u += e * e
            np.maximum(u, 0.0, out=u)
            np.sqrt(u, out=u)  # root
            t += n / 2  # (2 m p + n) / 2
            np.divide(t, u, out=y)  # (2 m p + n) / (2 root)
            y += b
            y *= -0.5

    @staticmethod
    def gini(batch):
        """Closed form; quadrature where m is near 0.

        Gini = 1 + b/2 + e + integral of sqrt(m p^2 + n p + e^2) over (0, 1), by the standard
        antiderivatives: an arcsine for m < 0 (the form of Datt 1998, from memory) and a log
        for m > 0, where the log term enters with a minus sign (checked against scipy quad
        in the tests).
        """
        a, b, c, e, m, n = _gq_terms(batch.params)
        with np.errstate(divide="ignore", invalid="ignore"):
            r = np.sqrt(np.maximum(n * n - 4 * m * e * e, 0.0))
            base = e / 2 - n * (b + 2) / (4 * m)
            sq = np.sqrt(np.abs(m))
            neg = base + r * r / (8 * m * sq) * (np.arcsin((2 * m + n) / r) - np.arcsin(n / r))
            pos = base - r * r / (8 * m * sq) * np.log(
                np.abs((2 * m + n + 2 * sq * (a + c - 1)) / (n - 2 * e * sq))
            )
        closed = np.where(m < 0, neg, pos)
        near_zero = (np.abs(m) < 1e-4) | ~np.isfinite(closed)
        if near_zero.any():
            sub = batch.take(np.flatnonzero(near_zero))
            closed[near_zero] = _gini_by_quadrature(sub, _GQ.evaluate)
        return closed
