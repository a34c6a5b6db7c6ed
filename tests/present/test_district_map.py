"""The Map page's district map: the drawn spec stays the same between views, values joined by id.

Checked against the map as it was built before (``charts.choropleth`` of the features with
their values) and against Vega itself (vl-convert renders the live spec, so the lookup join,
the title read by ``data('meta')`` and the classes really reach the picture). The districts
are invented: a grid of squares, and a generated country of Voronoi cells for the payload.
"""

from __future__ import annotations

import json
import re

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import shapely
import vl_convert as vlc

from explorer.present import charts
from explorer.present.district_map import CLASS_SEPARATOR, DistrictMap

LABELS = dict(value_label="Gini", classes=["low", "high"], title="Gini, 2020", caption="Data: x")


def grid(n: int = 4) -> gpd.GeoDataFrame:
    cells = [shapely.box(-30 + i, -46 + j, -29 + i, -45 + j) for i in range(n) for j in range(n)]
    ids = [f"Q{i}{j}" for i in range(n) for j in range(n)]
    return gpd.GeoDataFrame(
        {"region": ids, "name": [f"Place {r}" for r in ids]}, geometry=cells, crs="EPSG:4326"
    )


def values(gdf: gpd.GeoDataFrame, shift: float = 0.0) -> pd.DataFrame:
    v = np.linspace(0.2, 0.5, len(gdf)) + shift
    return pd.DataFrame(
        {
            "region": gdf["region"],
            "value": v,
            "lower": v - 0.01,
            "upper": v + 0.01,
            "klass": np.where(v > 0.35, "high", "low"),
            "wide": False,
        }
    )


def _tables_as_records(spec: dict) -> dict:
    data = {
        k: json.loads(v.to_json(orient="records")) if isinstance(v, pd.DataFrame) else v
        for k, v in spec["datasets"].items()
    }
    return {**spec, "datasets": data}


def test_the_drawn_spec_is_the_same_between_views_only_the_tables_change():
    gdf = grid()
    outlines = charts.map_outlines(gdf)
    one = DistrictMap(outlines, values(gdf), **LABELS, selected=("Q00",))
    other = DistrictMap(
        outlines,
        values(gdf, 0.1),
        value_label="Theil T",
        classes=["a", "b", "c"],
        title="Theil T, 2019",
        caption=["Data: y", "second line"],
        selected=("Q11", "Q22"),
    )
    a, b = one.live_spec(), other.live_spec()
    assert a["datasets"]["districts"] is b["datasets"]["districts"]  # the same outlines
    without = {k: v for k, v in a.items() if k != "datasets"}
    assert without == {k: v for k, v in b.items() if k != "datasets"}
    assert not a["datasets"]["values"].equals(b["datasets"]["values"])
    meta = b["datasets"]["meta"].iloc[0]
    assert meta["title"] == "Theil T, 2019" and meta["caption"] == "Data: y\nsecond line"
    assert meta["classes"].split(CLASS_SEPARATOR) == ["a", "b", "c"]
    assert sorted(b["datasets"]["chosen"]["name"]) == ["Place Q11", "Place Q22"]


def test_the_live_tables_hold_what_the_former_map_put_on_its_features():
    gdf = grid()
    outlines = charts.map_outlines(gdf)
    drawn = DistrictMap(outlines, values(gdf), **LABELS, selected=("Q01",))
    rows = drawn.tables()["values"].set_index("region")
    former = charts.choropleth(
        charts.features_for_display(gdf, values(gdf)), **LABELS, selected=("Q01",)
    ).to_dict()
    for feature in former["datasets"][charts.GEO_DATA]:
        props = feature["properties"]
        row = rows.loc[props["region"]]
        for key in ("name", "county", "klass", "wide", "picked"):
            assert row[key] == props[key], key
        for key in ("value", "lower", "upper"):
            assert row[key] == pytest.approx(props[key], rel=1e-12)
    assert drawn.to_dict() == former  # downloads and the report: the map as before


def test_vega_draws_the_live_map_with_its_title_classes_and_caption():
    """Rendered by Vega (vl-convert): the lookup joins the classes, ``data('meta')``
    gives the title and the legend, the caption is drawn under the map."""
    gdf = grid()
    drawn = DistrictMap(charts.map_outlines(gdf), values(gdf), **LABELS, selected=("Q00",))
    svg = vlc.vegalite_to_svg(_tables_as_records(drawn.live_spec()), vl_version="6.4")
    texts = re.findall(r"<text[^>]*>(.*?)</text>", svg)
    assert "Gini, 2020" in texts and "low" in texts and "high" in texts
    assert any("Data: x" in t for t in texts) and "Place Q00" in texts
    # two classes of colour among the districts: the join reached every shape
    fills = set(re.findall(r'<path[^>]*aria-roledescription="geoshape"[^>]*fill="([^"]+)"', svg))
    assert len(fills) == 2


def _country(n: int, seed: int = 14) -> gpd.GeoDataFrame:
    """n invented Voronoi districts of a 6 x 4 degree rectangle in open ocean."""
    rng = np.random.default_rng(seed)
    origin = np.asarray([-128.0, -47.0])
    points = np.column_stack([rng.uniform(0, 6, n), rng.uniform(0, 4, n)]) + origin
    frame = shapely.box(*origin, *(origin + [6, 4]))
    cells = shapely.voronoi_polygons(shapely.multipoints(points), extend_to=frame)
    cells = shapely.intersection(np.asarray(shapely.get_parts(cells)), frame)
    return gpd.GeoDataFrame(
        {"region": [f"K{i:05d}" for i in range(len(cells))]}, geometry=cells, crs="EPSG:4326"
    )


@pytest.mark.slow
def test_the_map_of_3000_districts_sends_less_than_1_5_mb():
    """Bytes, not time: the outlines as JSON and the tables as Arrow stay under 1.5 MB."""
    gdf = _country(3000)
    drawn = DistrictMap(charts.map_outlines(gdf), values(gdf), **LABELS)
    sent = drawn.payload()
    assert sent["total"] < 1.5e6
    assert sent["tables"] < 0.3 * sent["spec"]  # what changes between views is the smaller part
