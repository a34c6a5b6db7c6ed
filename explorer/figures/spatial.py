"""Spatial clustering of one district variable: the map's cluster layer and ``rift spatial``.

Both go through :func:`explorer.figures.compute.clusters`, which builds the neighbour graph on
the districts that have a finite value only; the others are named, never silently dropped.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import DataError, Panel, Problem
from explorer.figures.compute import MAP_PERMUTATIONS, Compute, clusters
from explorer.figures.series import MEANS_FIGURES, means_figure
from explorer.figures.tables import district_means, names
from explorer.stats import indices, spatial

__all__ = [
    "NO_VALUE",
    "ClusterLayer",
    "SpatialResult",
    "cluster_layer",
    "for_panel",
    "moran_metrics",
    "variable",
]

#: The cluster of a district left out of the graph for want of a finite value.
NO_VALUE = "no value"
# Moran's I and local clusters need a few districts to mean anything.
_MIN_DISTRICTS = 3


@dataclass(frozen=True)
class ClusterLayer:
    """The map's local-cluster layer: one cluster per district, the global statistics.

    ``districts`` has a row for every district given, ``cluster`` is ``no value`` for those
    without a finite value (left out of the neighbour graph and named in ``notice``).
    """

    districts: pd.DataFrame
    overall: spatial.GlobalStats | None
    left_out: tuple[str, ...]
    notice: str


def _left_out_notice(panel: Panel, left_out: list[str], too_few: bool) -> str:
    if not left_out and not too_few:
        return ""
    label = names(panel).set_index("region")["name"]
    named = ", ".join(f"{label.get(r, r)} ({r})" for r in left_out[:12])
    more = f" and {len(left_out) - 12} more" if len(left_out) > 12 else ""
    text = (
        f"{len(left_out)} district(s) have no value for this layer and are drawn as "
        f"“{NO_VALUE}”, left out of the neighbour graph: {named}{more}."
        if left_out
        else ""
    )
    if too_few:
        text += f" Fewer than {_MIN_DISTRICTS} districts have a value: no clusters to test."
    return text.strip()


def cluster_layer(
    panel: Panel, values: pd.Series, compute: Compute, permutations: int = MAP_PERMUTATIONS
) -> ClusterLayer:
    """Local Moran clusters of ``values`` (indexed by region), gaps drawn as no value."""
    values = values.set_axis(values.index.astype(str)).astype(float)
    if panel.boundaries is not None:
        # Every mapped district of the panel gets a cluster, those without a row as well
        # (a district-year set aside has no row in the index table).
        known = set(map(str, panel.regions))
        mapped = [r for r in panel.boundaries["region"].astype(str) if r in known]
        values = values.reindex(list(dict.fromkeys([*values.index, *mapped])))
    finite = values[np.isfinite(values.to_numpy())]
    if panel.boundaries is not None:
        finite = finite[finite.index.isin(panel.boundaries["region"].astype(str))]
    left_out = [r for r in values.index if r not in finite.index]
    too_few = len(finite) < _MIN_DISTRICTS
    if too_few:
        local, overall = pd.DataFrame(columns=["region", "cluster"]), None
    else:
        local, overall = compute.clusters(finite, permutations)
    table = pd.DataFrame({"region": values.index}).merge(
        local.assign(region=local["region"].astype(str)), on="region", how="left"
    )
    table["cluster"] = table["cluster"].fillna(NO_VALUE).astype(str)
    return ClusterLayer(table, overall, tuple(left_out), _left_out_notice(panel, left_out, too_few))


def moran_metrics(overall: Any) -> tuple[tuple[str, str, str | None], ...]:
    """(label, figure, help) of the global Moran's I, as the map shows them above the layer."""
    moran = float(getattr(overall, "moran_i", np.nan))
    expected = float(getattr(overall, "expected", np.nan))
    p_value = float(getattr(overall, "p_value", np.nan))
    return (
        (
            "Global Moran's I",
            f"{moran:.3f}",
            "Above its no-clustering value means similar districts sit next to each other.",
        ),
        (
            "Expected Moran's I under no clustering",
            f"{expected:.3f}",
            "What Moran's I would be on average if the values were placed at random: "
            "-1/(n-1) for n districts (Cliff and Ord 1981).",
        ),
        (
            "p-value (permutations)",
            f"{p_value:.3f}",
            "The share of random placements of the values that cluster at least as much; "
            "small (below 0.05) means the clustering is unlikely to be chance.",
        ),
    )


@dataclass(frozen=True)
class SpatialResult:
    """Per-district clusters and the global statistics of one variable in one year."""

    districts: pd.DataFrame
    stats: spatial.GlobalStats
    variable: str
    year: int
    graph: str
    summary: dict = field(default_factory=dict)


def variable(
    panel: Panel, index: str, year: int | None, method: str = "auto"
) -> tuple[pd.Series, int]:
    """The chosen index (or ``mean_income``) per district in one year, indexed by region."""
    years = panel.years
    chosen = int(year) if year is not None else int(max(years))
    if chosen not in set(int(y) for y in years):
        raise DataError(
            [Problem(f"year {chosen} is not in the panel", fix=f"choose one of {list(years)}")]
        )
    if panel.kind == "means" and index in MEANS_FIGURES:
        rows = means_figure(panel, index)
        rows = rows[rows["year"] == chosen]
        return rows.set_index("region")["value"].astype(float), chosen
    if index == "mean_income" and panel.kind != "published":
        means = district_means(panel)
        rows = means[means["year"] == chosen]
        return rows.set_index("region")["mean_income"].astype(float), chosen
    if panel.kind == "means":
        raise DataError(
            [
                Problem(
                    "a means-only panel has no index per district",
                    fix="use --index mean_income, mean_ratio or mean_growth, or a panel of "
                    "brackets or units",
                )
            ]
        )
    if panel.kind == "published" and index not in set(panel.data["measure"]):
        raise DataError(
            [
                Problem(
                    f"the published figures hold no {index!r}",
                    fix="use --index "
                    + " or ".join(dict.fromkeys(panel.data["measure"].astype(str))),
                )
            ]
        )
    table = indices.compute(panel, methods=(method,), indices=(index,))
    rows = table[(table["year"] == chosen) & (table["index"] == index)]
    return rows.set_index("region")["value"].astype(float), chosen


def _summary(stats: spatial.GlobalStats, **facts: Any) -> dict[str, Any]:
    return {
        "variable": facts["variable"],
        "year": facts["year"],
        "graph": facts["graph"],
        "districts": stats.n,
        "moran_i": round(stats.moran_i, 6),
        "expected_i": round(stats.expected, 6),
        "z": round(stats.z, 4),
        "p_value": round(stats.p_value, 4),
        "spatial_gini": round(stats.gini, 6),
        "gini_neighbour_pairs": round(stats.gini_neighbours, 6),
        "gini_other_pairs": round(stats.gini_non_neighbours, 6),
        "gini_p_value": round(stats.gini_p_value, 4),
        "islands": ", ".join(stats.islands) or "none",
        "permutations": facts["permutations"],
        "seed": facts["seed"],
        "left_out": ", ".join(facts["left_out"]) or "none",
    }


def for_panel(
    panel: Panel,
    *,
    index: str = "gini",
    year: int | None = None,
    method: str = "auto",
    graph: str = "queen",
    k: int = 4,
    permutations: int = 999,
    seed: int = 0,
    alpha: float = 0.05,
) -> SpatialResult:
    """Moran's I, local clusters and the spatial Gini of one variable in one year.

    Districts without a finite value (excluded district-years, undefined indices) are left
    out of the graph and listed in the summary.

    References
    ----------
    Anselin, L. (1995). Local indicators of spatial association — LISA. *Geographical
    Analysis* 27: 93–115.
    Rey, S. J. and Smith, R. J. (2013). A spatial decomposition of the Gini coefficient.
    *Letters in Spatial and Resource Sciences* 6: 55–70.
    """
    if panel.boundaries is None:
        raise DataError(
            [Problem("spatial statistics need district boundaries", fix="give --boundaries FILE")]
        )
    values, chosen = variable(panel, index, year, method)
    finite = values[np.isfinite(values.to_numpy())]
    finite = finite[finite.index.astype(str).isin(panel.boundaries["region"].astype(str))]
    if len(finite) < _MIN_DISTRICTS:
        raise DataError(
            [
                Problem(
                    f"only {len(finite)} districts have both a value and a boundary in {chosen}",
                    fix="spatial statistics need at least 3 such districts",
                )
            ]
        )
    districts, stats = clusters(
        panel, finite, permutations, seed=seed, graph=graph, k=k, alpha=alpha
    )
    districts.insert(1, "year", chosen)
    # Districts of the panel with a boundary but no finite value this year: excluded
    # district-years, undefined indices, or a year missing for them.
    mapped = set(map(str, panel.regions)) & set(panel.boundaries["region"].astype(str))
    left_out = sorted(mapped - set(districts["region"].astype(str)))
    summary = _summary(
        stats,
        variable=index,
        year=chosen,
        graph=graph,
        permutations=permutations,
        seed=seed,
        left_out=left_out,
    )
    return SpatialResult(districts, stats, index, chosen, graph, summary)
