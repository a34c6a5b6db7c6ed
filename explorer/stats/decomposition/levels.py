"""The nested levels table: one index decomposed for every year of a panel, as a tidy table."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import fail
from explorer.stats.decomposition.checks import ALL, _check_arrays, parse_ge_alpha
from explorer.stats.decomposition.dagum import dagum_split
from explorer.stats.decomposition.ge import _ge_tree
from explorer.stats.decomposition.panel_units import _level_labels, _panel_units, _Units, _years

__all__ = ["table"]


def _ge_table(
    units: _Units, labels: list[np.ndarray], names: list[str], alpha: float
) -> pd.DataFrame:
    years, root = _years(units)
    factor = [pd.factorize(lab, sort=True) for lab in labels]
    codes = [f[0] for f in factor]
    _check_arrays(units.income, units.weight, alpha)
    tree = _ge_tree(units.income, units.weight, root, codes, alpha)
    frames = [
        pd.DataFrame(
            {
                "year": years,
                "level": "total",
                "group": ALL,
                "component": "total",
                "value": tree.total,
            }
        )
    ]
    for k, name in enumerate(names):
        frames.append(
            pd.DataFrame(
                {
                    "year": years,
                    "level": name,
                    "group": ALL,
                    "component": "between",
                    "value": tree.components[k],
                }
            )
        )
        frames.append(
            pd.DataFrame(
                {
                    "year": years[tree.node_root[k]],
                    "level": name,
                    "group": np.asarray(factor[k][1], dtype=object)[tree.node_codes[k][:, -1]],
                    "component": "between",
                    "value": tree.between_nodes[k],
                }
            )
        )
    if units.has_within:
        finest = names[-1]
        frames.append(
            pd.DataFrame(
                {
                    "year": years,
                    "level": finest,
                    "group": ALL,
                    "component": "within",
                    "value": tree.components[-1],
                }
            )
        )
        frames.append(
            pd.DataFrame(
                {
                    "year": years[tree.node_root[-1]],
                    "level": finest,
                    "group": np.asarray(factor[-1][1], dtype=object)[tree.node_codes[-1][:, -1]],
                    "component": "within",
                    "value": tree.within_nodes,
                }
            )
        )
    out = pd.concat(frames, ignore_index=True)
    totals = pd.Series(tree.total, index=years)
    with np.errstate(divide="ignore", invalid="ignore"):
        out["share"] = out["value"].to_numpy() / totals.reindex(out["year"]).to_numpy()
    return out


def _gini_table(units: _Units, labels: np.ndarray, name: str) -> pd.DataFrame:
    years, root = _years(units)
    frames = []
    for r, year in enumerate(years):  # one call per year; each call is vectorised over groups
        rows = root == r
        split = dagum_split(units.income[rows], units.weight[rows], labels[rows])
        group = np.asarray(split.groups, dtype=object)
        parts = [("total", "total", ALL, split.total)]
        parts += [
            (name, c, ALL, v)
            for c, v in zip(("within", "between", "overlap"), split.components(), strict=True)
        ]
        frames.append(pd.DataFrame(parts, columns=["level", "component", "group", "value"]))
        for comp, values in (
            ("within", split.within_groups),
            ("between", split.between_groups),
            ("overlap", split.overlap_groups),
        ):
            frames.append(
                pd.DataFrame({"level": name, "component": comp, "group": group, "value": values})
            )
        frames[-4:] = [
            f.assign(year=year, share=f["value"] / split.total if split.total else np.nan)
            for f in frames[-4:]
        ]
    out = pd.concat(frames, ignore_index=True)
    return out[["year", "level", "group", "component", "value", "share"]]


def table(
    panel: Any, by: Sequence[str] = ("county",), index: str = "theil_t", method: str = "auto"
) -> pd.DataFrame:
    """Decomposition of one index for every year of a panel, as a tidy table.

    Parameters
    ----------
    panel : Panel
        Units are used directly; grouped data go through :func:`pseudo_units` with the
        Lorenz ``method``; a means-only panel treats each district as one unit at its mean,
        weighted by population when given, so only between-district parts exist.
    by : sequence of str
        Higher levels, outermost first (columns of ``panel.hierarchy``). Districts
        (``region``) are always the finest level. For the Gini, at most one level: Dagum's
        split is between the groups of that level (of districts when ``by`` is empty).
    index : str
        ``theil_t``, ``mld``, ``ge_<alpha>`` or ``gini``.
    method : str
        Lorenz method for grouped data.

    Returns
    -------
    DataFrame
        Columns ``year, level, group, component, value, share``. Rows with group
        ``"(all)"`` other than the total partition the total: for GE indices, ``between``
        at each level in ``by`` (between its groups inside their parents), ``between`` at
        ``region`` (districts inside their finest group) and ``within`` at ``region``
        (inside districts); for the Gini, ``within``, ``between`` and ``overlap`` at the
        chosen level. Other rows are per-group contributions. District-years left out
        (invalid Lorenz fits, missing means) are listed in ``attrs["excluded"]``.

    References
    ----------
    Shorrocks, A. F. (1980). The class of additively decomposable inequality measures.
    *Econometrica* 48: 613-625.
    Dagum, C. (1997). A new approach to the decomposition of the Gini income inequality
    ratio. *Empirical Economics* 22: 515-531.
    """
    by = tuple(by)
    key = str(index).strip().lower()
    units = _panel_units(panel, method)
    if units.income.size == 0:
        raise fail("the panel has no district-years left to decompose.", "Check the data.")
    labels = _level_labels(panel, by, units.region)
    if key == "gini":
        if len(by) > 1:
            raise fail(
                "the Gini splits (after Dagum) one level at a time; several levels were asked.",
                "Choose one level, or a GE index (theil_t, mld) for a nested split.",
            )
        if units.has_within or by:
            group = labels[0] if by else units.region.astype(str)
            out = _gini_table(units, group, by[0] if by else "region")
        else:
            raise fail(
                "a means-only panel has one value per district, so there is nothing to split "
                "the between-district Gini into.",
                "Choose a higher level (for example county) to split by.",
            )
    else:
        alpha = parse_ge_alpha(key)
        out = _ge_table(units, [*labels, units.region.astype(str)], [*by, "region"], alpha)
    out["year"] = out["year"].astype(np.int64)
    out.attrs["excluded"] = units.dropped
    return out.reset_index(drop=True)
