"""Poverty measures of grouped data: from each Lorenz curve and the district mean, with bounds.

With ``r = z / mu`` the line over the mean, the person at rank ``p`` has relative income
``L'(p)``, so ``H`` solves ``L'(H) = r``, ``FGT(1) = H - L(H) / r``,
``FGT(2) = int_0^H (1 - L'(p) / r)^2 dp``, ``Watts = int_0^H ln(r / L'(p)) dp`` and the Sen
index ``S = (2 / H) int_0^H (H - p)(1 - L'(p) / r) dp``.

* ``lognormal``: every FGT and the Watts index in closed form (partial moments of the
  lognormal, Aitchison & Brown 1957), with ``a = ln(r) / sigma + sigma / 2``:
  ``H = Phi(a)``, ``FGT(1) = Phi(a) - Phi(a - sigma) / r``,
  ``FGT(2) = Phi(a) - 2 Phi(a - sigma) / r + e^{sigma^2} Phi(a - 2 sigma) / r^2``,
  ``Watts = sigma [a Phi(a) + phi(a)]``.
* ``gq`` and ``beta``: the closed forms of Datt (1998) for H, FGT(1) and FGT(2) (from memory;
  the tests check them against numerical integration of the same fitted curve). The Beta
  FGT(2) uses incomplete beta functions, which need ``gamma > 1/2`` and ``delta > 1/2``;
  other rows use the grid.
* every other measure and method: the grid. ``L`` and ``L'`` are evaluated on
  :data:`GRID_SIZE` nodes ``p = u^2`` (``u`` the midpoints of equal steps on (0, 1), which
  puts nodes where poverty lives); H is where ``L'`` crosses ``r`` (linear interpolation
  between nodes), FGT(1) the largest ``p - L(p) / r`` (a parabola through the three nodes
  around it) and the integrals the midpoint rule in ``u``. Each integrand vanishes at H, so
  cutting it there costs nothing beyond the rule's own O(step^2) error (a few 1e-6 on
  curves of lognormal shape, checked against scipy quadrature in the tests).

Bounds. The bracket shares and the mean fix each bracket's mean income but not how incomes
spread inside a bracket. FGT(1), FGT(2) and the Watts index are averages of a convex
function of income, so among all distributions with those bracket means they are smallest
when everyone in a bracket has the bracket mean (Jensen's inequality: the ``linear`` curve)
and largest for the most unequal distribution consistent with the points (the ``upper``
curve, whose Lorenz curve lies below every consistent curve: Gastwirth 1972, with the
Lorenz-ordering result of Atkinson 1970). The upper curve gives zero incomes at the bottom,
so the Watts index has no finite upper bound. The headcount and the Sen index are not
convex in incomes: within a bracket people can sit on either side of the line, so the
shares give them no bound, and the note says so.

References
----------
Foster, J., Greer, J. and Thorbecke, E. (1984). A class of decomposable poverty measures.
*Econometrica* 52: 761–766.
Datt, G. (1998). Computational tools for poverty measurement and analysis. FCND Discussion
Paper 50, IFPRI.
Aitchison, J. and Brown, J. A. C. (1957). *The Lognormal Distribution*. Cambridge
University Press.
Gastwirth, J. L. (1972). The estimation of the Lorenz curve and Gini index. *Review of
Economics and Statistics* 54: 306–316.
Atkinson, A. B. (1970). On the measurement of inequality. *Journal of Economic Theory* 2:
244–263.
Sen, A. (1976). Poverty: an ordinal approach to measurement. *Econometrica* 44: 219–231.
"""

from __future__ import annotations

import numpy as np
from scipy import special

from explorer.stats import lorenz
from explorer.stats.poverty import POVERTY_INDICES

__all__ = [
    "GRID_P",
    "GRID_SIZE",
    "NO_BOUND_NOTE",
    "bounds",
    "crossing",
    "from_points",
    "grid_measures",
]

GRID_SIZE = 256
_U = (np.arange(GRID_SIZE) + 0.5) / GRID_SIZE
GRID_P = _U * _U
GRID_W = 2.0 * _U / GRID_SIZE  # dp = 2u du
_ROWS = 2048  # rows per chunk: a few (rows, GRID_SIZE) arrays stay small

NO_BOUND_NOTE = (
    "no bound from the published shares: within a bracket people can sit on either side of the line"
)
_WATTS_UNBOUNDED = (
    "upper bound infinite: the most unequal curve consistent with the brackets gives zero "
    "income to part of the bottom bracket"
)
_NEGATIVE_SLOPE = "withheld: the fitted curve's slope is negative near p = 0; use another method"


# ---------------------------------------------------------------------------- the grid


def crossing(p, y, r) -> np.ndarray:
    """Where each row's increasing ``y`` (on nodes ``p``) crosses ``r``: H by interpolation."""
    below = np.sum(y < r[:, None], axis=1)
    j = np.clip(below, 1, p.size - 1)
    rows = np.arange(len(r))
    y0, y1 = y[rows, j - 1], y[rows, j]
    p0, p1 = p[j - 1], p[j]
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.clip((r - y0) / (y1 - y0), 0.0, 1.0)
    h = np.where(below == 0, 0.0, np.where(below >= p.size, 1.0, p0 + t * (p1 - p0)))
    first = below == 0  # below the first node: extrapolate from 0 with the first slope
    with np.errstate(divide="ignore", invalid="ignore"):
        h = np.where(first & (y[:, 0] > 0), np.clip(r / y[:, 0], 0, 1) * p[0], h)
    return h


def _peak(p, values):
    """Row maxima of ``values`` on nodes ``p``, refined by a parabola through three nodes."""
    j = np.clip(np.argmax(values, axis=1), 1, p.size - 2)
    rows = np.arange(values.shape[0])
    f0, f1, f2 = values[rows, j - 1], values[rows, j], values[rows, j + 1]
    x0, x1, x2 = p[j - 1], p[j], p[j + 1]
    # the vertex value of the parabola through (x0, f0), (x1, f1), (x2, f2)
    d01, d12 = (f1 - f0) / (x1 - x0), (f2 - f1) / (x2 - x1)
    c = (d12 - d01) / (x2 - x0)
    with np.errstate(divide="ignore", invalid="ignore"):
        x = 0.5 * (x0 + x1) - d01 / (2 * c)
        vertex = f0 + d01 * (x - x0) + c * (x - x0) * (x - x1)
    ok = (c < 0) & (x > x0) & (x < x2) & np.isfinite(vertex)
    return np.maximum(np.where(ok, vertex, f1), np.max(values, axis=1))


def grid_measures(level, slope, r, head=None) -> dict[str, np.ndarray]:
    """Poverty measures from a curve on the grid nodes :data:`GRID_P`.

    Parameters
    ----------
    level, slope : ndarray, shape (n, GRID_SIZE)
        ``L`` and ``L'`` at the nodes.
    r : ndarray, shape (n,)
        Poverty line over the mean.
    head : ndarray, shape (n,), optional
        A headcount known in closed form (used by the Sen index); from the crossing of
        ``L'`` and ``r`` otherwise.

    Returns
    -------
    dict of str to ndarray, shape (n,)
    """
    slope = np.maximum(slope, 0.0)
    h = crossing(GRID_P, slope, r) if head is None else head
    with np.errstate(divide="ignore", invalid="ignore"):
        gap = np.clip(1.0 - slope / r[:, None], 0.0, None)
        logs = np.where(gap > 0, np.log(r[:, None]) - np.log(slope), 0.0)
        fgt1 = np.maximum(_peak(GRID_P, GRID_P - level / r[:, None]), 0.0)
        rank = np.clip(h[:, None] - GRID_P, 0.0, None)
        sen = np.where(h > 0, 2.0 * (gap * rank) @ GRID_W / h, 0.0)
    return {
        "fgt_0": h,
        "fgt_1": fgt1,
        "fgt_2": (gap * gap) @ GRID_W,
        "watts": logs @ GRID_W,
        "sen_poverty": sen,
    }


# ---------------------------------------------------------------------------- closed forms


def _lognormal(params, r) -> dict[str, np.ndarray]:
    """Aitchison & Brown (1957) partial moments (module docstring)."""
    sigma = params[:, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        a = np.log(r) / sigma + sigma / 2
    h = special.ndtr(a)
    below = special.ndtr(a - sigma) / r
    fgt2 = h - 2 * below + np.exp(sigma * sigma) * special.ndtr(a - 2 * sigma) / (r * r)
    watts = sigma * (a * h + np.exp(-0.5 * a * a) / np.sqrt(2 * np.pi))
    return {"fgt_0": h, "fgt_1": h - below, "fgt_2": fgt2, "watts": watts}


def _gq(params, r) -> dict[str, np.ndarray]:
    """Datt (1998), general quadratic: H, FGT(1) and FGT(2) in closed form."""
    a, b, c = params[:, 0], params[:, 1], params[:, 2]
    e = -(a + b + c + 1)
    m, n = b * b - 4 * a, 2 * b * e - 4 * c
    root = np.sqrt(np.maximum(n * n - 4 * m * e * e, 0.0))
    k = b + 2 * r
    with np.errstate(divide="ignore", invalid="ignore"):
        h = -(n + root * k / np.sqrt(k * k - m)) / (2 * m)
        h = np.clip(np.where(np.isfinite(h), h, np.nan), 0.0, 1.0)
        level = -(b * h + e + np.sqrt(np.maximum(m * h * h + n * h + e * e, 0.0))) / 2
        fgt1 = h - level / r
        s1, s2 = (root - n) / (2 * m), -(root + n) / (2 * m)
        log_term = np.log((1 - h / s1) / (1 - h / s2))
        fgt2 = 2 * fgt1 - h - (a * h + b * level - root / 16 * log_term) / (r * r)
    return {"fgt_0": h, "fgt_1": fgt1, "fgt_2": fgt2}


def _beta_slope(params, p):
    theta, g, d = params[:, 0], params[:, 1], params[:, 2]
    q = 1.0 - p
    return 1.0 - theta * p**g * q**d * (g / p - d / q)


def _beta(params, r) -> dict[str, np.ndarray]:
    """Datt (1998), Beta curve: H by bisection on L'(H) = r, FGT(1), FGT(2) in closed form.

    The slope of a valid Beta curve increases on the range where it was checked, so 60
    halvings of [1e-12, 1 - 1e-12] pin H to rounding error in every row at once.
    """
    theta, g, d = params[:, 0], params[:, 1], params[:, 2]
    lo, hi = np.full(len(r), 1e-12), np.full(len(r), 1 - 1e-12)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            low = _beta_slope(params, mid) < r
            lo, hi = np.where(low, mid, lo), np.where(low, hi, mid)
        h = 0.5 * (lo + hi)
        h = np.where(_beta_slope(params, lo) >= r, 0.0, h)
        level = h - theta * h**g * (1 - h) ** d
        fgt1 = h - level / r
        a2 = 2 * g - 1
        b2 = 2 * d - 1

        def part(x, y):  # unnormalised incomplete beta int_0^h p^(x-1) (1-p)^(y-1) dp
            return special.betainc(x, y, h) * special.beta(x, y)

        tail = g * g * part(a2, 2 * d + 1) - 2 * g * d * part(2 * g, 2 * d)
        tail = tail + d * d * part(2 * g + 1, b2)
        inv = 1.0 / r
        fgt2 = (1 - inv) * (2 * fgt1 - (1 - inv) * h) + theta * theta * inv * inv * tail
    fgt2 = np.where((a2 > 0) & (b2 > 0), fgt2, np.nan)  # else the grid
    return {"fgt_0": h, "fgt_1": fgt1, "fgt_2": fgt2}


_CLOSED = {"lognormal": _lognormal, "gq": _gq, "beta": _beta}


def _blank(n: int) -> np.ndarray:
    out = np.empty(n, dtype=object)
    out.fill("")
    return out


def _rows_of(used, method) -> np.ndarray:
    return np.flatnonzero(np.asarray(used).astype(str) == method)


def _chunk(P, L, r, method):
    """Measures and notes of one chunk of rows (see :func:`from_points`)."""
    fits = lorenz.fit_points(P, L, method)
    level, slope = fits.evaluate(GRID_P), fits.slope(GRID_P)
    got = grid_measures(level, slope, r)
    notes = {key: _blank(len(r)) for key in POVERTY_INDICES}
    for name, closed in _CLOSED.items():
        rows = _rows_of(fits.used, name)
        if rows.size == 0:
            continue
        width = 1 if name == "lognormal" else 3
        exact = closed(fits.params[rows, :width], r[rows])
        for key, value in exact.items():
            keep = np.isfinite(value)
            got[key][rows[keep]] = value[keep]
        # the Sen index on the grid, with the closed-form headcount
        sen = grid_measures(level[rows], slope[rows], r[rows], head=exact["fgt_0"])
        got["sen_poverty"][rows] = sen["sen_poverty"]
    if method in ("linear", "upper"):  # point masses: exact, no grid error at the steps
        y, w = _masses(P, L, spread=method == "upper")
        exact = _mass_measures(y, w, r)
        exact["fgt_0"] = np.sum(w * (y < r[:, None]), axis=1)
        got.update(exact)
    beta = _rows_of(fits.used, "beta")
    if beta.size:
        bottom = GRID_P < lorenz.BETA_SLOPE_FROM
        negative = beta[np.any(slope[beta][:, bottom] < 0, axis=1)]
        got["watts"][negative] = np.nan
        notes["watts"][negative] = _NEGATIVE_SLOPE
    invalid = ~np.asarray(fits.valid, bool)
    for key in POVERTY_INDICES:
        got[key][invalid] = np.nan
        notes[key][invalid] = np.asarray(fits.reason, dtype=object)[invalid]
    return got, notes, np.asarray(fits.used).astype(str)


def from_points(P, L, ratio, method: str = "auto"):
    """Poverty measures of many curves from their Lorenz points and line-to-mean ratios.

    Parameters
    ----------
    P, L : ndarray, shape (n, k + 1)
        Cumulative population and income shares of each row, from (0, 0) to (1, 1).
    ratio : ndarray, shape (n,)
        The poverty line over the row's mean income, ``z / mu``.
    method : str
        A Lorenz method of :data:`explorer.stats.lorenz.METHODS`.

    Returns
    -------
    values : dict of str to ndarray, shape (n,)
        Keys of :data:`explorer.stats.poverty.POVERTY_INDICES`; NaN where the fit is not a
        valid Lorenz curve or the ratio is unknown.
    notes : dict of str to ndarray of str, shape (n,)
        Why a value is missing ("" when fine).
    used : ndarray of str, shape (n,)
        The Lorenz method used per row.

    References
    ----------
    Datt (1998); Aitchison & Brown (1957); Foster, Greer & Thorbecke (1984) (module
    docstring).
    """
    P, L = np.asarray(P, float), np.asarray(L, float)
    r = np.asarray(ratio, float)
    n = P.shape[0]
    values = {key: np.full(n, np.nan) for key in POVERTY_INDICES}
    notes = {key: _blank(n) for key in POVERTY_INDICES}
    used = np.empty(n, dtype=object)
    for first in range(0, n, _ROWS):
        part = slice(first, min(n, first + _ROWS))
        safe = np.where(np.isfinite(r[part]) & (r[part] > 0), r[part], 1.0)
        got, why, chunk_used = _chunk(P[part], L[part], safe, method)
        for key in POVERTY_INDICES:
            values[key][part] = got[key]
            notes[key][part] = why[key]
        used[part] = chunk_used
    unknown = ~(np.isfinite(r) & (r > 0))
    for key in POVERTY_INDICES:
        values[key][unknown] = np.nan
        notes[key][unknown] = "undefined: the district mean or the line is unknown"
    return values, notes, used


# ---------------------------------------------------------------------------- bounds


def _masses(P, L, spread: bool):
    """Relative incomes and population weights of the two extreme distributions.

    ``spread=False``: everyone at the bracket mean (the ``linear`` curve). ``spread=True``:
    each bracket's people split between the neighbouring brackets' relative means, so that
    the bracket keeps its population and income (the ``upper`` curve; the first bracket's
    lower neighbour is income 0, the top bracket's income beyond its lower neighbour's
    level goes to a vanishing share of people).
    """
    dp, dl = np.diff(P, axis=1), np.diff(L, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        s = np.where(dp > 0, dl / dp, 0.0)
    if not spread:
        return s, dp
    n = s.shape[0]
    left = np.hstack([np.zeros((n, 1)), s[:, :-1]])
    right = np.hstack([s[:, 1:], np.full((n, 1), np.inf)])
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(np.isinf(right), 1.0, (right - s) / (right - left))
    frac = np.where(np.isfinite(frac), np.clip(frac, 0.0, 1.0), 1.0)
    right = np.where(np.isinf(right), 0.0, right)  # carries no population there
    return np.hstack([left, right]), np.hstack([dp * frac, dp * (1 - frac)])


def _mass_measures(y, w, r):
    with np.errstate(divide="ignore", invalid="ignore"):
        gap = np.clip(1.0 - y / r[:, None], 0.0, None)
        logs = np.where(gap > 0, np.log(r[:, None]) - np.log(y), 0.0)
        logs = np.where(w > 0, logs, 0.0)
    return {
        "fgt_1": np.sum(w * gap, 1),
        "fgt_2": np.sum(w * gap**2, 1),
        "watts": np.sum(w * logs, 1),
    }


def bounds(P, L, ratio):
    """Lower and upper bounds of the poverty measures given the bracket shares and mean.

    Returns
    -------
    lower, upper : dict of str to ndarray, shape (n,)
        For ``fgt_1``, ``fgt_2``, ``watts``; NaN for ``fgt_0`` and ``sen_poverty``.
    notes : dict of str to ndarray of str
        :data:`NO_BOUND_NOTE` for the headcount and Sen; why an upper bound is infinite.

    References
    ----------
    Gastwirth (1972); Atkinson (1970) (module docstring).
    """
    P, L = np.asarray(P, float), np.asarray(L, float)
    r = np.asarray(ratio, float)
    n = len(r)
    low = _mass_measures(*_masses(P, L, False), r)
    high = _mass_measures(*_masses(P, L, True), r)
    lower = {key: np.full(n, np.nan) for key in POVERTY_INDICES}
    upper = {key: np.full(n, np.nan) for key in POVERTY_INDICES}
    notes = {key: _blank(n) for key in POVERTY_INDICES}
    for key in ("fgt_1", "fgt_2", "watts"):
        lower[key], upper[key] = low[key], high[key]
    notes["watts"][np.isinf(upper["watts"])] = _WATTS_UNBOUNDED
    for key in ("fgt_0", "sen_poverty"):
        notes[key][:] = NO_BOUND_NOTE
    return lower, upper, notes
