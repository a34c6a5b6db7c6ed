"""Fitting a method to every row of a panel or of a batch of points, and the ``auto`` choice."""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike

from explorer.data.model import Panel
from explorer.stats.lorenz.curves import _CURVES, _Batch
from explorer.stats.lorenz.indices_from_curve import _family
from explorer.stats.lorenz.points import _blank, _prepare, _refuse, panel_points

__all__ = [
    "AUTO_ORDER",
    "AUTO_TIE",
    "METHODS",
    "CurveIndex",
    "LorenzFits",
    "fit_panel",
    "fit_panel_methods",
    "fit_points",
]

METHODS = ("linear", "upper", "pchip", "gq", "beta", "quadratic", "lognormal", "auto")
AUTO_ORDER = ("gq", "beta", "lognormal", "quadratic")
"""Parametric candidates of ``auto``, in tie-break order (earlier wins a tie)."""
AUTO_TIE = 1e-12
"""Relative difference in squared error below which two fits count as tied (plus an
absolute 1e-24 for exact fits, whose squared errors are rounding noise)."""
_SSE_FLOOR = 1e-24  # squared errors this small are rounding noise: such fits tie


def _in_order(rows: np.ndarray, n: int) -> bool:
    """Whether ``rows`` is exactly 0, 1, ..., n - 1."""
    return rows.size == n and (n == 0 or (rows[0] == 0 and bool((np.diff(rows) == 1).all())))


@dataclass(frozen=True)
class CurveIndex:
    """One index for every row: values and, where a value is missing or infinite, why."""

    value: np.ndarray
    note: np.ndarray


@dataclass(frozen=True)
class LorenzFits:
    """A Lorenz method fitted to every district-year of a panel (or of a batch of points).

    Attributes
    ----------
    keys : DataFrame
        ``region, year`` of every row (a plain row number for :func:`fit_points`).
    method : str
        The method asked for.
    used : ndarray of str
        The method actually used per row (differs from ``method`` only for ``auto``).
    params : ndarray, shape (n, q)
        Fitted parameters, NaN-padded when rows use different methods or bracket counts;
        :meth:`param_dicts` names them.
    sse, max_error : ndarray
        Squared error summed over the points and the largest absolute error at a point.
    valid : ndarray of bool
        Whether the curve is a valid Lorenz curve (from (0,0) to (1,1), non-decreasing,
        convex). Invalid rows give NaN indices with the reason in the note.
    reason : ndarray of str
        Why a row is invalid ("" when valid).
    """

    keys: pd.DataFrame
    method: str
    used: np.ndarray
    params: np.ndarray
    sse: np.ndarray
    max_error: np.ndarray
    valid: np.ndarray
    reason: np.ndarray
    _parts: tuple = field(default=(), repr=False)

    def __len__(self) -> int:
        return len(self.used)

    def _gather(self, compute, width: int) -> np.ndarray:
        out = np.full((len(self), width), np.nan)
        for rows, batch in self._parts:
            out[rows] = compute(batch)
        return out

    def evaluate(self, p: ArrayLike) -> np.ndarray:
        """L(p) for every row at the points ``p`` (1-D), shape ``(n, len(p))``.

        L(1) = 1 for every curve, so the ``upper`` curve's jump at p = 1 is included.
        """
        p = np.atleast_1d(np.asarray(p, dtype=float))
        return self._gather(lambda b: b.evaluate(p), p.size)

    def slope(self, p: ArrayLike) -> np.ndarray:
        """Relative income L'(p) (income over the mean) at ``p``, shape ``(n, len(p))``."""
        p = np.atleast_1d(np.asarray(p, dtype=float))
        return self._gather(lambda b: b.slope(p), p.size)

    def indices(self, keys: str | Sequence[str]) -> dict[str, CurveIndex]:
        """Every index in ``keys`` for every row.

        Closed forms where published (lognormal: all; GQ, Beta, quadratic: Gini), exact
        piecewise sums for ``linear`` and ``upper``, quadrature otherwise (module docstring).
        Invalid rows give NaN with the reason; unbounded values are inf with a note.
        """
        keys = [keys] if isinstance(keys, str) else list(keys)
        for key in keys:
            _family(key)  # a bad key fails before any work
        if len(self._parts) == 1 and _in_order(self._parts[0][0], len(self)):
            # one batch holding every row in order: its arrays are the result as they are
            got = self._parts[0][1].indices(keys)
            return {key: CurveIndex(value=got[key][0], note=got[key][1]) for key in keys}
        result = {}
        for key in keys:
            value = np.full(len(self), np.nan)
            note = _blank(len(self))
            result[key] = CurveIndex(value=value, note=note)
        for rows, batch in self._parts:
            for key, (value, note) in batch.indices(keys).items():
                result[key].value[rows] = value
                result[key].note[rows] = note
        return result

    def param_dicts(self) -> list[dict[str, float]]:
        """Fitted parameters of every row by name (empty for ``linear`` and ``upper``)."""
        out: list[dict[str, float]] = [{} for _ in range(len(self))]
        for rows, batch in self._parts:
            names = batch.param_names()
            for row, values in zip(rows, batch.params, strict=True):
                out[row] = {name: float(v) for name, v in zip(names, values, strict=False)}
        return out

    def params_json(self) -> list[str]:
        """:meth:`param_dicts` as JSON text, one string per row."""
        return [json.dumps(d) for d in self.param_dicts()]


_INTERPOLANTS = ("linear", "upper", "pchip")


def _fit_batch(prepared, method):
    P, L, good, point_reason = prepared
    params, valid, reason, extra = _CURVES[method].fit(P, L)
    reason = np.asarray(reason, dtype=object).copy()
    reason[~good] = point_reason[~good]
    extra = {**extra, "points_ok": good}
    batch = _Batch(method, P, L, params, valid & good, reason, extra)
    if method in _INTERPOLANTS:  # they pass through the points by construction
        zero = np.where(good, 0.0, np.nan)
        return batch, zero, zero.copy()
    err = batch.evaluate(P) - L
    return batch, np.sum(err * err, axis=1), np.max(np.abs(err), axis=1)


def _auto_batch(P, L, prepared=None):
    """The best valid parametric fit per row, else pchip, else linear.

    Returns every candidate's fit by name (they are the same as fitting that method
    alone) and the method used per row.
    """
    n = P.shape[0]
    prepared = _prepare(P, L) if prepared is None else prepared
    fits = {m: _fit_batch(prepared, m) for m in (*AUTO_ORDER, "pchip", "linear")}
    best = np.full(n, -1)
    best_sse = np.full(n, np.inf)
    for i, name in enumerate(AUTO_ORDER):
        batch, sse, _ = fits[name]
        # strictly better by more than the tie tolerance; earlier candidates win ties
        with np.errstate(invalid="ignore"):
            margin = np.where(np.isfinite(best_sse), AUTO_TIE * best_sse + _SSE_FLOOR, 0.0)
        better = batch.valid & ((best < 0) | (sse < best_sse - margin))
        best = np.where(better, i, best)
        best_sse = np.where(better, sse, best_sse)
    used = np.array([AUTO_ORDER[i] if i >= 0 else "" for i in best], dtype=object)
    fallback = best < 0
    pchip_ok = fits["pchip"][0].valid
    used[fallback & pchip_ok] = "pchip"
    used[fallback & ~pchip_ok] = "linear"
    return fits, used


def _assemble(method, batches, n, keys) -> LorenzFits:
    """Combine (rows, batch, sse, max_error, used) pieces into one LorenzFits."""
    width = max([b.params.shape[1] for _, b, *_ in batches] + [0])
    params = np.full((n, width), np.nan)
    sse, max_error = np.full(n, np.nan), np.full(n, np.nan)
    valid = np.zeros(n, bool)
    reason = _blank(n)
    used = np.empty(n, dtype=object)
    used.fill(method)
    parts = []
    for rows, batch, s, e, u in batches:
        params[rows, : batch.params.shape[1]] = batch.params
        sse[rows], max_error[rows] = s, e
        valid[rows], reason[rows], used[rows] = batch.valid, batch.reason, u
        parts.append((rows, batch))
    return LorenzFits(
        keys=keys,
        method=method,
        used=used,
        params=params,
        sse=sse,
        max_error=max_error,
        valid=valid,
        reason=reason,
        _parts=tuple(parts),
    )


def _auto_pieces(fits, used, rows):
    pieces = []
    for name in np.unique(used):
        local = np.flatnonzero(used == name)
        batch, sse, err = fits[name]
        pieces.append((rows[local], batch.take(local), sse[local], err[local], name))
    return pieces


def _fit_rows(P, L, method, rows):
    """Pieces for one bracket-count batch, given the batch's rows in the full table."""
    if method == "auto":
        return _auto_pieces(*_auto_batch(P, L), rows)
    batch, sse, err = _fit_batch(_prepare(P, L), method)
    return [(rows, batch, sse, err, method)]


def _fit_rows_many(P, L, methods, rows) -> dict[str, list]:
    """Pieces of several methods for one batch: points checked once, fits shared.

    ``auto`` fits every candidate anyway; a method among them asked for as well is
    taken from there instead of being fitted again.
    """
    prepared = _prepare(P, L)
    done: dict[str, tuple] = {}
    out = {}
    if "auto" in methods:
        done, used = _auto_batch(P, L, prepared)
        out["auto"] = _auto_pieces(done, used, rows)
    for method in methods:
        if method == "auto":
            continue
        if method not in done:
            done[method] = _fit_batch(prepared, method)
        batch, sse, err = done[method]
        out[method] = [(rows, batch, sse, err, method)]
    return out


def _check_method(method: str) -> None:
    if method not in METHODS:
        raise _refuse(
            f"unknown Lorenz method {method!r}", f"use one of {', '.join(METHODS)}", "method"
        )


def fit_points(P: ArrayLike, L: ArrayLike, method: str = "auto") -> LorenzFits:
    """Fit one Lorenz method to many rows of cumulative shares at once.

    Parameters
    ----------
    P, L : array_like, shape (n, k + 1)
        Cumulative population and income shares of every row, from (0, 0) to (1, 1).
    method : {"linear", "upper", "pchip", "gq", "beta", "quadratic", "lognormal", "auto"}
        ``linear`` joins the points by straight lines (everyone in a bracket at the bracket
        mean): the lower bound of every Lorenz-consistent index. ``upper`` is the lowest
        convex curve through the points: the upper bound. ``pchip`` is the monotone cubic
        through the points. ``gq``, ``beta``, ``quadratic`` and ``lognormal`` are fitted by
        least squares. ``auto`` takes the valid parametric fit with the smallest squared
        error (ties within :data:`AUTO_TIE` relative go to the earlier of
        :data:`AUTO_ORDER`), else ``pchip`` if valid, else ``linear``.

    Returns
    -------
    LorenzFits

    References
    ----------
    Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index.
    *Review of Economics and Statistics* 54: 306–316.
    Fritsch, F. N. and Carlson, R. E. (1980). Monotone piecewise cubic interpolation.
    *SIAM Journal on Numerical Analysis* 17: 238–246.
    Villaseñor, J. A. and Arnold, B. C. (1989). Elliptical Lorenz curves.
    *Journal of Econometrics* 40: 327–338.
    Kakwani, N. (1980). On a class of poverty measures. *Econometrica* 48: 437–446.
    Datt, G. (1998). Computational tools for poverty measurement and analysis. FCND
    Discussion Paper 50, IFPRI (GQ and Beta validity conditions and Gini formulas).
    Aitchison, J. and Brown, J. A. C. (1957). *The Lognormal Distribution*. CUP.
    """
    _check_method(method)
    P = np.atleast_2d(np.asarray(P, dtype=float))
    L = np.atleast_2d(np.asarray(L, dtype=float))
    if P.shape != L.shape or P.shape[1] < 2:
        raise _refuse(
            f"cumulative shares P and L have shapes {P.shape} and {L.shape}",
            "give both as (district-years, brackets + 1) arrays from (0, 0) to (1, 1)",
        )
    n = P.shape[0]
    pieces = _fit_rows(P, L, method, np.arange(n))
    return _assemble(method, pieces, n, pd.DataFrame({"row": np.arange(n)}))


def fit_panel(panel: Panel, method: str = "auto") -> LorenzFits:
    """Fit ``method`` to every district-year of a bracket panel (see :func:`fit_points`).

    District-years with the same bracket count are fitted as one batch.

    Parameters
    ----------
    panel : explorer.data.model.Panel
        A bracket panel.
    method : str
        One of :data:`METHODS`.

    Returns
    -------
    LorenzFits
        Rows keyed by ``region, year`` in panel order.

    References
    ----------
    As for :func:`fit_points`.
    """
    _check_method(method)
    _require_brackets(panel)
    keys, batches = panel_points(panel)
    pieces = []
    for rows, P, L in batches:
        pieces.extend(_fit_rows(P, L, method, rows))
    return _assemble(method, pieces, len(keys), keys)


def _require_brackets(panel: Panel) -> None:
    """Refuse a panel that is not bracket shares, saying what to load instead."""
    if getattr(panel, "kind", "brackets") != "brackets":
        raise _refuse(
            f"Lorenz curves need bracket shares, but this is a {panel.kind!r} panel",
            "load a table of income shares by population bracket",
        )


def fit_panel_methods(panel: Panel, methods: Sequence[str]) -> dict[str, LorenzFits]:
    """:func:`fit_panel` of several methods at once, sharing the work they have in common.

    The panel's points are gathered and checked once, and the candidates ``auto`` fits
    (``gq, beta, lognormal, quadratic, pchip, linear``) are not fitted again when asked
    for by name. Each result equals ``fit_panel(panel, method)``.

    Parameters
    ----------
    panel : explorer.data.model.Panel
        A bracket panel.
    methods : sequence of str
        Methods of :data:`METHODS`; repeats are fitted once.

    Returns
    -------
    dict of str to LorenzFits
        One entry per distinct method, in the order asked.
    """
    methods = tuple(dict.fromkeys(methods))
    for method in methods:
        _check_method(method)
    _require_brackets(panel)
    keys, batches = panel_points(panel)
    pieces: dict[str, list] = {m: [] for m in methods}
    for rows, P, L in batches:
        for method, got in _fit_rows_many(P, L, methods, rows).items():
            pieces[method].extend(got)
    return {m: _assemble(m, pieces[m], len(keys), keys) for m in methods}
