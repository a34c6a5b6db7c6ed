"""Rows of a published table that are totals of others (the nation, a province, a region
grouping districts), told apart from districts and set aside with the reason.

A row is an aggregate when it is named like one (Total, All districts, National, Province)
or when its code is absent from the boundary file and its values equal, in every year, the
sum (populations) or the average (means, population-weighted when populations are given) of
a run of adjacent district rows — offices list a group's total just above or below its
members. A row whose id is in the boundary file is always a district.
"""

from __future__ import annotations

import re
from collections.abc import Collection

import numpy as np
import pandas as pd

from explorer.data.office.names import normalise

__all__ = ["TOTAL_WORDS", "set_apart_aggregates"]

#: Words that name a total row (common practice of office tables).
TOTAL_WORDS = re.compile(
    r"^(?:total|totals|grand total|all|all (?:districts|regions|areas|counties|zones|units)|national|nation|whole country|country|"
    r"province|(?:\w+ )?province|province of \w+|province total|provincial total|\w+ total|total \w+|entire \w+)$"
)
TOLERANCE = 0.005


def _matrix(table: pd.DataFrame, column: str) -> pd.DataFrame:
    return table.pivot_table(index="line", columns="year", values=column, aggfunc="first")


def _close(target: np.ndarray, value: np.ndarray, years: int = 1) -> bool:
    both = np.isfinite(target) & np.isfinite(value)
    if both.sum() < years:
        return False
    scale = np.maximum(np.abs(target[both]), 1e-12)
    return bool(np.all(np.abs(target[both] - value[both]) <= TOLERANCE * scale))


def _run_match(
    values: np.ndarray, weights: np.ndarray | None, i: int, pool: list[int], kind: str
) -> list[int] | None:
    """The adjacent run of rows in ``pool`` (below, then above, row ``i``) whose sum or
    average equals row ``i`` in every year."""
    at = pool.index(i)
    for run in (pool[at + 1 :], pool[:at][::-1]):
        total = np.zeros(values.shape[1])
        weight = np.zeros(values.shape[1])
        for n, k in enumerate(run, 1):
            if kind == "sum" and np.any(values[k] <= 0):
                break  # a zero or negative member makes any "total" a coincidence
            w = weights[k] if weights is not None else np.ones(values.shape[1])
            total = total + (values[k] if kind == "sum" else values[k] * w)
            weight = weight + w
            # an average is easier to hit by chance: ask for a longer run and two years
            if n >= (2 if kind == "sum" else 3):
                estimate = total if kind == "sum" else total / weight
                if _close(values[i], estimate, 1 if kind == "sum" else 2):
                    # rows that all equal row i are its average by coincidence of being
                    # alike, not because it is their total: no evidence of an aggregate
                    if kind != "sum" and all(_close(values[i], values[k], 2) for k in run[:n]):
                        continue
                    return sorted(run[:n])
    return None


def _by_values(table: pd.DataFrame, candidates: list[int], pool: list[int]) -> dict[int, str]:
    """Reasons for the rows (positions in ``pool`` order) whose values are a group's."""
    lines = sorted(table["line"].unique())
    reasons: dict[int, str] = {}
    columns = [c for c in ("population", "mean_income") if c in table]
    if not columns:
        return reasons
    matrices = {c: _matrix(table, c).reindex(lines).to_numpy(float) for c in columns}
    names = table.drop_duplicates("line").set_index("line")["region"]
    weights = matrices.get("population")
    for column in columns:  # sums first: a count pins a group down, an average less so
        kind = "sum" if column == "population" else "mean"
        changed = True
        while changed:  # innermost groups first; a found total leaves the pool for the next
            changed = False
            for i in [c for c in candidates if c in pool]:
                run = _run_match(
                    matrices[column], weights if kind == "mean" else None, i, pool, kind
                )
                if run:
                    members = [names[lines[k]] for k in run]
                    what = "sum" if kind == "sum" else "average"
                    reasons[i] = (
                        f"its {column} is the {what} of {len(run)} adjacent rows "
                        f"({members[0]} … {members[-1]})"
                    )
                    pool.remove(i)
                    changed = True
    return reasons


def set_apart_aggregates(
    table: pd.DataFrame,
    boundary_ids: Collection[str] | None = None,
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Split a tidy table (with its ``line`` column) into districts and aggregate rows.

    Parameters
    ----------
    table : DataFrame
        ``line``, ``region``, ``year`` and measures, as from the layouts.
    boundary_ids : collection of str, optional
        Ids (or names) of the boundary file's districts. Without them, only names and values
        tell; with them, an id in the boundary file is never an aggregate.

    Returns
    -------
    districts, aggregates : DataFrame
        ``aggregates`` has the rows set apart plus a ``reason`` column.
    """
    known = {normalise(b) for b in boundary_ids} if boundary_ids is not None else None
    lines = sorted(table["line"].unique())
    names = table.drop_duplicates("line").set_index("line")["region"]
    reasons: dict[int, str] = {}
    for k, line in enumerate(lines):
        key = normalise(names[line])
        if known is not None and key in known:
            continue
        if TOTAL_WORDS.match(key):
            reasons[k] = "named like a total"
    pool = [k for k in range(len(lines)) if k not in reasons]
    candidates = [k for k in pool if known is None or normalise(names[lines[k]]) not in known]
    found = _by_values(table, candidates, pool)
    if known is not None:
        found = {k: r + ", and it is not in the boundary file" for k, r in found.items()}
    reasons.update(found)
    reason_of = {lines[k]: r for k, r in reasons.items()}
    is_total = table["line"].isin(reason_of)
    aggregates = table[is_total].assign(reason=table.loc[is_total, "line"].map(reason_of))
    return table[~is_total].reset_index(drop=True), aggregates.reset_index(drop=True)
