"""The method table and one fitted batch: a method fitted to rows with the same bracket count."""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from explorer.stats.lorenz.beta import _BOTTOM_NOTE, _HEAVY_NOTE, _Beta, _beta_top_tail, _fit_beta
from explorer.stats.lorenz.bounds import _fit_linear, _fit_upper, _Piecewise
from explorer.stats.lorenz.gq import _GQ, _fit_gq
from explorer.stats.lorenz.indices_from_curve import (
    _INTEGRAL_FAMILIES,
    _SHARE_FAMILIES,
    _SHARE_POINTS,
    _bottom_sensitive,
    _family,
    _grid_moments,
    _index_from_moments,
    _moment_keys,
    _note_for,
    _share_index,
)
from explorer.stats.lorenz.lognormal import _fit_lognormal, _Lognormal, _lognormal_index
from explorer.stats.lorenz.pchip import _fit_pchip, _Pchip
from explorer.stats.lorenz.points import _as_rows
from explorer.stats.lorenz.quadratic import (
    _QUAD_CLOSED_UP_TO,
    _fit_quadratic,
    _Quadratic,
    _quadratic_moments,
)

__all__: list[str] = []


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
