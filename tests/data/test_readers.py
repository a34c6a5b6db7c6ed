"""Tests of the readers: explorer.data.tables, .columns, .boundaries, .load and .demo
(table and boundary readers, column maps, load_panel, demo panels, safety limits). Every
file is written for real into tmp_path.

Outside references: pyogrio's shipped Natural Earth 1:110m countries
(naturalearth_lowres, Natural Earth, public domain), pyproj's Transformer for
reprojection, shapely for geometry repair and areas.
"""

from __future__ import annotations

import zipfile
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from pyproj import Transformer
from shapely.geometry import Point, Polygon, box

from explorer.data import boundaries, columns, demo, files, load, tables
from explorer.data.model import DataError

NATURAL_EARTH = (
    Path(pyogrio.__file__).parent
    / "tests"
    / "fixtures"
    / "naturalearth_lowres"
    / "naturalearth_lowres.shp"
)
# uniform incomes: L(p) = p^2 (derived: the integral of the quantile b u, over the mean b/2)
QUINTILES = np.diff(np.linspace(0, 1, 6) ** 2)


def means_csv(delimiter=",", decimal="."):
    rows = [("R1", 2020, "1234.5", 10), ("R2", 2020, "2000.25", 20), ("R3", 2021, "0.75", 5)]
    lines = [delimiter.join(["region", "year", "mean_income", "population"])]
    lines += [delimiter.join([r, str(y), m.replace(".", decimal), str(p)]) for r, y, m, p in rows]
    return "\n".join(lines) + "\n"


# --- tables ---------------------------------------------------------------------------


@pytest.mark.parametrize("delimiter", [",", ";", "\t", "|"])
def test_csv_delimiter_is_detected(write_text, delimiter):
    frame = tables.read_table(write_text("m.csv", means_csv(delimiter)))
    assert list(frame.columns) == ["region", "year", "mean_income", "population"]
    assert frame.mean_income.tolist() == [1234.5, 2000.25, 0.75]


def test_semicolon_csv_with_decimal_commas_and_thousands_points_reads_numbers(write_text):
    """Semicolons with decimal commas are a common statistical-office export (common practice)."""
    text = "region;year;mean_income;population\nR1;2020;1.234,5;10\nR2;2020;2000,25;20\nR3;2021;0,75;5\n"
    frame = tables.read_table(write_text("m.csv", text))
    assert frame.mean_income.tolist() == [1234.5, 2000.25, 0.75]
    assert frame.year.tolist() == [2020, 2020, 2021]


def test_utf8_bom_is_removed_from_the_first_column_name(write_text):
    frame = tables.read_table(write_text("m.csv", "\ufeff" + means_csv()))
    assert frame.columns[0] == "region"


def test_latin1_file_is_read_with_its_accented_names(write_text):
    text = "region,year,mean_income,name\nR1,2020,1.0,Vallée d'Ombrière\n"
    frame = tables.read_table(write_text("m.csv", text, encoding="latin-1"))
    assert frame.name.tolist() == ["Vallée d'Ombrière"]


def test_codes_with_leading_zeros_stay_text(write_text):
    frame = tables.read_table(
        write_text("m.csv", "region,year,mean_income\n007,2020,1\n012,2020,2\n")
    )
    assert frame.region.tolist() == ["007", "012"]


def test_index_is_file_line_minus_two_across_blank_lines(write_text):
    path = write_text("m.csv", "region,year,mean_income\nA,2020,1\n\nB,2020,x\n")
    frame = tables.read_table(path)
    assert frame.index.tolist() == [0, 2]
    panel = load.load_panel(path)
    (left_out,) = [p for p in panel.warnings if "left out" in p.message]
    assert left_out.row == 4  # B is on line 4 of the file


def test_text_in_a_numeric_column_keeps_the_text_for_the_message(write_text):
    path = write_text("m.csv", "region,year,mean_income\nA,2020,1.5\nB,2020,n.a.x\nC,2020,2\n")
    panel = load.load_panel(path)
    assert panel.excluded.region.tolist() == ["B"]
    assert "'n.a.x'" in panel.excluded.reason[0]


def test_parquet_round_trip(tmp_path):
    frame = pd.DataFrame({"region": ["A", "B"], "year": [2020, 2020], "mean_income": [1.5, 2.5]})
    frame.to_parquet(tmp_path / "m.parquet")
    got = tables.read_table(tmp_path / "m.parquet")
    pd.testing.assert_frame_equal(got.reset_index(drop=True), frame, check_dtype=False)


def test_excel_reads_the_first_sheet_or_the_chosen_one_and_names_sheets_when_missing(tmp_path):
    path = tmp_path / "book.xlsx"
    with pd.ExcelWriter(path) as writer:
        pd.DataFrame({"note": ["read me"]}).to_excel(writer, sheet_name="About", index=False)
        pd.DataFrame({"region": ["A"], "year": [2020], "mean_income": [3.5]}).to_excel(
            writer, sheet_name="Panel", index=False
        )
    assert list(tables.read_table(path).columns) == ["note"]
    frame = tables.read_table(path, sheet="Panel")
    assert frame.mean_income.tolist() == [3.5] and frame.year.tolist() == [2020]
    assert load.load_panel(path, sheet="Panel").kind == "means"
    with pytest.raises(DataError, match="no sheet 'Data'; its sheets are: About, Panel"):
        tables.read_table(path, sheet="Data")


def test_file_size_limit_refuses_large_files(write_text, monkeypatch):
    path = write_text("m.csv", means_csv())
    monkeypatch.setattr(files, "MAX_FILE_BYTES", 10)
    with pytest.raises(DataError, match="larger than the limit"):
        tables.read_table(path)


# --- column maps ----------------------------------------------------------------------


def test_column_map_parses_ours_equals_theirs():
    assert columns.parse_column_map("region=DistrictCode, year=Yr") == {
        "region": "DistrictCode",
        "year": "Yr",
    }
    with pytest.raises(DataError, match="has no '='"):
        columns.parse_column_map("region")


def test_column_map_renames_without_touching_the_input_and_names_unknown_sources():
    frame = pd.DataFrame({"DistrictCode": ["A"], "Yr": [2020], "mean_income": [1.0]})
    renamed = columns.apply_column_map(frame, {"region": "DistrictCode", "year": "Yr"})
    assert list(renamed.columns) == ["region", "year", "mean_income"]
    assert list(frame.columns) == ["DistrictCode", "Yr", "mean_income"]
    with pytest.raises(DataError, match="'Code'.*columns present: DistrictCode, Yr, mean_income"):
        columns.apply_column_map(frame, {"region": "Code"})


def test_load_panel_applies_a_column_map(write_text):
    path = write_text("m.csv", "DistrictCode;Yr;mean_income\nA;2020;1,5\nB;2020;2,5\n")
    panel = load.load_panel(path, column_map="region=DistrictCode,year=Yr")
    assert panel.data.mean_income.tolist() == [1.5, 2.5] and panel.name == "m"


# --- boundaries -----------------------------------------------------------------------


def two_squares(crs=4326, offset=(0.0, 0.0)):
    dx, dy = offset
    return gpd.GeoDataFrame(
        {"code": ["A", "B"], "dist_name": ["Ashmere", "Brackwater"], "county": ["N", "N"]},
        geometry=[box(dx, dy, dx + 1, dy + 1), box(dx + 1, dy, dx + 2, dy + 1)],
        crs=crs,
    )


def panel_csv(write_text, ids=("A", "B")):
    body = "".join(f"{r},2020,{v}\n" for r, v in zip(ids, (1.0, 2.0, 3.0), strict=False))
    return write_text("m.csv", "region,year,mean_income\n" + body)


def test_geojson_boundaries_match_panel_ids_and_keep_the_district_name(tmp_path, write_text):
    path = tmp_path / "b.geojson"
    two_squares().to_file(path, driver="GeoJSON")
    panel = load.load_panel(panel_csv(write_text), path)
    assert panel.boundaries.region.tolist() == ["A", "B"]
    assert panel.boundaries.name.tolist() == ["Ashmere", "Brackwater"]
    assert panel.describe()["boundaries"]["matched"] == 2


def test_reprojection_to_epsg4326_agrees_with_pyproj(tmp_path):
    """Coordinates are reprojected with pyproj; the reference is pyproj's Transformer."""
    path = tmp_path / "b.gpkg"
    two_squares(crs=3857, offset=(1_000_000.0, 2_000_000.0)).to_file(path, driver="GPKG")
    gdf = boundaries.read_boundaries(path)
    lon, lat = Transformer.from_crs(3857, 4326, always_xy=True).transform(1_000_000.0, 2_000_000.0)
    minx, miny, _, _ = gdf.total_bounds
    assert gdf.crs.to_epsg() == 4326
    assert minx == pytest.approx(lon, abs=1e-9) and miny == pytest.approx(lat, abs=1e-9)


def test_two_layer_geopackage_uses_the_first_polygon_layer_and_warns_or_takes_the_chosen_one(
    tmp_path,
):
    path = tmp_path / "two.gpkg"
    gpd.GeoDataFrame({"code": ["P"]}, geometry=[Point(0, 0)], crs=4326).to_file(
        path, layer="towns", driver="GPKG"
    )
    two_squares().to_file(path, layer="districts", driver="GPKG")
    gdf = boundaries.read_boundaries(path)
    assert gdf.code.tolist() == ["A", "B"]
    warning = gdf.attrs["problems"][0].message
    assert "several layers (towns, districts)" in warning and "'districts' was used" in warning
    with pytest.raises(DataError, match="Point geometries"):
        boundaries.read_boundaries(path, layer="towns")
    with pytest.raises(DataError, match="no layer 'roads'; its layers are: towns, districts"):
        boundaries.read_boundaries(path, layer="roads")


def zip_shapefile(tmp_path: Path, gdf, leave_out=()) -> Path:
    folder = tmp_path / "shp"
    folder.mkdir(exist_ok=True)
    gdf.to_file(folder / "districts.shp")
    path = tmp_path / "districts.zip"
    with zipfile.ZipFile(path, "w") as archive:
        for f in sorted(folder.iterdir()):
            if f.suffix not in leave_out:
                archive.write(f, f"districts/{f.name}")
    return path


def test_zipped_shapefile_is_read_in_place_without_extracting(tmp_path, write_text, snapshot_dir):
    path = zip_shapefile(tmp_path, two_squares())
    table = panel_csv(write_text, ids=("A", "B"))
    before = snapshot_dir(tmp_path)
    panel = load.load_panel(table, path)
    assert panel.boundaries.region.tolist() == ["A", "B"]
    after = snapshot_dir(tmp_path)
    assert after == before  # nothing extracted or written next to the archive


def test_zipped_shapefile_without_its_dbf_is_an_error(tmp_path):
    path = zip_shapefile(tmp_path, two_squares(), leave_out={".dbf"})
    with pytest.raises(DataError, match="lacks its .dbf file"):
        boundaries.read_boundaries(path)


def test_geoparquet_boundaries(tmp_path):
    path = tmp_path / "b.parquet"
    two_squares().to_parquet(path)
    gdf = boundaries.read_boundaries(path)
    assert shapely.equals(gdf.geometry.to_numpy(), two_squares().geometry.to_numpy()).all()


def test_crs_less_file_in_lonlat_range_is_taken_as_epsg4326_with_a_warning(tmp_path):
    shp = tmp_path / "noprj.shp"
    two_squares().to_file(shp)
    shp.with_suffix(".prj").unlink()
    gdf = boundaries.read_boundaries(shp)
    assert gdf.crs.to_epsg() == 4326
    assert "EPSG:4326 was assumed" in gdf.attrs["problems"][0].message


def test_crs_less_file_in_projected_range_asks_for_crs(tmp_path):
    shp = tmp_path / "projected.shp"
    two_squares(crs=3035, offset=(4_000_000.0, 3_000_000.0)).to_file(shp)
    shp.with_suffix(".prj").unlink()
    with pytest.raises(DataError) as info:
        boundaries.read_boundaries(shp)
    assert "declares no CRS" in str(info.value) and "EPSG:3035" in str(info.value)
    assert "--" not in info.value.problems[0].fix  # no command-line flag: the app shows it too
    gdf = boundaries.read_boundaries(shp, crs="EPSG:3035")
    assert gdf.crs.to_epsg() == 4326 and -180 <= gdf.total_bounds[0] <= 180


def test_invalid_polygons_are_repaired_and_counted(tmp_path):
    """A bow-tie is invalid; shapely.make_valid is the reference repair: the area after
    repair equals the reference's area and the geometry becomes valid."""
    bowtie = Polygon([(0, 0), (1, 1), (1, 0), (0, 1), (0, 0)])
    gdf = gpd.GeoDataFrame({"code": ["A", "B"]}, geometry=[bowtie, box(2, 0, 3, 1)], crs=4326)
    path = tmp_path / "b.gpkg"
    gdf.to_file(path, driver="GPKG")
    got = boundaries.read_boundaries(path)
    assert got.is_valid.all()
    assert got.geometry[0].area == pytest.approx(shapely.make_valid(bowtie).area)
    assert "1 invalid geometry was repaired" in got.attrs["problems"][0].message


def test_boundary_ids_that_do_not_match_are_an_error(tmp_path, write_text):
    path = tmp_path / "b.geojson"
    two_squares().to_file(path, driver="GeoJSON")
    with pytest.raises(DataError, match="no attribute of the boundary file matches"):
        load.load_panel(panel_csv(write_text, ids=("X", "Y")), path)
    with pytest.raises(DataError, match="has no attribute 'zone'"):
        load.load_panel(panel_csv(write_text), path, boundary_id="zone")
    chosen = load.load_panel(panel_csv(write_text, ids=("Ashmere",)), path, boundary_id="dist_name")
    assert chosen.boundaries.region.tolist() == ["Ashmere", "Brackwater"]


def test_natural_earth_countries_read_through_the_same_path_keyed_by_iso_a3(tmp_path):
    """The real boundary file shipped with pyogrio (Natural Earth 1:110m countries, public
    domain) with a means panel keyed by its iso_a3 attribute. Natural Earth codes
    several territories '-99'; the panel leaves them out, so they are boundary-only."""
    countries = pyogrio.read_dataframe(NATURAL_EARTH)
    known = countries[countries.iso_a3 != "-99"]
    panel_file = tmp_path / "countries.csv"
    pd.DataFrame(
        {
            "region": known.iso_a3,
            "year": 2017,
            "mean_income": known.gdp_md_est * 1e6 / known.pop_est.clip(lower=1),
            "population": known.pop_est,
        }
    ).to_csv(panel_file, index=False)
    panel = load.load_panel(panel_file, NATURAL_EARTH)
    summary = panel.describe()
    assert summary["boundaries"]["matched"] == len(known)
    assert summary["boundaries"]["boundary_only"] == ["-99"]
    assert panel.levels == ("continent",)  # from the boundary file: 8 groups, fewer than n
    assert panel.boundaries.crs.to_epsg() == 4326
    assert "merged" in " ".join(p.message for p in panel.warnings)  # the four '-99' parts
    # country areas unchanged by reading (no reprojection needed): shapely is the reference
    ref = countries.set_index("iso_a3").loc["BRA"].geometry.area
    got = panel.boundaries.set_index("region").loc["BRA"].geometry.area
    assert got == pytest.approx(ref, rel=1e-12)


# --- demo data and safety -----------------------------------------------------------


@pytest.mark.parametrize("kind", ["brackets", "units", "means"])
def test_demo_panels_load_with_their_boundaries_and_county_level(kind):
    table, bounds = demo.demo_paths(kind)
    assert table.exists() and bounds.exists()  # shipped in demo_data/
    panel = demo.demo_panel(kind)
    assert panel.kind == kind and panel.levels == ("county",)
    assert panel.describe()["boundaries"]["panel_only"] == []


def test_zip_with_too_many_entries_is_refused(tmp_path, monkeypatch):
    path = zip_shapefile(tmp_path, two_squares())
    monkeypatch.setattr(files, "MAX_ZIP_ENTRIES", 2)
    with pytest.raises(DataError, match="too many entries"):
        boundaries.read_boundaries(path)
