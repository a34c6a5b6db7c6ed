"""Tests of explorer.data.ids: district codes keep their leading zeros, and numeric ids are
matched to zero-padded codes only when that makes every id match.

Codes with leading zeros are how statistics offices write district codes (common
practice); spreadsheets and .dbf number fields drop the zeros, which is the case handled.
"""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import box

from explorer.data.ids import id_strings, leading_zero_clashes, match_ids
from explorer.data.load import load_panel
from explorer.data.model import DataError
from explorer.data.tables import read_table
from explorer.data.validate import validate


def squares(ids, attr="code") -> gpd.GeoDataFrame:
    return gpd.GeoDataFrame(
        {attr: ids}, geometry=[box(i, 0, i + 1, 1) for i in range(len(ids))], crs=4326
    )


def means(ids) -> pd.DataFrame:
    return pd.DataFrame(
        {"region": ids, "year": 2020, "mean_income": np.linspace(1e4, 2e4, len(ids))}
    )


def warnings_text(panel) -> str:
    return " | ".join(w.message for w in panel.warnings)


def test_codes_read_from_a_csv_keep_their_zeros_and_01_is_not_1(write_text):
    path = write_text("m.csv", "region,year,mean_income\n01,2020,5\n1,2020,6\n007,2020,7\n")
    assert read_table(path).region.tolist() == ["01", "1", "007"]
    panel = load_panel(path)
    assert panel.regions == ("007", "01", "1")
    assert "differ only by leading zeros ('1' and '01')" in warnings_text(panel)


def test_numeric_panel_ids_are_matched_to_zero_padded_boundary_codes_with_a_note():
    codes = [f"{i:03d}" for i in range(1, 13)]
    panel = validate(means(list(range(1, 13))), boundaries=squares(codes), boundary_file="b.shp")
    assert panel.regions == tuple(codes)
    assert sorted(panel.boundaries.region) == codes
    assert "zero-padded" in warnings_text(panel) and "1 -> 001" in warnings_text(panel)


def test_numeric_boundary_ids_are_matched_to_zero_padded_panel_codes():
    codes = [f"{i:02d}" for i in range(1, 11)]
    panel = validate(means(codes), boundaries=squares(np.arange(1, 11)), boundary_file="b.dbf")
    assert panel.regions == tuple(codes)
    assert sorted(panel.boundaries.region) == codes
    assert "holds the district ids as numbers" in warnings_text(panel)


def test_padding_is_not_used_when_it_leaves_some_id_unmatched():
    codes = [f"{i:02d}" for i in range(1, 10)]  # 10 has no code
    with pytest.raises(DataError, match="no attribute of the boundary file matches"):
        validate(means(list(range(1, 11))), boundaries=squares(codes))


def test_padding_is_not_used_when_a_number_fits_two_codes():
    assert match_ids(["1", "2"], {"code": ["01", "001", "02"]}).panel_ids == {}


def test_a_padded_match_beats_an_attribute_matching_a_few_ids_as_they_are():
    found = match_ids(["1", "2", "3"], {"objectid": ["1", "7", "8"], "code": ["01", "02", "03"]})
    assert found.column == "code" and found.panel_ids == {"1": "01", "2": "02", "3": "03"}


def test_id_strings_write_whole_floats_without_point_and_keep_text_as_is():
    raw = pd.Series([1.0, 2.5, None, " 007 "], dtype=object)
    assert id_strings(raw).tolist() == ["1", "2.5", None, "007"]
    assert id_strings(pd.Series([3.0, np.nan])).tolist() == ["3", None]


@settings(max_examples=80, deadline=None)
@given(st.lists(st.integers(0, 999), min_size=1, max_size=30, unique=True), st.integers(3, 5))
def test_padding_any_set_of_numbers_to_any_width_matches_back_exactly(numbers, width):
    """Property: numbers and the same numbers zero-padded match one to one."""
    ids = [str(n) for n in numbers]
    codes = [str(n).zfill(width) for n in numbers]
    found = match_ids(ids, {"code": codes})
    assert found.matched == len(ids)
    assert all(found.panel_ids.get(i, i) == i.zfill(width) for i in ids)


def test_leading_zero_clashes_group_codes_of_equal_value_only():
    assert leading_zero_clashes(["01", "1", "2", "002", "A1", "3"]) == [["1", "01"], ["2", "002"]]
