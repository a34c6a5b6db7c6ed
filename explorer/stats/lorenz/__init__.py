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
  density; ``tests/stats/test_lorenz.py`` checks it against the lognormal closed forms to 1e-9.
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

One module per family of curve, and the shared parts beside them:

* ``points``: cumulative shares of a panel, their checks, row-wise knot search;
* ``quadrature``: the probit grid and the Gauss–Legendre pieces;
* ``bounds``: ``linear`` and ``upper``; ``pchip``; ``gq``; ``beta``; ``quadratic``;
  ``lognormal``; ``parametric``: batched least squares and grid integrals they share;
* ``indices_from_curve``: node averages of the slope, shares, notes on infinite values;
* ``curves``: the method table and one fitted batch;
* ``batch``: :func:`fit_points`, :func:`fit_panel`, :func:`fit_panel_methods`,
  :class:`LorenzFits`, the ``auto`` choice.

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

from explorer.stats.lorenz.batch import (
    AUTO_ORDER,
    AUTO_TIE,
    METHODS,
    CurveIndex,
    LorenzFits,
    fit_panel,
    fit_panel_methods,
    fit_points,
)
from explorer.stats.lorenz.beta import BETA_SLOPE_FROM
from explorer.stats.lorenz.indices_from_curve import indices_from_slope
from explorer.stats.lorenz.pchip import pchip_slopes
from explorer.stats.lorenz.points import panel_points
from explorer.stats.lorenz.quadrature import GAUSS_NODES, PROBIT_GRID, ProbitGrid

__all__ = [
    "AUTO_ORDER",
    "AUTO_TIE",
    "BETA_SLOPE_FROM",
    "GAUSS_NODES",
    "METHODS",
    "PROBIT_GRID",
    "CurveIndex",
    "LorenzFits",
    "ProbitGrid",
    "fit_panel",
    "fit_panel_methods",
    "fit_points",
    "indices_from_slope",
    "panel_points",
    "pchip_slopes",
]
