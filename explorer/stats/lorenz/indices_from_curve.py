"""Indices from a fitted curve: node averages of its slope, shares, and notes on infinities.

The relative income of the person at rank ``p`` is the slope ``L'(p)``, so every mean-based
index is a weighted average over quadrature nodes of a function of the slope.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import ArrayLike

from explorer.stats.lorenz.points import _blank, _refuse
from explorer.stats.lorenz.quadrature import _CHUNK_NODES, GAUSS_NODES, PROBIT_GRID
from explorer.stats.measures import parse_index

__all__ = ["indices_from_slope"]

_JUMP_NOTE = (
    "infinite: the most unequal curve consistent with the brackets gives part "
    "of the top bracket's income to a vanishing share of people (a jump at p = 1)"
)
_ZERO_NOTE = (
    "infinite: the curve gives zero income to part of the population "
    "(the upper curve does so in the bottom bracket; a zero income share does so anywhere)"
)
_ZERO_SHARE_NOTE = "infinite: the bottom share in the denominator is zero"


def _family(key: str) -> tuple[str, float | None]:
    try:
        family, param = parse_index(key)
    except ValueError as err:
        raise _refuse(str(err), "correct the index name", "index") from None
    # ge_0 and ge_1 are the MLD and Theil T limits, whatever the parser names them.
    if family == "ge" and param is not None and param == 0.0:
        return "mld", None
    if family == "ge" and param is not None and param == 1.0:
        return "theil_t", None
    return family, (None if param is None else float(param))


def _moment_keys(family, param) -> tuple:
    """The node averages an integral index is built from (shared between indices)."""
    if family == "theil_t":
        return ("log", "xlogy")
    if family == "mld" or (family == "atkinson" and param == 1):
        return ("log",)
    if family == "cv":
        return ("dev2",)
    if family == "ge":
        return (("pow", param),)
    if family == "atkinson" and param != 0:
        return (("pow", 1.0 - param),)
    return ()


def _power(y, a, out):
    """``y ** a`` into ``out``; the exponents numpy itself special-cases get the same op."""
    if a == 2:
        return np.multiply(y, y, out=out)
    if a == 0.5:
        return np.sqrt(y, out=out)
    if a == -1:
        return np.divide(1.0, y, out=out)
    if a == 1:
        np.copyto(out, y)
        return out
    return np.power(y, a, out=out)


def _node_moments(keys, weights, y, scratch=None, out=None) -> dict:
    """Weighted node averages of ``log y``, ``y log y``, ``(y - 1)^2`` and powers of ``y``.

    Each average is one pass over the nodes (one BLAS matrix-vector product for a shared
    grid), and ``log y`` is taken once for every index that needs it. ``scratch`` is a pair
    of arrays shaped like ``y`` to reuse (fresh ones otherwise); ``out`` maps each key to
    an array of one value per row to write into (fresh ones otherwise).
    """
    if scratch is None:
        scratch = (np.empty_like(y), np.empty_like(y))
    if out is None:
        out = {key: np.empty(y.shape[0]) for key in keys}
    log_y, tmp = scratch

    def mean(values, key):
        if weights.ndim == 1:
            np.matmul(values, weights, out=out[key])
        else:
            np.einsum("ij,ij->i", values, weights, out=out[key])

    if "log" in keys:
        np.log(y, out=log_y)
        mean(log_y, "log")
    if "xlogy" in keys:
        np.multiply(y, log_y, out=tmp)
        mean(tmp, "xlogy")
        # A node with y <= 0 or NaN makes y log y NaN, and so the row's average: only such
        # rows are summed again with those nodes counted as 0 (0 log 0 = 0).
        redo = np.isnan(out["xlogy"])
        if redo.any():
            sub = y[redo]
            part = np.where(sub > 0, sub * log_y[redo], 0.0)
            out["xlogy"][redo] = (
                part @ weights
                if weights.ndim == 1
                else (np.einsum("ij,ij->i", part, weights[redo]))
            )
    if "dev2" in keys:
        # (y - 1)^2 rather than y^2 - 1: no cancellation when everyone is at the mean
        np.subtract(y, 1.0, out=tmp)
        np.multiply(tmp, tmp, out=tmp)
        mean(tmp, "dev2")
    for key in keys:
        if isinstance(key, tuple):
            mean(_power(y, key[1], tmp), key)
    return out


def _index_from_moments(family, param, moments, jump):
    """One mean-based index from the node averages of :func:`_node_moments`.

    ``jump`` is income held by a vanishing share of people (the upper curve's jump at
    ``p = 1``); it counts in the mean but adds nothing to integrals of ``y**a``, a < 1.
    """
    has_jump = jump > 0
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if family == "theil_t":
            return np.where(has_jump, np.inf, moments["xlogy"])
        if family == "mld":
            return -moments["log"]
        if family == "cv":
            return np.where(has_jump, np.inf, np.sqrt(moments["dev2"]))
        if family == "ge":
            alpha = param
            value = (moments[("pow", alpha)] - 1.0) / (alpha * (alpha - 1.0))
            return np.where(has_jump, np.inf, value) if alpha > 1 else value
        if family == "atkinson":
            eps = param
            if eps == 0:
                return np.zeros(jump.shape[0])
            if eps == 1:
                return 1.0 - np.exp(moments["log"])
            return 1.0 - moments[("pow", 1.0 - eps)] ** (1.0 / (1.0 - eps))
    raise ValueError(family)  # pragma: no cover - guarded by callers


def _integral_index(family, param, weights, y, jump):
    """One mean-based index from relative incomes ``y`` with population ``weights``."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        moments = _node_moments(_moment_keys(family, param), weights, y)
    return _index_from_moments(family, param, moments, jump)


_SHARE_POINTS = np.array([0.2, 0.4, 0.8, 0.9])


def _share_index(family, at):
    """Quantile-share indices from L at ``_SHARE_POINTS`` (columns 0.2, 0.4, 0.8, 0.9)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        if family == "top10_share":
            return 1.0 - at[:, 3]
        if family == "bottom40_share":
            return at[:, 1].copy()
        if family == "palma":
            return (1.0 - at[:, 3]) / at[:, 1]
        return (1.0 - at[:, 2]) / at[:, 0]


def _note_for(family, param, value, jump):
    """Why a finite-looking index came out infinite, per row."""
    notes = _blank(value.shape)
    infinite = ~np.isfinite(value) & ~np.isnan(value)
    if not infinite.any():
        return notes
    if family in ("palma", "s80_s20"):
        notes[infinite] = _ZERO_SHARE_NOTE
        return notes
    jump_driven = family in ("theil_t", "cv") or (family == "ge" and param > 1)
    if jump_driven:
        notes[infinite & (jump > 0)] = _JUMP_NOTE
        notes[infinite & ~(jump > 0)] = _ZERO_NOTE
    else:
        notes[infinite] = _ZERO_NOTE
    return notes


_INTEGRAL_FAMILIES = ("theil_t", "mld", "cv", "ge", "atkinson")
_SHARE_FAMILIES = ("top10_share", "bottom40_share", "palma", "s80_s20")


def _bottom_sensitive(family, param) -> bool:
    """Indices that are infinite (or 1) once any income is zero."""
    return (
        family == "mld"
        or (family == "ge" and param is not None and param <= 0)
        or (family == "atkinson" and param is not None and param >= 1)
    )


def _grid_moments(batch, curve, needed) -> dict[str, np.ndarray]:
    """Node averages for every row, in row chunks sized to stay in cache.

    Parametric curves write their grid slopes into arrays reused from chunk to chunk.
    """
    moments = {key: np.empty(batch.n) for key in needed}
    k = batch.P.shape[1] - 1
    width = {"linear": k, "upper": 2 * k, "pchip": k * GAUSS_NODES}.get(
        batch.method, PROBIT_GRID.p.size
    )
    step = max(1, _CHUNK_NODES // width)
    on_grid = hasattr(curve.cls, "grid_incomes")
    if on_grid:
        buffers = np.empty((3, min(step, batch.n), width))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for start in range(0, batch.n, step):
            rows = slice(start, min(start + step, batch.n))
            part = batch.take(rows)
            chunk = {key: value[rows] for key, value in moments.items()}
            if on_grid:
                y, t, u = buffers[:, : part.n]
                curve.grid_incomes(part, y, t, u)
                _node_moments(needed, PROBIT_GRID.weights, y, (t, u), chunk)
            else:
                weights, y = curve.relative_incomes(part)
                _node_moments(needed, weights, y, None, chunk)
    return moments


def indices_from_slope(
    y: ArrayLike, weights: ArrayLike, keys: Sequence[str], jump: ArrayLike | None = None
) -> dict[str, np.ndarray]:
    """Mean-based indices from relative incomes on a quadrature grid.

    Parameters
    ----------
    y : ndarray, shape (n, m)
        Relative income (income over the mean, i.e. L'(p)) at the nodes.
    weights : ndarray, shape (m,) or (n, m)
        Population weight of each node (summing to 1).
    keys : sequence of str
        Index keys of integral type: ``theil_t, mld, ge_<alpha>, atkinson_<eps>, cv``.
    jump : ndarray, shape (n,), optional
        Income share held by a vanishing share of people.

    Returns
    -------
    dict of str to ndarray, shape (n,)

    References
    ----------
    Shorrocks, A. F. (1980). The class of additively decomposable inequality measures.
    *Econometrica* 48: 613-625.
    Atkinson, A. B. (1970). On the measurement of inequality. *Journal of Economic
    Theory* 2: 244-263.
    """
    y = np.asarray(y, dtype=float)
    jump = np.zeros(y.shape[0]) if jump is None else np.asarray(jump, dtype=float)
    out = {}
    for key in keys:
        family, param = _family(key)
        out[key] = _integral_index(family, param, np.asarray(weights, float), y, jump)
    return out
