"""Spatial clustering of one district variable of a panel, for the map and the command line.

Joins the index table (or district means) for one year to the panel's boundaries, builds
the neighbour graph and runs the global and local statistics of :mod:`explorer.stats.spatial`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from explorer.data.model import DataError, Panel, Problem
from explorer.present.frames import district_means
from explorer.stats import indices, spatial


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
    if index == "mean_income":
        means = district_means(panel)
        rows = means[means["year"] == chosen]
        return rows.set_index("region")["mean_income"].astype(float), chosen
    if panel.kind == "means":
        raise DataError(
            [
                Problem(
                    "a means-only panel has no index per district",
                    fix="use --index mean_income, or a panel of brackets or units",
                )
            ]
        )
    table = indices.compute(panel, methods=(method,), indices=(index,))
    rows = table[(table["year"] == chosen) & (table["index"] == index)]
    return rows.set_index("region")["value"].astype(float), chosen


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
    """
    if panel.boundaries is None:
        raise DataError(
            [Problem("spatial statistics need district boundaries", fix="give --boundaries FILE")]
        )
    values, chosen = variable(panel, index, year, method)
    finite = values[np.isfinite(values.to_numpy())]
    shapes = panel.boundaries[panel.boundaries["region"].isin(finite.index)]
    if len(shapes) < 3:
        raise DataError(
            [
                Problem(
                    f"only {len(shapes)} districts have both a value and a boundary in {chosen}",
                    fix="spatial statistics need at least 3 such districts",
                )
            ]
        )
    neighbours = spatial.neighbours(shapes, kind=graph, k=k)
    ordered = finite.reindex(neighbours.ids.astype(str))
    stats = spatial.global_stats(ordered, neighbours, permutations=permutations, seed=seed)
    districts = spatial.district_table(
        ordered, neighbours, permutations=permutations, seed=seed, alpha=alpha
    )
    districts.insert(1, "year", chosen)
    # Districts of the panel with a boundary but no finite value this year: excluded
    # district-years, undefined indices, or a year missing for them.
    mapped = set(panel.regions) & set(panel.boundaries["region"])
    left_out = sorted(mapped - set(ordered.index))
    summary = {
        "variable": index,
        "year": chosen,
        "graph": graph,
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
        "permutations": permutations,
        "seed": seed,
        "left_out": ", ".join(left_out) or "none",
    }
    return SpatialResult(districts, stats, index, chosen, graph, summary)
