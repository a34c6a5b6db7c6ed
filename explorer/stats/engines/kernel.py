"""Whole district-years in, tidy index rows out: the one computation every engine runs.

An engine hands :func:`compute_groups` a frame of complete district-years (columns
``region, year, income, weight``, in any order) and gets back rows with the columns of
:func:`explorer.stats.indices.compute` for unit panels: ``region, year, index, value,
lower, upper, method, note``.

Bootstrap draws depend only on the district-year and the seed. The whole-panel bootstrap
of :mod:`explorer.stats.intervals` draws every group from one generator, so a group's
draws there depend on the groups before it; here each district-year is resampled with its
own generator, seeded from ``(seed, region, year)`` (:func:`group_seed`), so results do
not depend on how the groups are batched. Within a group the records are put in one
canonical order (income, then weight) before resampling, so the draws do not depend on
the order in which an engine delivered them either.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from explorer.data.model import DataError, fail
from explorer.stats import intervals, measures

__all__ = ["COLUMNS", "ROLES", "compute_groups", "empty_table", "group_seed"]

COLUMNS = ("region", "year", "index", "value", "lower", "upper", "method", "note")
ROLES = ("region", "year", "income", "weight")
METHOD = "units"


def empty_table() -> pd.DataFrame:
    """The tidy table with no rows and the column types of a full one."""
    table = pd.DataFrame({c: pd.Series(dtype=float) for c in COLUMNS})
    for c in ("region", "index", "method", "note"):
        table[c] = table[c].astype(object)
    table["year"] = table["year"].astype(np.int64)
    return table


def group_seed(seed: int | None, region: str, year: int) -> np.random.SeedSequence:
    """The generator seed of one district-year's bootstrap.

    Parameters
    ----------
    seed : int or None
        The run's seed; ``None`` draws fresh entropy (not reproducible).
    region, year
        The district-year.

    Returns
    -------
    numpy.random.SeedSequence
        Built from the seed, the district name's bytes and the year, so the same
        district-year always gets the same draws for the same seed, and different
        district-years get independent streams.
    """
    if seed is None:
        return np.random.SeedSequence()
    name = str(region).encode("utf-8")
    # the whole name as one integer (its length first, so no two names coincide)
    return np.random.SeedSequence(
        [int(seed), len(name), int.from_bytes(name, "little"), int(year) & 0xFFFFFFFF]
    )


def _checked(frame: pd.DataFrame) -> tuple[np.ndarray, np.ndarray, pd.DataFrame]:
    """Incomes, weights and keys; bad records named by district-year, not batch position."""
    income = pd.to_numeric(frame["income"], errors="coerce").to_numpy(dtype=float)
    weight = pd.to_numeric(frame["weight"], errors="coerce").to_numpy(dtype=float)
    keys = pd.DataFrame(
        {"region": frame["region"].astype(str).to_numpy(), "year": frame["year"].to_numpy()}
    )
    bad = (
        ~np.isfinite(income)
        | ~np.isfinite(weight)
        | (weight < 0)
        | frame["region"].isna().to_numpy()
        | frame["year"].isna().to_numpy()
    )
    if bad.any():
        where = keys[bad].drop_duplicates().head(5)
        named = ", ".join(f"{r} {y}" for r, y in where.itertuples(index=False))
        raise fail(
            f"{int(bad.sum())} records with a missing district or year, an income that is "
            f"missing or not finite, or a weight that is negative, missing or not finite "
            f"(in district-years {named})",
            "fill in or drop those records; weights are population counts >= 0",
            column="income, weight",
        )
    keys["year"] = keys["year"].astype(np.int64)
    return income, weight, keys


def _canonical(income: np.ndarray, weight: np.ndarray, keys: pd.DataFrame):
    """Records in (region, year, income, weight) order: one order whatever the delivery."""
    codes, labels = pd.MultiIndex.from_frame(keys).factorize(sort=True)
    order = np.lexsort((weight, income, codes))
    return income[order], weight[order], keys.iloc[order].reset_index(drop=True)


def _bounds(units, indices, reps, seed, level):
    """Per-group percentile intervals, each group with its own generator."""
    n = units.n_groups
    lower = {k: np.full(n, np.nan) for k in indices}
    upper = {k: np.full(n, np.nan) for k in indices}
    ends = np.append(units.starts, len(units.values))
    labels = units.labels
    for g in range(n):  # one generator per district-year: the point of the design
        a, b = ends[g], ends[g + 1]
        one = measures.sort_units(units.values[a:b], units.weights[a:b])
        region, year = labels["region"].iat[g], labels["year"].iat[g]
        got = intervals.bootstrap(
            one, indices, reps=reps, seed=group_seed(seed, region, year), level=level
        )
        for key in indices:
            lower[key][g], upper[key][g] = got[key][0][0], got[key][1][0]
    return lower, upper


def compute_groups(
    frame: pd.DataFrame,
    indices: Sequence[str],
    ci: str | None = None,
    reps: int = 199,
    seed: int | None = 0,
    level: float = 0.95,
) -> pd.DataFrame:
    """The tidy index rows of complete district-years.

    Parameters
    ----------
    frame : DataFrame
        Columns ``region, year, income, weight``; every district-year in it complete.
    indices : sequence of str
        Index keys (:func:`explorer.stats.measures.parse_index`).
    ci : {None, "bootstrap"}
        Percentile bootstrap intervals at ``level`` with ``reps`` replicates.
    reps, seed, level
        Bootstrap settings; draws per district-year from :func:`group_seed`.

    Returns
    -------
    DataFrame
        ``region, year, index, value, lower, upper, method, note``, district-years in
        (region, year) order, indices inner in the order asked.

    Raises
    ------
    explorer.data.model.DataError
        For bad records, naming their district-years.

    References
    ----------
    Efron, B. and Tibshirani, R. J. (1993). *An Introduction to the Bootstrap*, ch. 13
    (percentile intervals). Chapman & Hall.
    """
    indices = list(indices)
    if len(frame) == 0:
        return empty_table()
    income, weight, keys = _canonical(*_checked(frame))
    try:
        units = measures.sort_units(income, weight, keys)
    except DataError as err:  # positions in a batch mean nothing to the user
        raise fail(str(err), "check the records of these district-years") from None
    got = measures.compute(units, indices)
    n, k = units.n_groups, len(indices)
    if ci == "bootstrap":
        lower, upper = _bounds(units, indices, int(reps), seed, level)
    else:
        lower = upper = {key: np.full(n, np.nan) for key in indices}

    def stack(parts):
        return np.column_stack([parts[key] for key in indices]).ravel()

    table = pd.DataFrame(
        {
            "region": np.repeat(units.labels["region"].astype(str).to_numpy(), k),
            "year": np.repeat(units.labels["year"].to_numpy().astype(np.int64), k),
            "index": np.tile(np.asarray(indices, dtype=object), n),
            "value": stack({key: got[key].value for key in indices}),
            "lower": stack(lower),
            "upper": stack(upper),
            "method": METHOD,
            "note": stack({key: got[key].note for key in indices}).astype(str).astype(object),
        }
    )
    return table
