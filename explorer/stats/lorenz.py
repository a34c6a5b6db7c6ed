"""Lorenz curves from grouped shares: bounds, monotone interpolation and parametric fits.

Every function works on a batch of district-years at once. A batch is a pair of 2-D arrays
``P`` and ``L`` of shape ``(n, k + 1)``: the cumulative population and income shares
``P_0 = 0 < P_1 < ... < P_k = 1`` and ``L_0 = 0 <= ... <= L_k = 1`` of ``n`` district-years
that share the bracket count ``k``. :func:`fit_panel` splits a panel into one batch per
bracket count; nothing loops over district-years in Python.

Indices come from closed forms where they are published. Otherwise they come from the
curve's quantile function: the relative income of the person at rank ``p`` is the slope
``L'(p)``, so every mean-based index is an integral over ``p`` of a function of ``L'(p)``.
Those integrals use fixed grids shared by every row:

* piecewise-linear curves (``linear``, ``upper``) are integrated exactly, piece by piece;
* ``pchip`` uses ``GAUSS_NODES``-point Gauss–Legendre nodes inside every bracket after the
  substitution ``t = u^3 (10 - 15 u + 6 u^2)``, which clusters nodes at the bracket ends (the
  slope is a quadratic there, so the mean, GE(2) and CV are exact, and a slope vanishing at
  a knot costs about 1e-6 of the bracket's width in MLD);
* parametric curves use :data:`PROBIT_GRID`: ``p = Phi(z)`` with ``z`` equally spaced on
  ``[-9, 9]`` (step 0.1, 181 nodes) and the trapezoid rule in ``z``. The substitution puts
  nodes near ``p = 0`` and ``p = 1`` where relative incomes change fastest, and the
  trapezoid rule converges geometrically for smooth integrands decaying like the normal
  density; ``tests/test_lorenz.py`` checks it against the lognormal closed forms to 1e-9.
  The Beta curve's heavy top tail beyond the grid is added in closed form.

The ``upper`` curve is the pointwise lowest of all convex curves through the points: in each
bracket the larger of the neighbouring chords extended, 0 at the bottom and a jump to
(1, 1) at the top. It is convex inside each bracket but not across the points; its slopes,
sorted, are the quantile function of a distribution whose Lorenz curve lies below every
curve consistent with the points, so the mean-based indices computed from them (an
integral of f(L') does not change under sorting) are upper bounds, and its Gini (from its
own, larger area) is the tighter Gastwirth bound. Its jump leaves Theil T, GE(alpha > 1)
and CV without a finite upper bound, and its zero incomes at the bottom leave MLD and
GE(alpha < 0) without one (Atkinson(epsilon >= 1) reaches 1); each such value is inf with
a note saying why.

References
----------
Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index. *Review of
Economics and Statistics* 54: 306–316.
Fritsch, F. N. and Carlson, R. E. (1980). Monotone piecewise cubic interpolation. *SIAM
Journal on Numerical Analysis* 17: 238–246.
Villaseñor, J. A. and Arnold, B. C. (1989). Elliptical Lorenz curves. *Journal of
Econometrics* 40: 327–338.
Kakwani, N. (1980). On a class of poverty measures. *Econometrica* 48: 437–446.
Kakwani, N. and Podder, N. (1976). Efficient estimation of the Lorenz curve and associated
inequality measures from grouped observations. *Econometrica* 44: 137–148.
Datt, G. (1998). Computational tools for poverty measurement and analysis. FCND Discussion
Paper 50, IFPRI.
Aitchison, J. and Brown, J. A. C. (1957). *The Lognormal Distribution*. Cambridge
University Press.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field, replace

import numpy as np
import pandas as pd
from scipy import special

from explorer.data.model import DataError, Problem
from explorer.stats.measures import parse_index

METHODS = ("linear", "upper", "pchip", "gq", "beta", "quadratic", "lognormal", "auto")
AUTO_ORDER = ("gq", "beta", "lognormal", "quadratic")
"""Parametric candidates of ``auto``, in tie-break order (earlier wins a tie)."""
AUTO_TIE = 1e-12
"""Relative difference in squared error below which two fits count as tied (plus an
absolute 1e-24 for exact fits, whose squared errors are rounding noise)."""
BETA_SLOPE_FROM = 1e-3
"""The Beta curve's slope and curvature are checked on [this, 1 - this] (from memory of
Datt 1998's practice): with gamma < 1 the slope tends to minus infinity at p = 0, and with
gamma or delta a hair above 1 the curvature flips sign in a vanishing end zone, so no fit
would pass a check at the very ends."""
_BOTTOM_NOTE = (
    "withheld: the fitted Beta curve's slope is negative very near p = 0 (below p = "
    f"{BETA_SLOPE_FROM}), and this index depends on the lowest incomes; use another method"
)
_SSE_FLOOR = 1e-24  # squared errors this small are rounding noise: such fits tie
GAUSS_NODES = 16
_CHUNK_NODES = 131_072  # nodes per row chunk: big enough to amortise each call, small enough for L3
_CONVEX_TOL = 1e-9

_JUMP_NOTE = (
    "infinite: the most unequal curve consistent with the brackets gives part "
    "of the top bracket's income to a vanishing share of people (a jump at p = 1)"
)
_ZERO_NOTE = (
    "infinite: the curve gives zero income to part of the population "
    "(the upper curve does so in the bottom bracket; a zero income share does so anywhere)"
)
_HEAVY_NOTE = (
    "infinite: the fitted Beta curve's top tail is too heavy for this index "
    "(its relative income grows like (1 - p)^(delta - 1) near p = 1)"
)
_ZERO_SHARE_NOTE = "infinite: the bottom share in the denominator is zero"


def _blank(shape) -> np.ndarray:
    """An object array of empty strings (filled in place: several times faster than np.full)."""
    out = np.empty(shape, dtype=object)
    out.fill("")
    return out


# ---------------------------------------------------------------------------- index keys


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


# ---------------------------------------------------------------------------- grids


@dataclass(frozen=True)
class ProbitGrid:
    """Quadrature nodes ``p = Phi(z)`` with trapezoid weights in ``z``.

    ``q`` is ``1 - p`` computed without cancellation, so slopes that are singular at
    ``p = 1`` can be evaluated accurately.
    """

    z: np.ndarray
    p: np.ndarray
    q: np.ndarray
    weights: np.ndarray


def _probit_grid(limit: float = 9.0, step: float = 0.1) -> ProbitGrid:
    z = np.linspace(-limit, limit, int(round(2 * limit / step)) + 1)
    weights = step * np.exp(-0.5 * z * z) / np.sqrt(2 * np.pi)
    weights[[0, -1]] /= 2  # trapezoid ends, so a tail beyond +-limit can be added exactly
    for array in (z, weights):
        array.setflags(write=False)
    p, q = special.ndtr(z), special.ndtr(-z)
    p.setflags(write=False)
    q.setflags(write=False)
    return ProbitGrid(z=z, p=p, q=q, weights=weights)


PROBIT_GRID = _probit_grid()
_GRID_P, _GRID_Q = PROBIT_GRID.p[None, :], PROBIT_GRID.q[None, :]
_GRID_LOGS = (np.log(_GRID_P), np.log(_GRID_Q), 1.0 / _GRID_P, 1.0 / _GRID_Q)
_GL_T, _GL_W = np.polynomial.legendre.leggauss(GAUSS_NODES)
_GL_T, _GL_W = (_GL_T + 1) / 2, _GL_W / 2  # on [0, 1]
# Inside each pchip bracket, t = u^3 (10 - 15u + 6u^2) clusters the nodes at both ends, so a
# slope that vanishes at a knot (a log singularity for MLD) costs ~1e-6 of the bracket's
# width instead of ~1e-3; polynomials of degree <= 5 in p stay exact (so the mean,
# GE(2) and CV of the cubic are exact).
_PIECE_T = _GL_T**3 * (10 - 15 * _GL_T + 6 * _GL_T**2)
_PIECE_W = _GL_W * 30 * _GL_T**2 * (1 - _GL_T) ** 2


# ---------------------------------------------------------------------------- index maths


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


# ---------------------------------------------------------------------------- batches


def _row_search(knots: np.ndarray, p: np.ndarray) -> np.ndarray:
    """Segment index ``j`` (``knots[r, j] <= p[r, i] < knots[r, j+1]``) for every row at once.

    When every row has the same knots and the same points (deciles, say) one 1-D
    ``searchsorted`` serves all rows and ``j`` comes back 1-D. Otherwise rows are offset
    by 2 so one global ``searchsorted`` on the flattened, row-sorted knots serves every
    row (knots and p lie in [0, 1]).
    """
    n, width = knots.shape
    shared_points = p.ndim == 2 and (p.shape[0] == 1 or p.strides[0] == 0)
    if shared_points and (knots == knots[:1]).all():
        return np.clip(np.searchsorted(knots[0], p[0], side="right") - 1, 0, width - 2)
    offset = 2.0 * np.arange(n)[:, None]
    flat = (knots + offset).ravel()
    pos = np.searchsorted(flat, (p + offset).ravel(), side="right").reshape(p.shape)
    j = pos - 1 - width * np.arange(n)[:, None]
    return np.clip(j, 0, width - 2)


def _gather(values: np.ndarray, j: np.ndarray) -> np.ndarray:
    """values[r, j[r, i]] for a 2-D j, or values[:, j] for a 1-D (shared) j."""
    return values[:, j] if j.ndim == 1 else np.take_along_axis(values, j, 1)


def _as_rows(p, n):
    p = np.asarray(p, dtype=float)
    if p.ndim == 1:
        return np.broadcast_to(p, (n, p.size))
    return p


@dataclass(frozen=True)
class _Batch:
    """One method fitted to one batch of rows with the same bracket count."""

    method: str
    P: np.ndarray
    L: np.ndarray
    params: np.ndarray
    valid: np.ndarray
    reason: np.ndarray
    extra: dict = field(default_factory=dict)

    @property
    def n(self) -> int:
        return self.P.shape[0]

    def take(self, rows: np.ndarray) -> _Batch:
        extra = {k: v[rows] for k, v in self.extra.items()}
        return replace(
            self,
            P=self.P[rows],
            L=self.L[rows],
            params=self.params[rows],
            valid=self.valid[rows],
            reason=self.reason[rows],
            extra=extra,
        )

    def param_names(self) -> tuple[str, ...]:
        return _PARAM_NAMES[self.method](self.P.shape[1])

    # Each method provides evaluate, slope, gini, integral, jump.
    def evaluate(self, p):
        out = _CURVES[self.method].evaluate(self, _as_rows(p, self.n))
        return self._blank_bad_points(out)

    def slope(self, p):
        out = _CURVES[self.method].slope(self, _as_rows(p, self.n))
        return self._blank_bad_points(out)

    def _blank_bad_points(self, out):
        # rows whose points are not a Lorenz sequence were fitted on a stand-in
        ok = self.extra.get("points_ok")
        return out if ok is None or ok.all() else np.where(ok[:, None], out, np.nan)

    def jump(self):
        return _CURVES[self.method].jump(self)

    def indices(self, keys) -> dict[str, tuple[np.ndarray, np.ndarray]]:
        """(value, note) per key; relative incomes are evaluated once for all integrals."""
        specs = [(key, *_family(key)) for key in keys]
        curve = _CURVES[self.method]
        if self.method == "lognormal":
            integrals = {}
        else:
            wanted = [s for s in specs if s[1] in _INTEGRAL_FAMILIES]
            integrals = _chunked_integrals(self, curve, wanted)
        jump = self.jump()
        shares = None
        if self.method != "lognormal" and any(s[1] in _SHARE_FAMILIES for s in specs):
            shares = self.evaluate(_SHARE_POINTS)
        bad = ~self.valid
        bad_note = f"{self.method} curve not used: " + self.reason[bad].astype(object)
        out = {}
        for key, family, param in specs:
            if self.method == "lognormal":
                value = _lognormal_index(family, param, self.params[:, 0])
            elif key in integrals:
                value = integrals[key]
            elif family == "gini":
                value = curve.gini(self)
            else:
                value = _share_index(family, shares)
            value = np.asarray(value, dtype=float)
            note = _note_for(family, param, value, jump)
            if self.method == "beta" and (family == "cv" or (family == "ge" and param > 1)):
                note[np.isinf(value)] = _HEAVY_NOTE
            if "negative_bottom" in self.extra and _bottom_sensitive(family, param):
                withheld = self.extra["negative_bottom"]
                value = np.where(withheld, np.nan, value)
                note[withheld] = _BOTTOM_NOTE
            value = np.where(bad, np.nan, value)
            note[bad] = bad_note
            out[key] = (value, note)
        return out


_INTEGRAL_FAMILIES = ("theil_t", "mld", "cv", "ge", "atkinson")
_SHARE_FAMILIES = ("top10_share", "bottom40_share", "palma", "s80_s20")


def _bottom_sensitive(family, param) -> bool:
    """Indices that are infinite (or 1) once any income is zero."""
    return (
        family == "mld"
        or (family == "ge" and param is not None and param <= 0)
        or (family == "atkinson" and param is not None and param >= 1)
    )


def _chunked_integrals(batch, curve, specs) -> dict[str, np.ndarray]:
    """Integral-type indices for every row.

    Every node average is taken once and shared by the indices built from it (see
    :func:`_grid_moments`); the quadratic curve's averages are elementary functions of
    its parameter (:func:`_quadratic_moments`). The indices are formed from the averages
    once, for all rows together.
    """
    if not specs:
        return {}
    needed = list(dict.fromkeys(m for _, f, p in specs for m in _moment_keys(f, p)))
    if batch.valid.all():
        moments = _batch_moments(batch, curve, needed)
    else:  # invalid rows get NaN whatever their integrals: skip them
        live = np.flatnonzero(batch.valid)
        moments = {key: np.full(batch.n, np.nan) for key in needed}
        if live.size:
            got = _batch_moments(batch.take(live), curve, needed)
            for key in needed:
                moments[key][live] = got[key]
    jump = curve.jump(batch)
    out = {key: _index_from_moments(f, p, moments, jump) for key, f, p in specs}
    if batch.method == "beta":
        for key, family, param in specs:
            out[key] = _beta_top_tail(batch.params, family, param, out[key])
    return out


def _batch_moments(batch, curve, needed) -> dict[str, np.ndarray]:
    """Node averages for every row: closed forms for the quadratic curve, else the grid."""
    if batch.method != "quadratic":
        return _grid_moments(batch, curve, needed)
    a = batch.params[:, 0]
    closed = (a >= 0) & (a <= _QUAD_CLOSED_UP_TO)
    got = _quadratic_moments(needed, a[closed])
    if got is None:
        return _grid_moments(batch, curve, needed)
    moments = {key: np.empty(batch.n) for key in needed}
    for key in needed:
        moments[key][closed] = got[key]
    rest = np.flatnonzero(~closed)
    if rest.size:
        on_grid = _grid_moments(batch.take(rest), curve, needed)
        for key in needed:
            moments[key][rest] = on_grid[key]
    return moments


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


# ---- piecewise linear: linear (trapezoid) and upper (Gastwirth) -------------------------


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
    def evaluate(cls, batch, p):
        xs, ys = cls.knots(batch)
        j = _row_search(xs, p)
        x0, x1 = _gather(xs, j), _gather(xs, j + 1)
        y0, y1 = _gather(ys, j), _gather(ys, j + 1)
        width = x1 - x0
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.where(width > 0, (p - x0) / width, 1.0)
        out = y0 + np.clip(t, 0.0, 1.0) * (y1 - y0)
        return np.where(p >= 1.0, 1.0, np.where(p <= 0.0, 0.0, out))

    @classmethod
    def slope(cls, batch, p):
        xs, ys = cls.knots(batch)
        j = _row_search(xs, p)
        x0, x1 = _gather(xs, j), _gather(xs, j + 1)
        y0, y1 = _gather(ys, j), _gather(ys, j + 1)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(x1 > x0, (y1 - y0) / (x1 - x0), np.inf)

    @classmethod
    def gini(cls, batch):
        xs, ys = cls.knots(batch)
        return 1.0 - np.sum(np.diff(xs, axis=1) * (ys[:, 1:] + ys[:, :-1]), axis=1)

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


# ---- pchip ------------------------------------------------------------------------------


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


# ---- batched least squares ---------------------------------------------------------------


def _lstsq_rows(cols: list[np.ndarray], y: np.ndarray):
    """Least squares for every row's own design matrix; flags rank loss.

    The batch is laid out point by point: ``cols[j]`` holds column ``j`` of every row's
    design matrix as an ``(m, n)`` array (``(m, 1)`` when all rows share it) and ``y`` the
    right-hand sides as ``(m, n)``, so every step below is a pass over long contiguous rows
    of memory. Modified Gram–Schmidt with the right-hand side carried along as one more
    column is as backward stable as Householder QR for least squares (Björck 1967); a
    shared design matrix is factored once.

    References
    ----------
    Björck, Å. (1967). Solving linear least squares problems by Gram–Schmidt
    orthogonalization. *BIT* 7: 1–21.
    """
    q = len(cols)
    cols = [np.array(c, dtype=float) for c in cols]  # copies: orthogonalised in place
    rhs = np.array(y, dtype=float)
    R = np.zeros((q, q, cols[0].shape[1]))
    proj = np.empty((q, rhs.shape[1]))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for j in range(q):
            R[j, j] = np.sqrt(np.einsum("ij,ij->j", cols[j], cols[j]))
            cols[j] /= R[j, j]
            for k in range(j + 1, q):
                R[j, k] = np.einsum("ij,ij->j", cols[j], cols[k])
                cols[k] -= R[j, k] * cols[j]
            proj[j] = (
                np.einsum("ij,ij->j", cols[j], rhs)
                if cols[j].shape[1] > 1
                else (cols[j][:, 0] @ rhs)
            )
            rhs -= proj[j] * cols[j]
        diag = np.abs(np.stack([R[j, j] for j in range(q)]))
        ok = diag.min(axis=0) > 1e-12 * np.maximum(diag.max(axis=0), 1e-300)
        beta = np.empty((q, rhs.shape[1]))
        for j in range(q - 1, -1, -1):  # back substitution
            acc = proj[j].copy()
            for k in range(j + 1, q):
                acc -= R[j, k] * beta[k]
            beta[j] = acc / R[j, j]
    ok = np.broadcast_to(ok, (rhs.shape[1],)).copy()
    beta = beta.T.copy()
    beta[~ok] = np.nan
    return beta, ok


# ---- parametric curves: GQ, Beta, quadratic, lognormal -----------------------------------


class _Parametric:
    """Shared code: integrals on the probit grid and Gini by closed form."""

    grid_slope = None  # (batch, p, q) -> relative incomes

    @classmethod
    def relative_incomes(cls, batch):
        return PROBIT_GRID.weights, cls.grid_slope(batch, _GRID_P, _GRID_Q)

    @staticmethod
    def jump(batch):
        return np.zeros(batch.n)

    @classmethod
    def slope(cls, batch, p):
        return cls.grid_slope(batch, p, 1.0 - p)


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


def _gini_by_quadrature(batch, evaluate):
    """1 - 2 * area on the probit grid (smooth in z even with a sqrt singularity at p = 1)."""
    values = evaluate(batch, np.broadcast_to(PROBIT_GRID.p, (batch.n, PROBIT_GRID.p.size)))
    return 1.0 - 2.0 * np.sum(values * PROBIT_GRID.weights, axis=1)


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
        probe = _Batch("beta", P, L, params, np.ones(n_rows, bool), reason)
        slope_lo = _Beta.grid_slope(probe, np.array([[lo]]), np.array([[hi]]))[:, 0]
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
        theta, g, d = (batch.params[:, i, None] for i in range(3))
        if p is _GRID_P:  # the shared grid: its logs and reciprocals are computed once
            log_p, log_q, inv_p, inv_q = _GRID_LOGS
        else:
            log_p, log_q, inv_p, inv_q = np.log(p), np.log(q), 1.0 / p, 1.0 / q
        core = theta * np.exp(g * log_p + d * log_q)
        return 1.0 - core * (g * inv_p - d * inv_q)

    @staticmethod
    def curvature_sign(batch, p, q):
        """The bracket of L'' = theta p^g q^d [...], whose sign is the sign of L''."""
        g, d = batch.params[:, 1, None], batch.params[:, 2, None]
        return g * (1 - g) / (p * p) + 2 * g * d / (p * q) + d * (1 - d) / (q * q)

    @staticmethod
    def gini(batch):
        theta, g, d = batch.params.T
        return 2 * theta * special.beta(1 + g, 1 + d)


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


def _fit_lognormal(P, L, iterations: int = 60):
    """sigma by batched Gauss–Newton on the interior points, started from the linear Gini."""
    z = special.ndtri(P[:, 1:-1])
    target = L[:, 1:-1]
    gini0 = _Piecewise.gini(_Batch("linear", P, L, np.empty((P.shape[0], 0)), None, None))
    sigma = np.sqrt(2) * special.ndtri((np.clip(gini0, 0, 1 - 1e-12) + 1) / 2)
    sigma = np.maximum(sigma, 1e-6)
    step = np.full_like(sigma, np.inf)
    for _ in range(iterations):
        resid = special.ndtr(z - sigma[:, None]) - target
        jac = -np.exp(-0.5 * (z - sigma[:, None]) ** 2) / np.sqrt(2 * np.pi)
        denom = np.sum(jac * jac, axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = -np.sum(jac * resid, axis=1) / denom
        step = np.clip(np.nan_to_num(step), -0.5, 0.5)
        sigma = np.maximum(sigma + step, 0.0)
        if np.all(np.abs(step) < 1e-15 * np.maximum(sigma, 1.0)):
            break
    converged = np.abs(step) < 1e-8
    reason = _blank(P.shape[0])
    reason[~converged] = "least squares for sigma did not converge"
    return sigma[:, None], converged, reason, {}


class _Lognormal(_Parametric):
    @staticmethod
    def evaluate(batch, p):
        sigma = batch.params[:, :1]
        return special.ndtr(special.ndtri(p) - sigma)

    @staticmethod
    def grid_slope(batch, p, q):
        sigma = batch.params[:, :1]
        z = special.ndtri(p)
        return np.exp(sigma * z - sigma * sigma / 2)

    @staticmethod
    def gini(batch):
        return 2 * special.ndtr(batch.params[:, 0] / np.sqrt(2)) - 1


def _lognormal_index(family, param, sigma):
    """Closed forms for the two-parameter lognormal (Aitchison & Brown 1957)."""
    s2 = sigma * sigma
    if family == "gini":
        return 2 * special.ndtr(sigma / np.sqrt(2)) - 1
    if family in ("theil_t", "mld"):
        return s2 / 2
    if family == "cv":
        return np.sqrt(np.expm1(s2))
    if family == "ge":
        k = param * (param - 1)
        return np.expm1(k * s2 / 2) / k
    if family == "atkinson":
        return -np.expm1(-param * s2 / 2)

    def share(p):
        return special.ndtr(special.ndtri(p) - sigma)

    if family == "top10_share":
        return 1 - share(0.9)
    if family == "bottom40_share":
        return share(0.4)
    if family == "palma":
        return (1 - share(0.9)) / share(0.4)
    return (1 - share(0.8)) / share(0.2)


class _Curve:
    """Method table: fit function and curve class."""

    def __init__(self, fit, curve):
        self.fit = fit
        self.cls = curve

    def __getattr__(self, name):
        return getattr(self.cls, name)


_CURVES = {
    "linear": _Curve(_fit_linear, _Piecewise),
    "upper": _Curve(_fit_upper, _Piecewise),
    "pchip": _Curve(_fit_pchip, _Pchip),
    "gq": _Curve(_fit_gq, _GQ),
    "beta": _Curve(_fit_beta, _Beta),
    "quadratic": _Curve(_fit_quadratic, _Quadratic),
    "lognormal": _Curve(_fit_lognormal, _Lognormal),
}
_PARAM_NAMES = {
    "linear": lambda width: (),
    "upper": lambda width: (),
    "pchip": lambda width: tuple(f"slope_{i}" for i in range(width)),
    "gq": lambda width: ("a", "b", "c"),
    "beta": lambda width: ("theta", "gamma", "delta"),
    "quadratic": lambda width: ("a",),
    "lognormal": lambda width: ("sigma",),
}


# ---------------------------------------------------------------------------- public API


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

    def evaluate(self, p) -> np.ndarray:
        """L(p) for every row at the points ``p`` (1-D), shape ``(n, len(p))``.

        L(1) = 1 for every curve, so the ``upper`` curve's jump at p = 1 is included.
        """
        p = np.atleast_1d(np.asarray(p, dtype=float))
        return self._gather(lambda b: b.evaluate(p), p.size)

    def slope(self, p) -> np.ndarray:
        """Relative income L'(p) (income over the mean) at ``p``, shape ``(n, len(p))``."""
        p = np.atleast_1d(np.asarray(p, dtype=float))
        return self._gather(lambda b: b.slope(p), p.size)

    def indices(self, keys) -> dict[str, CurveIndex]:
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


def _check_points(P, L):
    """Reasons for rows whose points cannot be a Lorenz curve ("" when fine).

    Worked point by point (on the transposed arrays), so every step runs along all rows at
    once instead of along a row's few points.
    """
    reason = _blank(P.shape[0])
    pt, lt = np.ascontiguousarray(P.T), np.ascontiguousarray(L.T)
    dp = pt[1:] - pt[:-1]
    dl = lt[1:] - lt[:-1]
    with np.errstate(divide="ignore", invalid="ignore"):
        s = dl / dp
        scale = np.maximum(np.abs(np.where(np.isfinite(s), s, 0)).max(axis=0), 1.0)
        not_convex = ((s[1:] - s[:-1]) < -_CONVEX_TOL * scale).any(axis=0)
        decreasing = (dl < 0).any(axis=0)
    ends = (
        (np.abs(pt[0]) > 1e-12)
        | (np.abs(lt[0]) > 1e-12)
        | (np.abs(pt[-1] - 1) > 1e-9)
        | (np.abs(lt[-1] - 1) > 1e-9)
    )
    checks = [
        (not_convex, "the points are not convex (bracket means fall from one bracket to the next)"),
        (decreasing, "the cumulative income shares decrease"),
        ((dp <= 0).any(axis=0), "a bracket has no population share"),
        (
            ends | ~np.isfinite(pt).all(axis=0) | ~np.isfinite(lt).all(axis=0),
            "the points do not run from (0, 0) to (1, 1)",
        ),
    ]
    for bad, text in checks:
        if bad.any():
            reason[bad] = text
    return reason


_INTERPOLANTS = ("linear", "upper", "pchip")


def _prepare(P, L):
    """Check the points once; bad rows get a harmless stand-in so batches stay rectangular."""
    P = np.asarray(P, dtype=float)
    L = np.asarray(L, dtype=float)
    point_reason = _check_points(P, L)
    good = point_reason == ""
    if not good.all():
        grid = np.linspace(0, 1, P.shape[1])
        P = np.where(good[:, None], P, grid)
        L = np.where(good[:, None], L, grid**2)
    return P, L, good, point_reason


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


def _auto_batch(P, L):
    """The best valid parametric fit per row, else pchip, else linear."""
    n = P.shape[0]
    prepared = _prepare(P, L)
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


def _fit_rows(P, L, method, rows):
    """Pieces for one bracket-count batch, given the batch's rows in the full table."""
    if method == "auto":
        fits, used = _auto_batch(P, L)
        pieces = []
        for name in np.unique(used):
            local = np.flatnonzero(used == name)
            batch, sse, err = fits[name]
            pieces.append((rows[local], batch.take(local), sse[local], err[local], name))
        return pieces
    batch, sse, err = _fit_batch(_prepare(P, L), method)
    return [(rows, batch, sse, err, method)]


def _refuse(message: str, fix: str, column: str | None = None) -> DataError:
    return DataError([Problem(message=message, fix=fix, column=column)])


def _check_method(method: str) -> None:
    if method not in METHODS:
        raise _refuse(
            f"unknown Lorenz method {method!r}", f"use one of {', '.join(METHODS)}", "method"
        )


def fit_points(P, L, method: str = "auto") -> LorenzFits:
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


def panel_points(panel) -> tuple[pd.DataFrame, list[tuple[np.ndarray, np.ndarray, np.ndarray]]]:
    """Cumulative shares of a bracket panel, one batch per bracket count.

    Returns the ``region, year`` keys (one row per district-year, in panel order) and a
    list of ``(rows, P, L)`` with ``rows`` indexing the keys. Cumulative shares are divided
    by their totals so every curve ends exactly at (1, 1).
    """
    data = panel.data
    region = data["region"].to_numpy()
    year = data["year"].to_numpy()
    change = np.ones(len(data), bool)
    change[1:] = (region[1:] != region[:-1]) | (year[1:] != year[:-1])
    starts = np.flatnonzero(change)
    counts = np.diff(np.append(starts, len(data)))
    keys = pd.DataFrame({"region": region[starts], "year": year[starts]})
    pop = data["pop_share"].to_numpy(dtype=float)
    inc = data["income_share"].to_numpy(dtype=float)
    batches = []
    for k in np.unique(counts):
        rows = np.flatnonzero(counts == k)
        index = starts[rows][:, None] + np.arange(k)
        cum_p = np.cumsum(pop[index], axis=1)
        cum_l = np.cumsum(inc[index], axis=1)
        zeros = np.zeros((rows.size, 1))
        P = np.hstack([zeros, cum_p / cum_p[:, -1:]])
        L = np.hstack([zeros, cum_l / cum_l[:, -1:]])
        batches.append((rows, P, L))
    return keys, batches


def fit_panel(panel, method: str = "auto") -> LorenzFits:
    """Fit ``method`` to every district-year of a bracket panel (see :func:`fit_points`).

    District-years with the same bracket count are fitted as one batch.
    """
    _check_method(method)
    if getattr(panel, "kind", "brackets") != "brackets":
        raise _refuse(
            f"Lorenz curves need bracket shares, but this is a {panel.kind!r} panel",
            "load a table of income shares by population bracket",
        )
    keys, batches = panel_points(panel)
    pieces = []
    for rows, P, L in batches:
        pieces.extend(_fit_rows(P, L, method, rows))
    return _assemble(method, pieces, len(keys), keys)


def indices_from_slope(y, weights, keys, jump=None) -> dict[str, np.ndarray]:
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
    """
    y = np.asarray(y, dtype=float)
    jump = np.zeros(y.shape[0]) if jump is None else np.asarray(jump, dtype=float)
    out = {}
    for key in keys:
        family, param = _family(key)
        out[key] = _integral_index(family, param, np.asarray(weights, float), y, jump)
    return out
