"""The Beta Lorenz curve (Kakwani 1980), with its heavy top tail added in closed form.

References
----------
Kakwani, N. (1980). On a class of poverty measures. *Econometrica* 48: 437–446.
Datt, G. (1998). Computational tools for poverty measurement and analysis. FCND Discussion
Paper 50, IFPRI.
"""

from __future__ import annotations

import numpy as np
from scipy import special

from explorer.stats.lorenz.parametric import _lstsq_rows, _Parametric
from explorer.stats.lorenz.points import _blank
from explorer.stats.lorenz.quadrature import _CHUNK_NODES, _GRID_LOGS, _GRID_P, PROBIT_GRID

__all__ = ["BETA_SLOPE_FROM"]

BETA_SLOPE_FROM = 1e-3
"""The Beta curve's slope and curvature are checked on [this, 1 - this] (from memory of
Datt 1998's practice): with gamma < 1 the slope tends to minus infinity at p = 0, and with
gamma or delta a hair above 1 the curvature flips sign in a vanishing end zone, so no fit
would pass a check at the very ends."""
_BOTTOM_NOTE = (
    "withheld: the fitted Beta curve's slope is negative very near p = 0 (below p = "
    f"{BETA_SLOPE_FROM}), and this index depends on the lowest incomes; use another method"
)

_HEAVY_NOTE = (
    "infinite: the fitted Beta curve's top tail is too heavy for this index "
    "(its relative income grows like (1 - p)^(delta - 1) near p = 1)"
)


def _beta_top_tail(params, family, param, value):
    """Add the Beta curve's top tail beyond the probit grid (q < q0 = Phi(-9)).

    Near p = 1 the slope is y ~ A q^(-b) with A = theta delta and b = 1 - delta, so
    the tail of the integral of y^alpha is A^alpha q0^(1 - alpha b) / (1 - alpha b), and it
    diverges when alpha b >= 1: a heavy Beta top tail has no finite GE(alpha) or CV.
    Only the moments of order > 1 are affected beyond rounding.
    """
    theta, delta = params[:, 0], params[:, 2]
    if family == "cv":
        order, scale = 2.0, None
    elif family == "ge" and param is not None and param > 1:
        order, scale = param, 1.0 / (param * (param - 1.0))
    else:
        return value
    amp, b, q0 = theta * delta, 1.0 - delta, PROBIT_GRID.p[0]  # = 1 - p at the top node
    expo = 1.0 - order * b
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        tail = np.where(expo > 0, amp**order * q0**expo / expo, np.inf)
    tail = np.where(b > 0, tail, 0.0)  # delta >= 1: the slope stays bounded at p = 1
    if family == "cv":
        return np.sqrt(value * value + tail)
    return value + scale * tail


def _fit_beta(P, L):
    """Beta Lorenz curve (Kakwani 1980) by log-linear least squares."""
    p, l_ = P[:, 1:-1], L[:, 1:-1]
    n_rows = P.shape[0]
    reason = _blank(n_rows)
    gap = p - l_
    above = (gap <= 0).any(axis=1)
    if p.shape[1] < 3:
        reason[:] = "needs at least 4 brackets (3 interior points) for 3 parameters"
        return np.full((n_rows, 3), np.nan), np.zeros(n_rows, bool), reason, {}
    pt = np.ascontiguousarray(p.T)  # point by point
    if (pt == pt[:, :1]).all():  # the same brackets in every row: one design matrix
        pt = pt[:, :1]
    with np.errstate(divide="ignore", invalid="ignore"):
        target = np.log(np.where(above, 1.0, gap.T))
    coef, ok = _lstsq_rows([np.ones_like(pt), np.log(pt), np.log1p(-pt)], target)
    params = np.column_stack([np.exp(coef[:, 0]), coef[:, 1], coef[:, 2]])
    theta, g, d = params.T
    lo, hi = BETA_SLOPE_FROM, 1.0 - BETA_SLOPE_FROM
    # L'' has the sign of Q(p) = g(1-g)(1-p)^2 + 2gd p(1-p) + d(1-d)p^2, a quadratic in p:
    # its minimum on [lo, hi] is at an end or at the vertex, so the check is exact.
    qa = g * (1 - g) - 2 * g * d + d * (1 - d)
    qb = 2 * g * d - 2 * g * (1 - g)
    qc = g * (1 - g)

    def quad_at(x):
        return (qa * x + qb) * x + qc

    with np.errstate(divide="ignore", invalid="ignore"):
        vertex = np.where(qa > 0, -qb / (2 * qa), lo)
    vertex = np.clip(np.nan_to_num(vertex, nan=lo), lo, hi)
    lowest = np.minimum(np.minimum(quad_at(lo), quad_at(hi)), quad_at(vertex))
    bad_convex = ~(lowest >= -1e-12 * np.maximum(np.abs(qc) + np.abs(qa), 1e-300))
    # convex on [lo, hi], so the slope is non-decreasing there: checking it at lo suffices
    with np.errstate(invalid="ignore", over="ignore"):
        slope_lo = _beta_slope(params, np.array([[lo]]), np.array([[hi]]))[:, 0]
        bad_mono = ~(slope_lo >= 0)
        negative_bottom = _beta_negative_bottom(params)
    span = f"[{BETA_SLOPE_FROM}, {1 - BETA_SLOPE_FROM}]"
    checks = [
        (bad_convex, f"not convex: L'' < 0 somewhere in {span}"),
        (bad_mono, f"decreasing: L' < 0 somewhere in {span}"),
        (~ok, "least squares is rank deficient (collinear points)"),
        (above, "a point lies on or above the equality line, so ln(p - L) is undefined"),
    ]
    for bad, text in checks:
        reason[bad] = text
    valid = np.array([r == "" for r in reason], dtype=bool)
    return params, valid, reason, {"negative_bottom": negative_bottom}


_BELOW = PROBIT_GRID.p[PROBIT_GRID.p < BETA_SLOPE_FROM][None, :]
_BELOW_LOGS = (np.log(_BELOW), np.log(1.0 - _BELOW), 1.0 / _BELOW, 1.0 / (1.0 - _BELOW))


def _beta_negative_bottom(params):
    """Whether the Beta slope is negative at a grid node below BETA_SLOPE_FROM, per row.

    The operations of :meth:`_Beta.grid_slope` at those nodes, in row chunks that stay in
    cache.
    """
    log_p, log_q, inv_p, inv_q = _BELOW_LOGS
    out = np.empty(params.shape[0], bool)
    step = max(1, _CHUNK_NODES // _BELOW.size)
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        for start in range(0, params.shape[0], step):
            theta, g, d = (params[start : start + step, i, None] for i in range(3))
            core = theta * np.exp(g * log_p + d * log_q)
            slope = 1.0 - core * (g * inv_p - d * inv_q)
            out[start : start + step] = (slope < 0).any(axis=1)
    return out


class _Beta(_Parametric):
    @classmethod
    def relative_incomes(cls, batch):
        # Below BETA_SLOPE_FROM the fitted slope may dip below 0; bottom-sensitive indices
        # are withheld for such rows (see _Batch.index) and the rest see a floor of 0.
        weights, y = super().relative_incomes(batch)
        return weights, np.maximum(y, 0.0)

    @staticmethod
    def grid_incomes(batch, y, t, u):
        """relative_incomes in place (the operations of :meth:`grid_slope`, floor 0)."""
        theta, g, d = (batch.params[:, i, None] for i in range(3))
        log_p, log_q, inv_p, inv_q = _GRID_LOGS
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            np.multiply(g, log_p, out=t)
            np.multiply(d, log_q, out=u)
            t += u
            np.exp(t, out=t)
            t *= theta  # core
            np.multiply(g, inv_p, out=u)
            np.multiply(d, inv_q, out=y)
            u -= y
            t *= u
            np.subtract(1.0, t, out=y)
            np.maximum(y, 0.0, out=y)

    @staticmethod
    def evaluate(batch, p):
        theta, g, d = (batch.params[:, i, None] for i in range(3))
        with np.errstate(divide="ignore", invalid="ignore"):
            out = p - theta * np.exp(g * np.log(p) + d * np.log1p(-p))
        return np.where(p >= 1.0, 1.0, np.where(p <= 0.0, 0.0, out))

    @staticmethod
    def grid_slope(batch, p, q):
        return _beta_slope(batch.params, p, q)

    @staticmethod
    def gini(batch):
        theta, g, d = batch.params.T
        return 2 * theta * special.beta(1 + g, 1 + d)


def _beta_slope(params, p, q):
    """L'(p) = 1 - theta p^g q^d (g / p - d / q) of the Beta curve for every row."""
    theta, g, d = (params[:, i, None] for i in range(3))
    if p is _GRID_P:  # the shared grid: its logs and reciprocals are computed once
        log_p, log_q, inv_p, inv_q = _GRID_LOGS
    else:
        log_p, log_q, inv_p, inv_q = np.log(p), np.log(q), 1.0 / p, 1.0 / q
    core = theta * np.exp(g * log_p + d * log_q)
    return 1.0 - core * (g * inv_p - d * inv_q)
