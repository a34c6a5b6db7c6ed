"""The Map and the District sheet of 3,000 districts x 20 years of deciles, figures level.

Usage: python benchmarks/big_map.py [--quick]

A seeded synthetic country (not real data): 3,000 districts as Voronoi cells of random
points in a square placed in open ocean (300 with --quick), grouped into 60 counties, with
exact lognormal decile shares, means and populations for 20 years. Timed, in this order:
one batched ``auto`` fit of the panel (the baseline), the three fits the index table is
built from in one pass and the index table of every district-year (three runs each,
interleaved; medians); the District sheet with
nothing computed before (cold); the Map's figures (the first, a change of year, a change of
index) and the District sheet again, with the whole-panel index table and the map outlines
kept as the app's cache keeps them; the map's payload (the live spec with its outlines as
JSON and its tables as Arrow) and the self-contained spec of downloads. The last line is
one JSON object: name, seconds, peak_memory_mb, ratios, figures.
"""

from __future__ import annotations

import argparse
import json
import resource
import statistics
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from scipy import special

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from explorer import figures  # noqa: E402
from explorer.data.validate import validate  # noqa: E402
from explorer.figures.compute import PlainCompute  # noqa: E402
from explorer.stats import indices, lorenz  # noqa: E402
from explorer.views import ViewState  # noqa: E402

#: The square's corner (degrees): open South Pacific, where no land is.
ORIGIN = (-128.0, -47.0)


def country(n: int, rng) -> gpd.GeoDataFrame:
    """n Voronoi districts of a 6 x 4 degree rectangle, in counties of n // 60 or more."""
    points = np.column_stack([rng.uniform(0, 6, n), rng.uniform(0, 4, n)]) + ORIGIN
    box = shapely.box(ORIGIN[0], ORIGIN[1], ORIGIN[0] + 6, ORIGIN[1] + 4)
    cells = shapely.voronoi_polygons(shapely.multipoints(points), extend_to=box)
    cells = shapely.intersection(np.asarray(shapely.get_parts(cells)), box)
    # each cell back to its point, so ids follow the points
    tree = shapely.STRtree(cells)
    owner = tree.query(shapely.points(points), predicate="within")
    order = np.empty(n, dtype=int)
    order[owner[0]] = owner[1]
    counties = np.floor(points[:, 0] - ORIGIN[0]).astype(int) * 10 + np.floor(
        (points[:, 1] - ORIGIN[1]) * 2.5
    ).astype(int)
    return gpd.GeoDataFrame(
        {
            "region": [f"K{i:05d}" for i in range(n)],
            "name": [f"District {i}" for i in range(n)],
            "county": [f"County {c:02d}" for c in counties],
        },
        geometry=cells[order],
        crs="EPSG:4326",
    )


def deciles(shapes: gpd.GeoDataFrame, years: range, rng) -> pd.DataFrame:
    ids = shapes["region"].to_numpy(dtype=object)
    n = len(ids) * len(years)
    sigma = rng.uniform(0.3, 1.0, n)
    p = np.linspace(0, 1, 11)
    curve = special.ndtr(special.ndtri(p)[None, :] - sigma[:, None])
    curve[:, 0], curve[:, -1] = 0.0, 1.0
    return pd.DataFrame(
        {
            "region": np.repeat(np.repeat(ids, len(years)), 10),
            "county": np.repeat(np.repeat(shapes["county"].to_numpy(dtype=object), len(years)), 10),
            "year": np.repeat(np.tile(np.asarray(years), len(ids)), 10),
            "bracket": np.tile(np.arange(1, 11), n),
            "pop_share": 0.1,
            "income_share": np.diff(curve, axis=1).ravel(),
            "population": np.repeat(rng.uniform(1e3, 1e5, n).round(), 10),
            "mean_income": np.repeat(rng.uniform(8e3, 4e4, n), 10),
        }
    )


def timed(function):
    start = time.perf_counter()
    out = function()
    return out, time.perf_counter() - start


@dataclass(frozen=True)
class KeptCompute(PlainCompute):
    """PlainCompute keeping the whole-panel index table and the map outlines, as the app's
    cache does once the Map has been drawn (what a click from the map to a sheet finds)."""

    kept: dict = field(default_factory=dict, compare=False)

    def indices(self, method, ci=None):
        key = ("indices", method, ci)
        if key not in self.kept:
            self.kept[key] = PlainCompute.indices(self, method, ci)
        return self.kept[key]

    def map_outlines(self):
        if "outlines" not in self.kept:
            self.kept["outlines"] = PlainCompute.map_outlines(self)
        return self.kept["outlines"]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    n = 300 if parser.parse_args().quick else 3000
    started = time.time()
    rng = np.random.default_rng(14)
    shapes = country(n, rng)
    frame = deciles(shapes, range(2006, 2026), rng)
    panel, validate_s = timed(lambda: validate(frame, boundaries=shapes, levels=["county"]))
    compute = PlainCompute(panel)
    # interleaved three times, medians taken: the machine's two cores are shared
    fit_runs, fits_runs, table_runs = [], [], []
    for _ in range(3):
        fit_runs.append(timed(lambda: lorenz.fit_panel(panel, "auto"))[1])
        # the three fits the table is built from (the bounds' two curves and auto), one pass
        fits_runs.append(
            timed(lambda: lorenz.fit_panel_methods(panel, ("linear", "upper", "auto")))[1]
        )
        table_runs.append(timed(lambda: indices.compute(panel, methods=("auto",)))[1])
    fit_s, fits_s, table_s = (statistics.median(r) for r in (fit_runs, fits_runs, table_runs))
    view = ViewState(year=2025)
    region = str(panel.regions[n // 2])
    sheet_view = view.replace(districts=(region,))
    _, sheet_cold_s = timed(lambda: figures.district(panel, sheet_view, compute))
    kept = KeptCompute(panel)
    first, atlas_s = timed(lambda: figures.atlas(panel, view, kept))
    _, year_s = timed(lambda: figures.atlas(panel, view.replace(year=2024), kept))
    _, index_s = timed(lambda: figures.atlas(panel, view.replace(index="theil_t"), kept))
    sent = first.chart.payload()
    spec_mb = len(json.dumps(first.chart.to_dict())) / 1e6
    _, sheet_s = timed(lambda: figures.district(panel, sheet_view, kept))
    found = {
        "districts": n,
        "district_years": int(panel.data.groupby(["region", "year"]).ngroups),
        "validate_s": round(validate_s, 2),
        "fit_s": round(fit_s, 3),
        "fits_of_the_table_s": round(fits_s, 3),
        "index_table_s": round(table_s, 3),
        "index_table_first_run_s": round(table_runs[0], 3),
        "map_figures_first_s": round(atlas_s, 3),
        "map_figures_year_change_s": round(year_s, 3),
        "map_figures_index_change_s": round(index_s, 3),
        "map_payload_mb": round(sent["total"] / 1e6, 3),
        "map_payload_spec_mb": round(sent["spec"] / 1e6, 3),
        "map_payload_tables_mb": round(sent["tables"] / 1e6, 3),
        "map_download_spec_mb": round(spec_mb, 3),
        "district_sheet_s": round(sheet_s, 3),
        "district_sheet_cold_s": round(sheet_cold_s, 3),
    }
    for key, value in found.items():
        print(f"{key:>28}: {value}")
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(
        json.dumps(
            {
                "name": "big_map" + ("-quick" if n < 3000 else ""),
                "seconds": round(time.time() - started, 1),
                "peak_memory_mb": round(peak, 1),
                "ratios": {
                    "index_table_over_fit": round(table_s / fit_s, 2),
                    "index_table_over_its_fits": round(table_s / fits_s, 2),
                    "assembly_over_fit": round((table_s - fits_s) / fit_s, 2),
                },
                "figures": found,
            }
        )
    )


if __name__ == "__main__":
    main()
