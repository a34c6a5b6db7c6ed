"""The two-parameter lognormal Lorenz curve and its closed-form indices.

References
----------
Aitchison, J. and Brown, J. A. C. (1957). *The Lognormal Distribution*. Cambridge
University Press.
"""

from __future__ import annotations

import numpy as np
from scipy import special

from explorer.stats.lorenz.bounds import _piecewise_gini
from explorer.stats.lorenz.parametric import _Parametric
from explorer.stats.lorenz.points import _blank

__all__: list[str] = []


def _fit_lognormal(P, L, iterations: int = 60):
    """sigma by batched Gauss–Newton on the interior points, started from the linear Gini."""
    z = special.ndtri(P[:, 1:-1])
    target = L[:, 1:-1]
    gini0 = _piecewise_gini(P, L)
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
