"""Lorenz points from bracket shares, their checks, and row-wise search along knots."""

from __future__ import annotations

import numpy as np
import pandas as pd

from explorer.data.model import DataError, Panel, Problem

__all__ = ["panel_points"]

_CONVEX_TOL = 1e-9


def _blank(shape) -> np.ndarray:
    """An object array of empty strings (filled in place: several times faster than np.full)."""
    out = np.empty(shape, dtype=object)
    out.fill("")
    return out


def _refuse(message: str, fix: str, column: str | None = None) -> DataError:
    return DataError([Problem(message=message, fix=fix, column=column)])


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


def _arrow_text(column: pd.Series) -> bool:
    return getattr(column.dtype, "storage", None) == "pyarrow" and column.dtype.kind in "OSU"


def _differs_from_previous(column: pd.Series) -> np.ndarray:
    """Whether each value after the first differs from the one before it.

    Arrow-backed text is compared in Arrow: making a Python object of every id first
    costs more than the whole comparison.
    """
    if _arrow_text(column) and len(column) > 1:
        import pyarrow as pa
        import pyarrow.compute as pc

        values = pa.array(column)
        differs = pc.not_equal(values.slice(1), values.slice(0, len(values) - 1))
        return differs.fill_null(True).to_numpy(zero_copy_only=False).astype(bool)
    values = column.to_numpy()
    return values[1:] != values[:-1]


def _taken(column: pd.Series, rows: np.ndarray):
    """The values at ``rows``: Arrow text stays Arrow text, anything else as numpy."""
    if _arrow_text(column):
        return column.iloc[rows].reset_index(drop=True)
    return column.to_numpy()[rows]


def panel_points(
    panel: Panel,
) -> tuple[pd.DataFrame, list[tuple[np.ndarray, np.ndarray, np.ndarray]]]:
    """Cumulative shares of a bracket panel, one batch per bracket count.

    Parameters
    ----------
    panel : explorer.data.model.Panel
        A bracket panel, its rows grouped by district-year in bracket order.

    Returns
    -------
    keys : DataFrame
        ``region, year`` of every district-year, in panel order.
    batches : list of (rows, P, L)
        ``rows`` indexes ``keys``; ``P`` and ``L`` are the cumulative population and
        income shares, divided by their totals so every curve ends exactly at (1, 1).
    """
    data = panel.data
    year = data["year"].to_numpy()
    change = np.ones(len(data), bool)
    change[1:] = _differs_from_previous(data["region"]) | (year[1:] != year[:-1])
    starts = np.flatnonzero(change)
    counts = np.diff(np.append(starts, len(data)))
    keys = pd.DataFrame({"region": _taken(data["region"], starts), "year": year[starts]})
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
