"""Tests of explorer.data.boundaries (Shapefile parts given together) and explorer.data.crs
(likely coordinate systems from the coordinates' range).

Outside references: pyproj's Transformer projects real longitude/latitude outlines into
each candidate system, so the ranges are checked against the projections themselves;
UTM and LAEA parameters as in Snyder (1987), *Map Projections: A Working Manual*, USGS
Professional Paper 1395.
"""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
from pyproj import Transformer
from shapely.geometry import box

from explorer.data.boundaries import read_boundaries
from explorer.data.crs import propose_crs
from explorer.data.load import load_panel
from explorer.data.model import DataError

PARTS = (".shp", ".shx", ".dbf", ".prj", ".cpg")


def districts(crs=4326, origin=(10.0, 50.0), size=0.1) -> gpd.GeoDataFrame:
    x, y = origin
    return gpd.GeoDataFrame(
        {"code": ["01", "02", "03"], "label": ["Olvanor", "Presk", "Umbrith"]},
        geometry=[box(x + i * size, y, x + (i + 1) * size, y + size) for i in range(3)],
        crs=crs,
    )


def write_shapefile(folder: Path, gdf: gpd.GeoDataFrame, stem="districts") -> dict[str, Path]:
    gdf.to_file(folder / f"{stem}.shp", encoding="utf-8")
    return {s: folder / f"{stem}{s}" for s in PARTS if (folder / f"{stem}{s}").exists()}


def test_the_parts_given_as_paths_read_as_the_shapefile_itself(tmp_path):
    parts = write_shapefile(tmp_path, districts())
    assert set(parts) == set(PARTS)
    together = read_boundaries(list(parts.values()))
    alone = read_boundaries(parts[".shp"])
    assert together["code"].tolist() == alone["code"].tolist() == ["01", "02", "03"]
    assert together.geometry.geom_equals(alone.geometry).all()
    assert together.crs.to_epsg() == 4326


def test_uploaded_parts_with_different_names_read_through_memory(tmp_path, snapshot_dir):
    parts = write_shapefile(tmp_path, districts(crs=3035, origin=(4_000_000, 3_000_000), size=500))
    uploads = [(f"upload-{i}{s}", p.read_bytes()) for i, (s, p) in enumerate(parts.items())]
    before = snapshot_dir(tmp_path)
    gdf = read_boundaries(uploads)
    assert snapshot_dir(tmp_path) == before  # nothing written beside the inputs
    lon, lat = Transformer.from_crs(3035, 4326, always_xy=True).transform(4_000_000, 3_000_000)
    np.testing.assert_allclose(gdf.total_bounds[:2], [lon, lat], atol=1e-3)
    assert gdf["label"].tolist() == ["Olvanor", "Presk", "Umbrith"]


@pytest.mark.parametrize("missing", [".dbf", ".shx", ".shp"])
def test_a_missing_required_part_is_named(tmp_path, missing):
    parts = write_shapefile(tmp_path, districts())
    given = [p for s, p in parts.items() if s != missing]
    with pytest.raises(DataError, match=f"lacks its \\{missing}"):
        read_boundaries(given)


def test_without_prj_the_parts_fall_back_to_the_coordinates_range(tmp_path):
    parts = write_shapefile(tmp_path, districts())
    gdf = read_boundaries([p for s, p in parts.items() if s != ".prj"])
    assert gdf.crs.to_epsg() == 4326
    assert "may not be longitude/latitude" in gdf.attrs["problems"][0].message


def test_a_file_that_is_not_a_shapefile_part_is_refused_by_name(tmp_path):
    parts = write_shapefile(tmp_path, districts())
    stray = tmp_path / "notes.txt"
    stray.write_text("x")
    with pytest.raises(DataError, match="'notes.txt' is not a part of a Shapefile"):
        read_boundaries([*parts.values(), stray])


def test_a_lone_shp_without_its_dbf_beside_it_says_which_part_is_missing(tmp_path):
    parts = write_shapefile(tmp_path, districts())
    parts[".dbf"].unlink()
    with pytest.raises(DataError, match=r"lacks its \.dbf"):
        read_boundaries(parts[".shp"])


def test_load_panel_takes_the_parts_of_a_shapefile(tmp_path):
    parts = write_shapefile(tmp_path, districts())
    table = tmp_path / "means.csv"
    pd.DataFrame(
        {"region": ["01", "02", "03"], "year": 2020, "mean_income": [1.0, 2.0, 3.0]}
    ).to_csv(table, index=False)
    panel = load_panel(table, list(parts.values()))
    assert panel.regions == ("01", "02", "03")
    assert panel.boundaries["name"].tolist() == ["Olvanor", "Presk", "Umbrith"]


def projected_bounds(epsg: int, lon=(10.0, 10.5), lat=(50.0, 50.4)) -> tuple:
    """Bounds of a real lon/lat box projected with pyproj into ``epsg``."""
    transform = Transformer.from_crs(4326, epsg, always_xy=True)
    xs, ys = transform.transform([lon[0], lon[1], lon[0], lon[1]], [lat[0], lat[0], lat[1], lat[1]])
    return min(xs), min(ys), max(xs), max(ys)


@pytest.mark.parametrize(
    ("epsg", "expected"),
    [(32632, "EPSG:326zz"), (32732, "EPSG:327zz"), (3035, "EPSG:3035"), (3857, "EPSG:3857")],
)
def test_projected_metres_are_never_proposed_as_lonlat_and_their_system_is_among_the_candidates(
    epsg, expected
):
    lat = (-34.4, -34.0) if epsg == 32732 else (50.0, 50.4)
    codes = [c.code for c in propose_crs(projected_bounds(epsg, lat=lat))]
    assert "EPSG:4326" not in codes
    assert expected in codes


def test_coordinates_in_lonlat_range_propose_lonlat_first_with_a_caution():
    first = propose_crs((10.0, 50.0, 10.5, 50.4))[0]
    assert first.code == "EPSG:4326" and "check" in first.reason


def test_a_projected_file_without_crs_names_the_likely_systems_and_no_command_flag(tmp_path):
    parts = write_shapefile(tmp_path, districts(crs=3035, origin=(4_000_000, 3_000_000), size=500))
    with pytest.raises(DataError) as info:
        read_boundaries([p for s, p in parts.items() if s != ".prj"])
    problem = info.value.problems[0]
    assert "EPSG:3035" in problem.message and "--" not in problem.fix
    gdf = read_boundaries([p for s, p in parts.items() if s != ".prj"], crs="EPSG:3035")
    assert gdf.crs.to_epsg() == 4326
