"""Tables holding the published index itself, and the scale it is written on."""

from __future__ import annotations

import pandas as pd

from explorer.data.office import read_office_table, recognise_published


def test_percent_from_the_header_and_the_cells() -> None:
    text = "District,Gini (%),Poverty rate,Top decile share\nA,31.5,12%,0.31\nB,28.0,9%,0.27\n"
    reading = read_office_table(text.encode(), "p.csv", year=2003)
    found = reading.published
    assert found.is_published
    assert found.scale_of("gini") == "percent"
    assert found.scale_of("poverty_rate") == "percent"
    assert found.scale_of("top10_share") == "proportion"
    assert reading.table["poverty_rate"].tolist() == [12.0, 9.0]


def test_scale_from_the_values_alone() -> None:
    table = pd.DataFrame(
        {
            "region": ["a", "b"],
            "year": [1, 1],
            "gini": [31.0, 44.0],
            "poverty_rate": [0.1, 0.3],
            "median_income": [100.0, 200.0],
        }
    )
    found = recognise_published(table)
    assert found.scale_of("gini") == "percent"
    assert found.scale_of("poverty_rate") == "proportion"
    assert found.scale_of("median_income") == "level"


def test_bracket_shares_are_not_published_figures() -> None:
    table = pd.DataFrame({"region": ["a"], "year": [1], "share_1": [0.1], "gini": [0.3]})
    assert not recognise_published(table).is_published
    means = pd.DataFrame({"region": ["a"], "year": [1], "mean_income": [5.0]})
    assert recognise_published(means).columns == ()
