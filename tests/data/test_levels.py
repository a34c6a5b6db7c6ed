"""Tests of explorer.data.levels and of the levels ``validate`` and ``load_panel`` use.

The boundary file is made like an office's download: many attribute columns (areas, ids,
growth rates, log incomes, numeric zone codes, several region schemes). Rule checked, of
common practice for a hierarchy: a level puts every district in exactly one group, and a
level with as many groups as districts (or one group) splits nothing.
"""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import box

from explorer.data.levels import propose_levels, read_choice
from explorer.data.load import load_panel
from explorer.data.model import DataError
from explorer.data.validate import validate

N = 12  # districts of the invented province


def office_boundaries() -> gpd.GeoDataFrame:
    """Twelve invented districts with the attributes an office file carries."""
    rng = np.random.default_rng(7)
    codes = [f"D{i:02d}" for i in range(1, N + 1)]
    return gpd.GeoDataFrame(
        {
            "DIST_CODE": codes,
            "DIST_NAME": [f"Vale {i}" for i in range(1, N + 1)],
            "OBJECTID": np.arange(1, N + 1),
            "AREA_KM2": rng.uniform(50, 900, N).round(1),
            "SHAPE_Leng": rng.uniform(1e4, 9e4, N),
            "GROWTH_PCT": rng.normal(2, 1, N).round(2),
            "LOG_INC": np.log(rng.uniform(8e3, 3e4, N)),
            "ZONE_NUM": np.tile([1, 2, 3], 4),  # numbers that repeat: never a proposal
            "ZONE_TXT": [f"{z:02d}" for z in np.tile([1, 2, 3], 4)],  # numbers as text
            "REGION_A": np.repeat(["Norrowen", "Sudmarra", "Westerquay"], 4),
            "SUB_REGION": np.repeat(["Hills", "Coast", "Plain", "Moor"], 3),
            "SCHEME_7": [f"S{i % 7}" for i in range(N)],  # 7 groups > 12 / 2
            "COUNTRY": "Aldmark",  # one group
            "STAT_ID": [f"X{i:03d}" for i in range(N)],  # a text code unique per district
        },
        geometry=[box(i, 0, i + 1, 1) for i in range(N)],
        crs=4326,
    )


def means_table() -> pd.DataFrame:
    codes = [f"D{i:02d}" for i in range(1, N + 1)]
    return pd.DataFrame(
        {
            "region": np.repeat(codes, 2),
            "year": np.tile([2020, 2021], N),
            "mean_income": np.linspace(9_000, 21_000, 2 * N),
            "population": 1_000.0,
        }
    )


def test_only_the_sensible_text_schemes_are_proposed_from_an_office_boundary_file():
    bounds = office_boundaries().rename(columns={"DIST_CODE": "region"})
    proposals = propose_levels(means_table(), bounds)
    assert [(c.column, c.groups, c.source) for c in proposals] == [
        ("REGION_A", 3, "boundaries"),
        ("SUB_REGION", 4, "boundaries"),
    ]


def test_the_boundary_id_attribute_is_found_without_being_named():
    proposals = propose_levels(means_table(), office_boundaries())
    assert [c.column for c in proposals] == ["REGION_A", "SUB_REGION"]


def test_validate_takes_only_those_levels_by_default_outermost_first():
    panel = validate(means_table(), boundaries=office_boundaries(), boundary_file="b.gpkg")
    assert panel.levels == ("REGION_A", "SUB_REGION")
    h = panel.hierarchy.set_index("region")
    assert h.loc["D01", "REGION_A"] == "Norrowen" and h.loc["D12", "SUB_REGION"] == "Moor"
    assert list(panel.boundaries.columns) == [
        "region",
        "name",
        "REGION_A",
        "SUB_REGION",
        "geometry",
    ]


def test_load_panel_reads_a_geopackage_with_many_attributes_and_proposes_the_same(tmp_path):
    table = tmp_path / "means.csv"
    means_table().to_csv(table, index=False)
    gpkg = tmp_path / "districts.gpkg"
    office_boundaries().to_file(gpkg, driver="GPKG")
    panel = load_panel(table, gpkg)
    assert panel.levels == ("REGION_A", "SUB_REGION")


def test_chosen_levels_keep_the_planners_order_and_display_names():
    panel = validate(
        means_table(),
        boundaries=office_boundaries(),
        levels={"SUB_REGION": "Planning area", "REGION_A": "March"},
    )
    assert panel.levels == ("Planning area", "March")
    assert list(panel.hierarchy.columns) == ["region", "Planning area", "March"]
    assert panel.describe()["levels"] == {"Planning area": 4, "March": 3}
    assert "Planning area" in panel.boundaries.columns


def test_a_numeric_column_may_be_chosen_though_it_is_never_proposed():
    panel = validate(means_table(), boundaries=office_boundaries(), levels=["ZONE_NUM"])
    assert panel.levels == ("ZONE_NUM",)
    assert sorted(panel.hierarchy["ZONE_NUM"].unique()) == ["1", "2", "3"]


@pytest.mark.parametrize("column", ["STAT_ID", "COUNTRY", "DIST_NAME"])
def test_a_chosen_column_that_splits_nothing_is_refused_by_name(column):
    with pytest.raises(DataError, match=f"'{column}' cannot be a level"):
        validate(means_table(), boundaries=office_boundaries(), levels=[column])


def test_a_chosen_column_that_does_not_exist_is_refused_and_names_are_unique():
    with pytest.raises(DataError, match="level 'PROVINCE' is not a column"):
        validate(means_table(), boundaries=office_boundaries(), levels=["PROVINCE"])
    with pytest.raises(DataError, match="used twice"):
        validate(
            means_table(),
            boundaries=office_boundaries(),
            levels=[("REGION_A", "Area"), ("SUB_REGION", "Area")],
        )


def test_level_choices_read_from_a_list_pairs_a_mapping_or_text():
    assert read_choice(["a", "b"]).names == ("a", "b")
    assert read_choice({"a": "Zone"}).names == ("Zone",)
    assert read_choice([("a", "Zone"), "b"]).columns == ("a", "b")
    assert read_choice("region_a, zone").columns == ("region_a", "zone")
    assert read_choice(None) is None


@settings(max_examples=60, deadline=None)
@given(
    st.integers(4, 30).flatmap(
        lambda n: st.tuples(
            st.just(n),
            st.lists(st.integers(0, n - 1), min_size=n, max_size=n),
            st.booleans(),
        )
    )
)
def test_every_proposal_is_text_nests_the_districts_and_has_2_to_half_n_groups(case):
    """Property: whatever the grouping, a proposal obeys the rule; a grouping obeying the
    rule as text is proposed, and the same grouping as numbers is not."""
    n, groups, as_text = case
    table = pd.DataFrame({"region": [f"R{i}" for i in range(n)], "year": 2020})
    table["g"] = [f"G{g}" for g in groups] if as_text else groups
    proposals = propose_levels(table)
    distinct = len(set(groups))
    sensible = as_text and 2 <= distinct <= n / 2
    assert [c.column for c in proposals] == (["g"] if sensible else [])
    for c in proposals:
        assert c.groups == distinct


def test_a_column_varying_within_a_district_does_not_nest_and_is_not_proposed():
    table = means_table()
    table["zone"] = np.tile(["a", "b"], N)  # two values per district over the years
    assert propose_levels(table) == []
