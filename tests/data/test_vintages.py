"""Boundary vintages, the change table's checks and weights derived by overlay.

The province of Vellmark is invented: its districts Ashfold, Brennick, Corrow, Dunmere,
Elsby and Fallowmere, and every figure below, are made up for these tests.

Sources: Goodchild & Lam (1980), "Areal interpolation: a variant of the traditional spatial
problem", Geo-Processing 1: 297-312 (area weights: the share of a source zone's area in
each target zone); Snyder (1987), "Map Projections: A Working Manual", USGS Professional
Paper 1395, p. 77 (on the sphere the area of a latitude-longitude cell is
R^2 * dlon * (sin lat2 - sin lat1), so cells in one band of latitude have areas in the
ratio of their longitude spans).
"""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import shapely
from shapely.geometry import box

from explorer.data.model import DataError
from explorer.data.overlay import EQUAL_AREA_CRS, area_weights, dasymetric_weights
from explorer.data.vintages import (
    ChangeTable,
    Vintage,
    carry_edges,
    changes_from_frame,
    check_panel_ids,
    order_vintages,
    parse_spec,
    read_changes,
    read_vintage,
)

OLD = Vintage("vellmark_2000.geojson", 2000, ("Ashfold", "Brennick", "Corrow", "Dunmere"))
NEW = Vintage("vellmark_2011.geojson", 2011, ("Ashfold", "Corrow", "Elsby", "Fallowmere"))

# 2011: Ashfold loses a tenth to Corrow (a moved border), Brennick splits into Elsby and
# Fallowmere, Dunmere merges into Fallowmere.
GOOD = """year,from,to,weight,weight_kind
2011,Ashfold,Ashfold,0.9,area
2011,Ashfold,Corrow,0.1,area
2011,Brennick,Elsby,0.4,population
2011,Brennick,Fallowmere,0.6,population
2011,Dunmere,Fallowmere,1,
"""


def _problems(text: str, write_text, vintages=(OLD, NEW), name="changes.csv"):
    with pytest.raises(DataError) as caught:
        read_changes(write_text(name, text), vintages=vintages)
    return caught.value.problems


def test_a_plain_file_and_file_at_year_are_told_apart():
    # common practice: the year is the four digits after the last '@'
    assert parse_spec("old/vellmark.geojson") == ("old/vellmark.geojson", None)
    assert parse_spec("vellmark.geojson@2011") == ("vellmark.geojson", 2011)
    assert parse_spec("maps@home/vellmark.geojson@2004") == ("maps@home/vellmark.geojson", 2004)
    assert parse_spec("maps@home/vellmark.geojson") == ("maps@home/vellmark.geojson", None)


def test_a_good_change_table_is_read_with_its_lines_and_kinds(write_text):
    changes = read_changes(write_text("changes.csv", GOOD), vintages=(OLD, NEW))
    table = changes.table
    assert list(table["line"]) == [2, 3, 4, 5, 6]
    assert list(table["weight_kind"]) == ["area", "area", "population", "population", "stated"]
    assert changes.years == (2011,)


def test_the_change_table_is_read_from_a_workbook(tmp_path):
    frame = pd.read_csv(__import__("io").StringIO(GOOD))
    frame.loc[0, "weight"] = 0.8  # Ashfold's weights now sum to 0.9, on line 2
    path = tmp_path / "changes.xlsx"
    frame.to_excel(path, index=False)
    with pytest.raises(DataError) as caught:
        read_changes(path, vintages=(OLD, NEW))
    (problem,) = caught.value.problems
    assert (problem.file, problem.row, problem.column) == ("changes.xlsx", 2, "weight")
    assert "sum to 0.9" in problem.message


def test_weights_that_do_not_sum_to_one_say_the_sum(write_text):
    text = GOOD.replace("2011,Brennick,Fallowmere,0.6", "2011,Brennick,Fallowmere,0.55")
    (problem,) = _problems(text, write_text)
    assert problem.row == 4 and problem.column == "weight"
    assert "Brennick in 2011 sum to 0.95, not 1" in problem.message
    assert "1e-06" in problem.fix


def test_a_sum_within_the_tolerance_is_accepted(write_text):
    text = GOOD.replace("2011,Brennick,Fallowmere,0.6", "2011,Brennick,Fallowmere,0.6000005")
    read_changes(write_text("changes.csv", text), vintages=(OLD, NEW))


def test_a_weight_outside_zero_and_one_is_named(write_text):
    text = GOOD.replace("2011,Brennick,Elsby,0.4", "2011,Brennick,Elsby,1.4").replace(
        "2011,Brennick,Fallowmere,0.6", "2011,Brennick,Fallowmere,-0.4"
    )
    problems = _problems(text, write_text)
    outside = [p for p in problems if "outside [0, 1]" in p.message]
    assert [(p.row, p.column) for p in outside] == [(4, "weight"), (5, "weight")]
    assert "1.4" in outside[0].message and "-0.4" in outside[1].message


def test_ids_unknown_to_either_vintage_are_named(write_text):
    text = GOOD.replace("2011,Dunmere,Fallowmere,1", "2011,Dunmore,Fallowmere,1").replace(
        "2011,Brennick,Elsby,0.4", "2011,Brennick,Elsbie,0.4"
    )
    problems = _problems(text, write_text)
    unknown = {
        (p.row, p.column): p.message for p in problems if "is not in the boundaries" in p.message
    }
    assert "Dunmore" in unknown[(6, "from")] and "vellmark_2000.geojson" in unknown[(6, "from")]
    assert "Elsbie" in unknown[(4, "to")] and "vellmark_2011.geojson" in unknown[(4, "to")]


def test_a_district_coming_back_to_itself_is_a_cycle(write_text):
    vintages = (
        OLD,
        Vintage("vellmark_2005.geojson", 2005, ("Ashfold", "Elsby", "Corrow", "Dunmere")),
        Vintage("vellmark_2009.geojson", 2009, ("Ashfold", "Brennick", "Corrow", "Dunmere")),
    )
    text = "year,from,to,weight\n2005,Brennick,Elsby,1\n2009,Elsby,Brennick,1\n"
    problems = _problems(text, write_text, vintages)
    (cycle,) = [p for p in problems if "comes back to itself" in p.message]
    assert cycle.row == 2 and cycle.column == "to"
    assert "Brennick → Elsby (2005, line 2) → Brennick (2009, line 3)" in cycle.message


def test_a_border_moved_and_moved_back_is_no_cycle(write_text):
    # each district keeps part of itself, so none ends and none comes back
    text = (
        "year,from,to,weight\n2005,Ashfold,Ashfold,0.9\n2005,Ashfold,Corrow,0.1\n"
        "2009,Corrow,Corrow,0.95\n2009,Corrow,Ashfold,0.05\n"
    )
    table = read_changes(write_text("changes.csv", text)).table
    assert len(table) == 4


def test_a_target_with_no_source_and_a_lost_source_are_named(write_text):
    text = GOOD.replace("2011,Dunmere,Fallowmere,1,\n", "")
    text = text.replace("2011,Brennick,Elsby,0.4,population\n", "").replace(
        "2011,Brennick,Fallowmere,0.6", "2011,Brennick,Fallowmere,1"
    )
    problems = _problems(text, write_text)
    orphan = [p for p in problems if "has no source" in p.message]
    lost = [p for p in problems if "no row of 2011 says where it went" in p.message]
    assert [p.column for p in orphan] == ["to"] and "Elsby" in orphan[0].message
    assert [p.column for p in lost] == ["from"] and "Dunmere" in lost[0].message
    assert all(p.file == "changes.csv" for p in orphan + lost)


def test_a_change_year_with_no_vintage_is_named(write_text):
    text = GOOD.replace("2011,Dunmere", "2012,Dunmere")
    problems = _problems(text, write_text)
    assert any(
        "no boundary vintage starts in 2012" in p.message and p.row == 6 and p.column == "year"
        for p in problems
    )


def test_missing_columns_cells_and_pieces_listed_twice(write_text):
    (problem,) = _problems("year,from,to\n2011,Ashfold,Corrow\n", write_text)
    assert "weight" in problem.message and problem.row is None
    problems = _problems(GOOD + "2011,,Corrow,0.5\nyes,Dunmere,Fallowmere,1\n", write_text)
    where = {(p.row, p.column) for p in problems}
    assert (7, "from") in where and (8, "year") in where
    problems = _problems(GOOD + "2011,Ashfold,Corrow,0.1\n", write_text)
    assert any("listed twice" in p.message and p.row == 7 for p in problems)
    problems = _problems(
        GOOD.replace(",area\n2011,Ashfold,Corrow", ",acreage\n2011,Ashfold,Corrow"), write_text
    )
    assert any(p.column == "weight_kind" and "acreage" in p.message for p in problems)


def test_chained_changes_multiply_their_weights():
    # common practice: chaining two boundary changes composes their transition matrices
    frame = pd.DataFrame(
        {
            "year": [2005, 2005, 2011, 2011],
            "from": ["Brennick", "Brennick", "Elsby", "Corrow"],
            "to": ["Elsby", "Corrow", "Fallowmere", "Fallowmere"],
            "weight": [0.3, 0.7, 1.0, 1.0],
        }
    )
    changes = changes_from_frame(frame, "changes.csv")
    keys = pd.DataFrame(
        {"region": ["Brennick", "Corrow", "Elsby", "Fallowmere"], "year": [2003, 2003, 2007, 2012]}
    )
    edges = carry_edges(keys, changes, 2011)
    weights = {(r.year, r.region, r.target): r.weight for r in edges.itertuples()}
    transition_2005 = np.array([[0.3, 0.7], [0.0, 1.0]])  # Brennick, Corrow -> Elsby, Corrow
    transition_2011 = np.array([[1.0], [1.0]])  # Elsby, Corrow -> Fallowmere
    composed = transition_2005 @ transition_2011
    assert weights[(2003, "Brennick", "Fallowmere")] == pytest.approx(composed[0, 0])
    assert weights[(2003, "Corrow", "Fallowmere")] == pytest.approx(composed[1, 0])
    assert weights[(2007, "Elsby", "Fallowmere")] == 1.0
    assert weights[(2012, "Fallowmere", "Fallowmere")] == 1.0
    with pytest.raises(DataError, match="reverse changes"):
        carry_edges(keys, changes, 2007)


def test_vintages_are_ordered_and_two_starting_together_refused():
    plain = Vintage("a.geojson", None, ("Ashfold",))
    dated = order_vintages([NEW, plain], 1998)
    assert [v.year for v in dated] == [1998, 2011]
    with pytest.raises(DataError, match="two boundary vintages start in 1998"):
        order_vintages([plain, Vintage("b.geojson", None, ("Ashfold",))], 1998)


def test_panel_districts_missing_from_their_vintage_are_named():
    keys = pd.DataFrame({"region": ["Brennick", "Elsby", "Elsby"], "year": [2004, 2004, 2012]})
    (problem,) = check_panel_ids(keys, (OLD, NEW), "vellmark.csv")
    assert "Elsby has data in 2004" in problem.message and problem.column == "region"


# ------------------------------------------------------------------ overlay weights


def _grid(names, cells, crs="EPSG:4326"):
    return gpd.GeoDataFrame({"region": names}, geometry=[box(*c) for c in cells], crs=crs)


def _vintage(name, year, frame):
    return Vintage(name, year, tuple(frame["region"]), frame)


OLD_MAP = _grid(["Ashfold", "Brennick"], [(10.0, 50.0, 10.1, 50.1), (10.1, 50.0, 10.3, 50.1)])
# The border moved east to 10.13 and Brennick became Elsby (south) and Fallowmere (north).
NEW_MAP = gpd.GeoDataFrame(
    {"region": ["Ashfold", "Elsby", "Fallowmere"]},
    geometry=[
        box(10.0, 50.0, 10.13, 50.1),
        box(10.13, 50.0, 10.3, 50.04),
        box(10.13, 50.04, 10.3, 50.1),
    ],
    crs="EPSG:4326",
)


def test_area_weights_equal_overlay_areas_computed_directly():
    found = area_weights(
        _vintage("old.geojson", 2000, OLD_MAP), _vintage("new.geojson", 2011, NEW_MAP)
    )
    got = {(r.source, r.target): r.weight for r in found.table.itertuples()}
    # the reference: every pair's intersection area in the equal-area CRS, by shapely
    old = OLD_MAP.to_crs(EQUAL_AREA_CRS)
    new = NEW_MAP.to_crs(EQUAL_AREA_CRS)
    expected = {}
    for s, sg in zip(old["region"], old.geometry, strict=True):
        for t, tg in zip(new["region"], new.geometry, strict=True):
            piece = shapely.intersection(sg, tg).area
            if piece > 0:
                expected[(s, t)] = piece / sg.area
    assert got.keys() == expected.keys()
    for key, value in expected.items():
        assert got[key] == pytest.approx(value, rel=1e-9)
    # Snyder (1987): in one band of latitude, areas are in the ratio of longitude spans
    assert got[("Brennick", "Ashfold")] == pytest.approx(0.03 / 0.2, rel=1e-9)
    band = (np.sin(np.radians(50.04)) - np.sin(np.radians(50.0))) / (
        np.sin(np.radians(50.1)) - np.sin(np.radians(50.0))
    )
    # EPSG:6933 is on the ellipsoid, where the band ratio differs from the sphere's by the
    # authalic latitude's correction (Snyder 1987, p. 16): about 1e-5 here
    assert got[("Brennick", "Elsby")] == pytest.approx(band * 0.17 / 0.2, rel=1e-4)
    assert set(found.table["weight_kind"]) == {"area"}
    assert found.table.groupby("source")["weight"].sum().to_numpy() == pytest.approx(1.0)


def test_slivers_are_left_out_and_counted():
    # Ashfold's new border is off by 0.00005 degrees: a sliver of 0.05 % of Brennick
    shifted = NEW_MAP.copy()
    shifted.geometry = [
        box(10.0, 50.0, 10.10005, 50.1),
        box(10.10005, 50.0, 10.3, 50.04),
        box(10.10005, 50.04, 10.3, 50.1),
    ]
    found = area_weights(
        _vintage("old.geojson", 2000, OLD_MAP), _vintage("new.geojson", 2011, shifted)
    )
    assert ("Brennick", "Ashfold") not in set(
        zip(found.table["source"], found.table["target"], strict=True)
    )
    (note,) = found.warnings
    assert note.message.startswith("1 sliver(s) below 0.1%")
    assert found.table.groupby("source")["weight"].sum().to_numpy() == pytest.approx(1.0)
    kept = area_weights(
        _vintage("old.geojson", 2000, OLD_MAP), _vintage("new.geojson", 2011, shifted), sliver=0.0
    )
    assert kept.warnings[0].message.startswith("0 sliver(s)")


def test_dasymetric_weights_are_population_shares_of_the_pieces():
    # common practice (dasymetric mapping): a source's weight in each piece is the share of
    # its population living there; points are counted where they lie
    points = gpd.GeoDataFrame(
        {"population": [120.0, 30.0, 500.0, 250.0, 250.0]},
        geometry=gpd.points_from_xy(
            [10.05, 10.12, 10.11, 10.2, 10.25], [50.05, 50.05, 50.02, 50.02, 50.08]
        ),
        crs="EPSG:4326",
    )
    found = dasymetric_weights(
        _vintage("old.geojson", 2000, OLD_MAP),
        _vintage("new.geojson", 2011, NEW_MAP),
        points,
        "population",
    )
    got = {(r.source, r.target): r.weight for r in found.table.itertuples()}
    assert got[("Ashfold", "Ashfold")] == pytest.approx(1.0)
    brennick = 30 + 500 + 250 + 250
    assert got[("Brennick", "Ashfold")] == pytest.approx(530 / brennick)
    assert got[("Brennick", "Elsby")] == pytest.approx(250 / brennick)
    assert got[("Brennick", "Fallowmere")] == pytest.approx(250 / brennick)
    assert set(found.table["weight_kind"]) == {"population"}


def test_a_source_with_no_population_in_the_finer_layer_falls_back_to_area():
    points = gpd.GeoDataFrame(
        {"dwellings": [10.0]}, geometry=gpd.points_from_xy([10.05], [50.05]), crs="EPSG:4326"
    )
    found = dasymetric_weights(
        _vintage("old.geojson", 2000, OLD_MAP),
        _vintage("new.geojson", 2011, NEW_MAP),
        points,
        "dwellings",
        kind="dwellings",
    )
    brennick = found.table[found.table["source"] == "Brennick"]
    assert set(brennick["weight_kind"]) == {"area"}
    area = area_weights(
        _vintage("old.geojson", 2000, OLD_MAP), _vintage("new.geojson", 2011, NEW_MAP)
    )
    expected = area.table[area.table["source"] == "Brennick"]["weight"].to_numpy()
    assert brennick["weight"].to_numpy() == pytest.approx(expected)
    assert any("hold no dwellings" in w.message and "Brennick" in w.message for w in found.warnings)


def test_a_vintage_file_is_read_with_its_year_and_ids(tmp_path: Path):
    path = tmp_path / "vellmark_2011.geojson"
    NEW_MAP.rename(columns={"region": "DIST_CD"}).to_file(path, driver="GeoJSON")
    vintage = read_vintage(f"{path}@2011", ids_hint={"Elsby", "Ashfold"})
    assert vintage.year == 2011 and vintage.file == "vellmark_2011.geojson"
    assert vintage.ids == ("Ashfold", "Elsby", "Fallowmere")
    with pytest.raises(DataError, match="no attribute 'CODE'"):
        read_vintage(str(path), boundary_id="CODE")


def test_a_derived_table_is_a_change_table():
    found = area_weights(
        _vintage("old.geojson", 2000, OLD_MAP), _vintage("new.geojson", 2011, NEW_MAP)
    )
    assert isinstance(found, ChangeTable) and found.years == (2011,)


def test_a_finer_layer_of_small_areas_is_split_by_area_inside_each_small_area():
    # common practice (areal weighting inside the finer unit, Goodchild & Lam 1980): a small
    # area's population is shared over the pieces it overlaps in proportion to area
    blocks = gpd.GeoDataFrame(
        {"population": [400.0, 600.0]},
        geometry=[box(10.1, 50.0, 10.16, 50.04), box(10.16, 50.0, 10.3, 50.1)],
        crs="EPSG:4326",
    )
    found = dasymetric_weights(
        _vintage("old.geojson", 2000, OLD_MAP),
        _vintage("new.geojson", 2011, NEW_MAP),
        blocks,
        "population",
        sliver=0.0,
    )
    got = {(r.source, r.target): r.weight for r in found.table.itertuples()}
    # block 1 lies across the moved border at 10.13, half of it (by longitude, one band of
    # latitude: Snyder 1987) in Ashfold, half in Elsby; block 2 splits by latitude band
    lower = np.sin(np.radians(50.04)) - np.sin(np.radians(50.0))
    whole = np.sin(np.radians(50.1)) - np.sin(np.radians(50.0))
    elsby = 200 + 600 * lower / whole
    assert got[("Brennick", "Ashfold")] == pytest.approx(200 / 1000, rel=1e-4)
    assert got[("Brennick", "Elsby")] == pytest.approx(elsby / 1000, rel=1e-4)
    assert got[("Brennick", "Fallowmere")] == pytest.approx(1 - (200 + elsby) / 1000, rel=1e-4)
    # Ashfold holds no block: its weights fall back to area
    assert set(found.table.loc[found.table["source"] == "Ashfold", "weight_kind"]) == {"area"}
