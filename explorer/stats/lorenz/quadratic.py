"""The one-parameter quadratic Lorenz curve L = (1 - a) p + a p^2, with closed-form integrals."""

from __future__ import annotations

import numpy as np

from explorer.stats.lorenz.parametric import _Parametric
from explorer.stats.lorenz.points import _blank
from explorer.stats.lorenz.quadrature import _GRID_P

__all__: list[str] = []

_QUAD_CLOSED_UP_TO = 1.0 - 1e-6
"""Quadratic curves with 0 <= a <= this get their integrals in closed form. Nearer a = 1 the
lowest income 1 - a nears 0 and the indices of negative powers grow like log(1 / (1 - a));
there the probit grid is kept, as it is for every other curve."""
_QUAD_SERIES_BELOW = 0.5  # below this a, power series in a^2 (no cancellation at small a)
_QUAD_SERIES_TERMS = 40  # a^2 <= 0.25: the terms fall below 1e-24 of the first
_QUAD_POWER_RANGE = 8.0  # |alpha| up to this: the binomial series converges in 40 terms


def _quadratic_moments(keys, a) -> dict | None:
    """Node averages of :func:`_node_moments` in closed form for L = (1 - a) p + a p^2.

    The slope 1 - a + 2 a p of a uniform rank p is uniform on [1 - a, 1 + a], so with
    y = 1 + x, x uniform on (-a, a), the averages are elementary: E[(y - 1)^2] = a^2 / 3,
    E[y^alpha] = ((1 + a)^(alpha + 1) - (1 - a)^(alpha + 1)) / (2 a (alpha + 1))
    (atanh(a) / a for alpha = -1), E[log y] = ((1 + a) log(1 + a) - (1 - a) log(1 - a)) /
    (2 a) - 1 and E[y log y] = [y^2 log(y) / 2 - y^2 / 4] between 1 - a and 1 + a over 2a.
    Below a = 1/2 the Taylor series of log(1 + x), (1 + x) log(1 + x) and (1 + x)^alpha
    averaged term by term are used instead, free of cancellation (common practice).
    Returns None when a power is outside the range where the series is used.
    """
    powers = [key[1] for key in keys if isinstance(key, tuple)]
    if any(abs(alpha) > _QUAD_POWER_RANGE for alpha in powers):
        return None
    small = a < _QUAD_SERIES_BELOW
    s, b = a[small], a[~small]
    a2 = s * s
    out = {}
    with np.errstate(divide="ignore", invalid="ignore"):
        if "log" in keys or "xlogy" in keys:
            log_sum, xlog_sum, power = np.zeros_like(s), np.zeros_like(s), np.ones_like(s)
            for k in range(1, _QUAD_SERIES_TERMS + 1):
                power = power * a2
                log_sum -= power / (2 * k * (2 * k + 1))
                xlog_sum += power / ((2 * k - 1) * 2 * k * (2 * k + 1))
            up, down = np.log1p(b), np.log1p(-b)
            if "log" in keys:
                out["log"] = _merge(small, log_sum, ((1 + b) * up - (1 - b) * down) / (2 * b) - 1)
            if "xlogy" in keys:
                top, bottom = (1 + b) ** 2, (1 - b) ** 2
                far = (top * (up / 2 - 0.25) - bottom * (down / 2 - 0.25)) / (2 * b)
                out["xlogy"] = _merge(small, xlog_sum, far)
        if "dev2" in keys:
            out["dev2"] = a * a / 3
        for alpha in powers:
            total, coef, power = np.zeros_like(s), 1.0, np.ones_like(s)
            for k in range(1, _QUAD_SERIES_TERMS + 1):
                coef *= (alpha - (2 * k - 2)) * (alpha - (2 * k - 1)) / ((2 * k - 1) * (2 * k))
                power = power * a2
                total += coef * power / (2 * k + 1)
            if alpha == -1:
                far = np.arctanh(b) / b
            else:
                far = ((1 + b) ** (alpha + 1) - (1 - b) ** (alpha + 1)) / (2 * b * (alpha + 1))
            out[("pow", alpha)] = _merge(small, 1.0 + total, far)
    return out


def _merge(small, near, far):
    out = np.empty(small.shape)
    out[small], out[~small] = near, far
    return out


def _fit_quadratic(P, L):
    """L(p) = (1 - a) p + a p^2: closed-form least squares for a."""
    basis = P * P - P
    a = np.sum((L - P) * basis, axis=1) / np.sum(basis * basis, axis=1)
    reason = _blank(P.shape[0])
    reason[a < 0] = "a < 0: the curve lies above the equality line"
    reason[a > 1] = "a > 1: the curve decreases near p = 0"
    return a[:, None], (a >= 0) & (a <= 1), reason, {}


class _Quadratic(_Parametric):
    @staticmethod
    def evaluate(batch, p):
        a = batch.params[:, :1]
        return (1 - a) * p + a * p * p

    @staticmethod
    def grid_slope(batch, p, q):
        a = batch.params[:, :1]
        return 1 - a + 2 * a * p

    @staticmethod
    def grid_incomes(batch, y, t, u):
        """grid_slope on the probit grid, in place."""
        a = batch.params[:, :1]
        np.multiply(2 * a, _GRID_P, out=y)
        y += 1 - a

    @staticmethod
    def gini(batch):
        return batch.params[:, 0] / 3
