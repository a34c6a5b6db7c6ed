"""What the least-squares curves share: batched least squares and integrals on the probit grid."""

from __future__ import annotations

import numpy as np

from explorer.stats.lorenz.quadrature import _GRID_P, _GRID_Q, PROBIT_GRID

__all__: list[str] = []


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
