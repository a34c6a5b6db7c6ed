"""Welfare in money: mean, median, Sen's welfare and Atkinson's equally distributed equivalent.

Sen's welfare ``mu (1 - G)`` is the mean discounted by the Gini (Sen 1976); the equally
distributed equivalent income ``mu (1 - A(epsilon))`` is the income that, given to everyone,
gives the same social welfare as the actual distribution under inequality aversion
``epsilon`` (Atkinson 1970). Both need the mean, so they exist only where means are known.
For bracket panels the bounds follow from those of the Gini and Atkinson indices (a larger
index, a smaller welfare); the median of a bracket panel comes from the curve's slope at
``p = 1/2`` (``median = mu L'(1/2)``). Incomes are ordered across brackets, so a bracket's
incomes lie between the means of its neighbours: the median lies between the means of the
brackets on either side of the one holding p = 1/2 (of the two brackets meeting there when
1/2 is a bracket boundary), 0 and no upper bound at the ends.

References
----------
Sen, A. (1976). Real national income. *Review of Economic Studies* 43: 19–39.
Atkinson, A. B. (1970). On the measurement of inequality. *Journal of Economic Theory* 2:
244–263.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats import indices, lorenz
from explorer.stats.measures import SortedUnits

__all__ = ["DEFAULT_EPSILONS", "compute", "median_bounds", "weighted_median", "welfare_keys"]

DEFAULT_EPSILONS: tuple[float, ...] = (0.5, 1.0, 2.0)
_NO_MEAN_NOTE = "undefined: the district mean is not given"


def welfare_keys(epsilons=DEFAULT_EPSILONS) -> tuple[str, ...]:
    """The welfare keys: ``mean, median, sen_welfare, ede_<epsilon>``."""
    return ("mean", "median", "sen_welfare", *(f"ede_{e:g}" for e in epsilons))


def weighted_median(units: SortedUnits) -> np.ndarray:
    """Weighted median of every group: the smallest income with half the weight at or below.

    Where the half falls exactly between two units, the midpoint of their incomes
    (common practice).
    """
    w = units.weights
    if units.n_groups == 0:
        return np.zeros(0)
    total = np.add.reduceat(w, units.starts)
    cum = np.cumsum(w)
    before = np.concatenate([[0.0], cum])[units.starts]
    local = cum - before[units.codes]
    half = 0.5 * total[units.codes]
    reach = local >= half * (1 - 1e-12)
    # first unit of each group reaching half: the smallest position with reach in the group
    position = np.where(reach, np.arange(len(w)), len(w))
    first = np.minimum.reduceat(position, units.starts)
    ends = np.append(units.starts[1:], len(w)) - 1
    exact = np.isclose(local[np.minimum(first, ends)], half[np.minimum(first, ends)], rtol=1e-12)
    nxt = np.minimum(first + 1, ends)
    value = units.values[np.minimum(first, ends)]
    return np.where(exact & (nxt > first), 0.5 * (value + units.values[nxt]), value)


def median_bounds(P, L, mean) -> tuple[np.ndarray, np.ndarray]:
    """Bounds of the median from ordered brackets (module docstring)."""
    dp, dl = np.diff(P, axis=1), np.diff(L, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        s = np.where(dp > 0, dl / dp, 0.0)
    n, k = s.shape
    rows = np.arange(n)
    at = np.isclose(P, 0.5, rtol=0, atol=1e-12).any(axis=1)
    holding = np.clip(np.sum(P[:, 1:] < 0.5 - 1e-12, axis=1), 0, k - 1)  # bracket of 1/2
    left = np.where(at, holding, holding - 1)
    right = holding + 1
    padded = np.hstack([s, np.full((n, 1), np.inf)])
    low = np.where(left >= 0, s[rows, np.clip(left, 0, k - 1)], 0.0)
    high = padded[rows, np.clip(right, 0, k)]
    return mean * low, mean * high


def _table(keys_frame, names, value, lower, upper, method, note) -> pd.DataFrame:
    n, k = len(keys_frame), len(names)
    return pd.DataFrame(
        {
            "region": np.repeat(keys_frame["region"].astype(str).to_numpy(), k),
            "year": np.repeat(keys_frame["year"].to_numpy().astype(np.int64), k),
            "index": np.tile(np.asarray(names, dtype=object), n),
            "value": np.column_stack(value).ravel(),
            "lower": np.column_stack(lower).ravel(),
            "upper": np.column_stack(upper).ravel(),
            "method": method,
            "note": np.column_stack(note).ravel().astype(object),
        }
    )


def _from_index_rows(table, key, mean):
    rows = table[table["index"] == key]
    return (
        mean * (1 - rows["value"].to_numpy()),
        mean * (1 - rows["upper"].to_numpy()),
        mean * (1 - rows["lower"].to_numpy()),
        rows["note"].to_numpy(dtype=object),
    )


def _brackets(panel, methods, epsilons) -> pd.DataFrame:
    keys, _ = lorenz.panel_points(panel)
    first = panel.data.groupby(["region", "year"], sort=False)["mean_income"].first()
    mean = first.reindex(pd.MultiIndex.from_frame(keys)).to_numpy(dtype=float)
    wanted = ["gini", *(f"atkinson_{e:g}" for e in epsilons)]
    table = indices.compute(panel, methods, wanted)
    names = welfare_keys(epsilons)
    blocks = []
    n = len(keys)
    blank = np.full(n, "", dtype=object)
    low, high = np.full(n, np.nan), np.full(n, np.nan)
    for rows, P, L in lorenz.panel_points(panel)[1]:
        low[rows], high[rows] = median_bounds(P, L, mean[rows])
    for method in table["method"].unique():
        block = table[table["method"] == method]
        fits = lorenz.fit_panel(panel, method)
        median = mean * fits.slope([0.5])[:, 0]
        columns = [(mean, mean, mean, blank), (median, low, high, blank)]
        columns += [_from_index_rows(block, key, mean) for key in wanted]
        note = [np.where(np.isfinite(mean), c[3], _NO_MEAN_NOTE) for c in columns]
        value, lower, upper, _ = (list(x) for x in zip(*columns, strict=True))
        blocks.append(_table(keys, names, value, lower, upper, method, note))
    return pd.concat(blocks, ignore_index=True)


def _units(panel, epsilons) -> pd.DataFrame:
    from explorer.stats import measures

    data = panel.data
    units = measures.sort_units(
        data["income"].to_numpy(float),
        data["weight"].to_numpy(float),
        data[["region", "year"]].reset_index(drop=True),
    )
    wanted = ["gini", *(f"atkinson_{e:g}" for e in epsilons)]
    got = measures.compute(units, wanted)
    total = np.add.reduceat(units.weights, units.starts)
    mean = np.add.reduceat(units.weights * units.values, units.starts) / total
    n = units.n_groups
    nan = np.full(n, np.nan)
    value = [mean, weighted_median(units)] + [mean * (1 - got[k].value) for k in wanted]
    note = [np.full(n, "", dtype=object)] * 2 + [got[k].note for k in wanted]
    names = welfare_keys(epsilons)
    return _table(units.labels, names, value, [nan] * len(names), [nan] * len(names), "units", note)


def compute(panel, methods=("auto",), epsilons=DEFAULT_EPSILONS) -> pd.DataFrame:
    """The tidy welfare table of a panel: ``region, year, index, value, lower, upper, method, note``.

    Parameters
    ----------
    panel : explorer.data.model.Panel
    methods : str or sequence of str
        Lorenz methods for bracket panels.
    epsilons : sequence of float
        Inequality aversions of the equally distributed equivalents (``ede_<epsilon>``).

    Returns
    -------
    DataFrame
        For means panels only ``mean`` (the other measures need the distribution within
        districts, and the note says so).

    References
    ----------
    Sen (1976); Atkinson (1970) (module docstring).
    """
    epsilons = tuple(float(e) for e in epsilons)
    if any(not np.isfinite(e) or e < 0 for e in epsilons):
        raise fail("inequality aversion must be a number >= 0", "use e.g. 0.5, 1 or 2")
    methods = (methods,) if isinstance(methods, str) else tuple(methods)
    if panel.kind == "brackets":
        return _brackets(panel, methods, epsilons)
    if panel.kind == "units":
        return _units(panel, epsilons)
    data = panel.data
    mean = data["mean_income"].to_numpy(float)
    n = len(data)
    names = welfare_keys(epsilons)
    nan = np.full(n, np.nan)
    value = [mean] + [nan] * (len(names) - 1)
    why = "undefined: district means alone say nothing about the spread within districts"
    note = [np.full(n, "", dtype=object)] + [np.full(n, why, dtype=object)] * (len(names) - 1)
    keys = data[["region", "year"]].reset_index(drop=True)
    return _table(keys, names, value, [nan] * len(names), [nan] * len(names), "means", note)
