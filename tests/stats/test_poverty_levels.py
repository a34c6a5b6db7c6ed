"""Tests of the FGT split by level (Foster, Greer & Thorbecke 1984, eq. 4: decomposability)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from explorer.data.model import DataError
from explorer.data.validate import validate
from explorer.stats import measures, poverty, poverty_levels, poverty_table
from explorer.stats.poverty_lines import parse_line


def unit_panel():
    rng = np.random.default_rng(4)
    regions = ["Ashford", "Brackenmoor", "Cindervale", "Dunmere"]
    county = {
        "Ashford": "Northmoor",
        "Brackenmoor": "Northmoor",
        "Cindervale": "Southfen",
        "Dunmere": "Southfen",
    }
    sizes = [300, 200, 400, 100]
    frame = pd.DataFrame(
        {
            "region": np.repeat(regions, sizes),
            "year": 2021,
            "income": rng.lognormal(7, 0.7, sum(sizes)),
            "weight": rng.uniform(0.5, 2.0, sum(sizes)),
        }
    )
    frame["county"] = frame["region"].map(county)
    return validate(frame, kind="units", levels=["county"]), frame


@pytest.mark.parametrize("index", ["fgt_0", "fgt_1", "fgt_2", "watts"])
def test_contributions_add_up_to_the_pooled_province_value(index):
    panel, frame = unit_panel()
    table = poverty_table.compute(panel, 900.0)
    split = poverty_levels.by_level(table, panel, index)
    total = split.loc[split["level"] == "province", "value"].iloc[0]
    # the province's value computed directly on all records pooled, at the same line
    pooled = poverty.measure_units(
        measures.sort_units(frame["income"], frame["weight"]), np.array([900.0])
    )[index][0, 0]
    assert total == pytest.approx(pooled, abs=1e-12)
    for level in ("district", "county"):
        part = split[split["level"] == level]
        assert math.fsum(part["contribution"]) == pytest.approx(total, abs=1e-12)
        assert math.fsum(part["percent"]) == pytest.approx(100.0, abs=1e-9)
    assert set(split.loc[split["level"] == "county", "group"]) == {"Northmoor", "Southfen"}


def test_sen_and_district_relative_lines_are_refused():
    panel, _ = unit_panel()
    table = poverty_table.compute(panel, 900.0)
    with pytest.raises(DataError, match="not additively decomposable"):
        poverty_levels.by_level(table, panel, "sen_poverty")
    own = poverty_table.compute(panel, parse_line("60%median", "district"))
    with pytest.raises(DataError, match="different lines"):
        poverty_levels.by_level(own, panel, "fgt_0")
