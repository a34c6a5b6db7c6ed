"""The change of MLD (or Theil T) between two years, after Mookherjee and Shorrocks (1982).

References
----------
Mookherjee, D. & Shorrocks, A. F. (1982). A decomposition analysis of the trend in UK income
inequality. *Economic Journal* 92: 886-902.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any, NamedTuple

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats.decomposition.checks import ALL, _check_arrays
from explorer.stats.decomposition.ge import _ge_term
from explorer.stats.decomposition.panel_units import _level_labels, _panel_units, _Units

__all__ = ["change"]

_CHANGE_COMPONENTS = ("within", "population_within", "population_between", "relative_income")


class _YearGroups(NamedTuple):
    """One year's groups: population shares, means, means over the overall mean, own index."""

    share: np.ndarray
    mean: np.ndarray
    relative: np.ndarray
    inside: np.ndarray
    total: float  # the year's index over all units


def _group_stats(
    units: _Units, rows: np.ndarray, codes: np.ndarray, n: int, alpha: float
) -> _YearGroups | None:
    y, w, g = units.income[rows], units.weight[rows], codes[rows]
    pop = np.bincount(g, w, n)
    inc = np.bincount(g, w * y, n)
    if np.any(pop <= 0):
        return None
    mean = inc / pop
    inside = np.bincount(g, _ge_term(y / mean[g], w / pop[g], alpha), n)
    share = pop / pop.sum()
    total = float(_ge_term(y / (inc.sum() / pop.sum()), w / pop.sum(), alpha).sum())
    return _YearGroups(share, mean, mean / (inc.sum() / pop.sum()), inside, total)


def change(
    panel: Any,
    by: Sequence[str] = ("county",),
    index: str = "mld",
    year_from: int | None = None,
    year_to: int | None = None,
    method: str = "auto",
) -> pd.DataFrame:
    """Decompose the change of MLD (or Theil T) between two years by groups.

    Groups are the finest level in ``by`` (districts when ``by`` is empty). With bars for
    the average of the two years, p_k population shares, I_k the groups' own index,
    lambda_k = mu_k / mu and theta_k = p_k lambda_k, the MLD terms are

    - ``within``: sum p̄_k dI_k (change of inequality inside groups);
    - ``population_within``: sum Ī_k dp_k (population shift, within part);
    - ``population_between``: sum (λ̄_k - ln λ̄_k) dp_k (population shift, between part);
    - ``relative_income``: sum (θ̄_k - p̄_k) d ln mu_k (change of the groups' relative incomes);
    - ``residual``: the exact change minus the sum of the four (the approximation error).

    For Theil T, by the same steps on T = sum s_k T_k + sum p_k lambda_k ln lambda_k:
    ``within`` sum s̄_k dT_k, ``population_within`` sum T̄_k λ̄_k dp_k,
    ``population_between`` sum λ̄_k ln λ̄_k dp_k, ``relative_income``
    sum p̄_k (T̄_k + ln λ̄_k + 1) dλ_k. This Theil form is our analogue, not the paper's.

    Parameters
    ----------
    panel : Panel
        Any kind of panel (see :func:`explorer.stats.decompose.table`).
    by : sequence of str
        Higher levels, outermost first; the groups are those of the last one.
    index : {"mld", "theil_t"}
    year_from, year_to : int, optional
        The two years; default the panel's first and last.
    method : str
        Lorenz method for grouped data.

    Returns
    -------
    DataFrame
        Columns ``year, level, group, component, value, share`` with ``year`` the string
        ``"<from>-<to>"``; ``total`` is the exact change, ``share`` each term's share of it;
        per-group rows give each group's part of the four approximate terms.

    References
    ----------
    Mookherjee, D. & Shorrocks, A. F. (1982). A decomposition analysis of the trend in UK
    income inequality. *Economic Journal* 92: 886-902.
    """
    key = str(index).strip().lower()
    if key not in ("mld", "theil_t"):
        raise fail(
            f"the change over time is split for mld and theil_t only, not '{index}'.",
            "Choose mld or theil_t.",
        )
    alpha = 0.0 if key == "mld" else 1.0
    by = tuple(by)
    units = _panel_units(panel, method)
    _check_arrays(units.income, units.weight, alpha)
    year_from, year_to = _two_years(units, year_from, year_to)
    name, group = _change_groups(panel, units, by)
    codes, uniq = pd.factorize(group, sort=True)
    n = len(uniq)
    before = _group_stats(units, units.year == year_from, codes, n, alpha)
    after = _group_stats(units, units.year == year_to, codes, n, alpha)
    if before is None or after is None:
        raise fail(
            f"some {name} groups have no data in {year_from} or {year_to}.",
            "Compare years in which every group is present.",
            column=name,
        )
    terms = _change_terms(before, after, alpha)
    exact = after.total - before.total
    out = _change_frame(terms, exact, name, uniq, f"{year_from}-{year_to}")
    out.attrs["excluded"] = units.dropped
    return out


def _two_years(units: _Units, year_from: int | None, year_to: int | None) -> tuple[int, int]:
    """The years compared, the panel's first and last by default; both must have data."""
    years = np.unique(units.year)
    year_from = int(years[0]) if year_from is None else int(year_from)
    year_to = int(years[-1]) if year_to is None else int(year_to)
    for y in (year_from, year_to):
        if y not in years:
            raise fail(
                f"the panel has no data for {y}.",
                f"Choose years from {years[0]} to {years[-1]}.",
                column="year",
            )
    return year_from, year_to


def _change_groups(panel: Any, units: _Units, by: tuple[str, ...]) -> tuple[str, np.ndarray]:
    """The level the change is split by and each unit's group at it (joined paths if nested)."""
    if by:
        labels = _level_labels(panel, by, units.region)
        name = by[-1]
        group = (
            labels[-1]
            if len(labels) == 1
            else np.array(["/".join(t) for t in zip(*labels, strict=True)], dtype=object)
        )
    else:
        name, group = "region", units.region.astype(str)
    return name, group


def _change_terms(before: _YearGroups, after: _YearGroups, alpha: float) -> dict[str, np.ndarray]:
    """The four approximate terms per group from the two years' group statistics."""
    (p0, mu0, lam0, i0, _), (p1, mu1, lam1, i1, _) = before, after
    pb, ib, lb = (p0 + p1) / 2, (i0 + i1) / 2, (lam0 + lam1) / 2
    dp = p1 - p0
    if alpha == 0:
        theta = (p0 * lam0 + p1 * lam1) / 2
        terms = {
            "within": pb * (i1 - i0),
            "population_within": ib * dp,
            "population_between": (lb - np.log(lb)) * dp,
            "relative_income": (theta - pb) * (np.log(mu1) - np.log(mu0)),
        }
    else:
        sb = (p0 * lam0 + p1 * lam1) / 2
        terms = {
            "within": sb * (i1 - i0),
            "population_within": ib * lb * dp,
            "population_between": lb * np.log(lb) * dp,
            "relative_income": pb * (ib + np.log(lb) + 1.0) * (lam1 - lam0),
        }
    return terms


def _change_frame(
    terms: dict[str, np.ndarray], exact: float, name: str, uniq: np.ndarray, label: str
) -> pd.DataFrame:
    """The summary rows (total, the four terms, residual) then each group's part of the terms."""
    n = len(uniq)
    approx = sum(float(v.sum()) for v in terms.values())
    summary = pd.DataFrame(
        {
            "level": ["total", *[name] * (len(_CHANGE_COMPONENTS) + 1)],
            "group": ALL,
            "component": ["total", *_CHANGE_COMPONENTS, "residual"],
            "value": [exact, *(float(terms[c].sum()) for c in _CHANGE_COMPONENTS), exact - approx],
        }
    )
    per_group = pd.DataFrame(
        {
            "level": name,
            "group": np.tile(np.asarray(uniq, dtype=object).astype(str), len(_CHANGE_COMPONENTS)),
            "component": np.repeat(_CHANGE_COMPONENTS, n),
            "value": np.concatenate([terms[c] for c in _CHANGE_COMPONENTS]),
        }
    )
    out = pd.concat([summary, per_group], ignore_index=True)
    out.insert(0, "year", label)
    out["share"] = out["value"] / exact if exact != 0 else math.nan
    return out
