"""The Breakdown's poverty split: each county's and district's share of the province's poverty.

FGT(α) of a population is the population-weighted mean of its parts' at one line (Foster, J.,
Greer, J. & Thorbecke, E. 1984, "A class of decomposable poverty measures", *Econometrica* 52:
761–766, additive decomposability), so the contributions add up to the province's measure,
which is checked here against the headcount of all the demo's household records pooled
(pandas, not the project's code).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from explorer import figures
from explorer.data import demo_panel
from explorer.figures.compute import PlainCompute
from explorer.views import ViewState

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests" / "app"))
LINE = 20_000.0


@pytest.fixture(scope="module")
def units():
    return demo_panel("units")


def test_the_split_adds_up_to_the_pooled_headcount_of_the_records(units):
    year = int(units.years[-1])
    view = ViewState(dataset="demo-households", year=year, poverty_line="20000", index="fgt_0")
    split = figures.poverty_split(units, view, PlainCompute(units))
    records = pd.read_csv(ROOT / "demo_data" / "households.csv", dtype={"region": str})
    rows = records[records["year"] == year]
    pooled = float(rows.loc[rows["income"] < LINE, "weight"].sum() / rows["weight"].sum())
    assert split.total == pytest.approx(pooled, abs=1e-12)
    for level, group in split.table.groupby("level"):
        assert group["contribution"].sum() == pytest.approx(pooled, abs=1e-12), level
        assert group["percent"].sum() == pytest.approx(100.0, abs=1e-9), level
    county = split.table[split.table["level"] == "County"].iloc[0]
    own = rows[
        rows["region"].isin(
            units.hierarchy.loc[units.hierarchy["county"] == county["group"], "region"]
        )
    ]
    headcount = own.loc[own["income"] < LINE, "weight"].sum() / own["weight"].sum()
    assert county["value"] == pytest.approx(headcount, abs=1e-12)


def test_a_line_of_each_districts_own_median_is_refused_in_words(units):
    view = ViewState(year=int(units.years[-1]), relative_to="district")
    split = figures.poverty_split(units, view, PlainCompute(units))
    assert split.table is None and "different lines" in split.notice


def test_district_means_say_that_poverty_cannot_be_measured():
    panel = demo_panel("means")
    split = figures.poverty_split(panel, ViewState(dataset="demo-means"), PlainCompute(panel))
    assert split.table is None and "cannot be measured from district means alone" in split.notice


def test_the_sen_index_is_not_split_and_the_headcount_is_instead(units):
    view = ViewState(year=int(units.years[-1]), index="sen_poverty")
    split = figures.poverty_split(units, view, PlainCompute(units))
    assert split.index == "fgt_0"


def test_the_breakdown_page_shows_where_the_poverty_lies(tmp_path, monkeypatch):
    from app_helpers import APP, dataframe, page, run
    from streamlit.testing.v1 import AppTest

    monkeypatch.setenv("RIFT_DATA", str(tmp_path / "workspace"))
    app = AppTest.from_file(str(APP), default_timeout=120)
    app.query_params.update({"ix": "fgt_1"})
    run(app)
    app.switch_page(page("breakdown"))
    run(app)
    assert "Where the poverty lies" in [h.value for h in app.subheader]
    table = dataframe(app, "poverty_split_table")
    counties = table[table["level"] == "County"]
    assert np.isclose(counties["percent"].sum(), 100.0)


def test_the_report_carries_poverty_by_district_and_where_it_lies(units):
    """The report's poverty table holds the poverty table's values, and its split the
    Breakdown's, for the view's year and line."""
    view = ViewState(
        dataset="demo-households", year=int(units.years[-1]), districts=(str(units.regions[0]),)
    )
    compute = PlainCompute(units)
    parts = figures.sections(view, units, compute)
    title = next(t for t in parts.tables if t.startswith("Poverty by district"))
    data = parts.tables[title].data.set_index("region")
    expected = compute.poverty(view.poverty_line, view.relative_to, "auto")
    expected = expected[(expected["year"] == view.year) & (expected["index"] == "fgt_2")]
    expected = expected.assign(region=expected["region"].astype(str)).set_index("region")["value"]
    assert np.allclose(data["fgt_2"].sort_index(), expected.sort_index(), atol=1e-12)
    split = next(t for t in parts.tables if "split over groups" in t)
    shares = parts.tables[split].data
    assert np.isclose(shares.loc[shares["level"] == "County", "percent"].sum(), 100.0)
    assert any(name.startswith("Growth at each percentile") for name in parts.charts)
    welfare = next(t for t in parts.tables if t.startswith("Welfare in money"))
    assert "Sen's welfare μ(1 − Gini)" in set(parts.tables[welfare].data["figure"])


def test_the_report_of_district_means_says_poverty_cannot_be_measured():
    panel = demo_panel("means")
    parts = figures.sections(ViewState(dataset="demo-means"), panel)
    assert any("cannot be measured from district means alone" in a for a in parts.absent)
    assert not any(t.startswith("Poverty by district") for t in parts.tables)


def test_rift_decompose_splits_a_poverty_measure_over_groups(tmp_path, capsys):
    """`rift decompose --index fgt_0 --poverty-line 20000` on the households: the province
    row is the pooled headcount of the records (pandas), the county rows add up to it."""
    from explorer import cli

    out = tmp_path / "split.csv"
    code = cli.main(
        [
            "decompose",
            "demo",
            "--kind",
            "units",
            "--index",
            "fgt_0",
            "--poverty-line",
            "20000",
            "--out",
            str(out),
        ]
    )
    assert code == 0
    table = pd.read_csv(out)
    records = pd.read_csv(ROOT / "demo_data" / "households.csv", dtype={"region": str})
    for year, rows in records.groupby("year"):
        pooled = rows.loc[rows["income"] < LINE, "weight"].sum() / rows["weight"].sum()
        mine = table[table["year"] == year]
        province = mine.loc[mine["level"] == "province", "value"].iloc[0]
        assert province == pytest.approx(pooled, abs=1e-12)
        assert mine.loc[mine["level"] == "county", "contribution"].sum() == pytest.approx(
            pooled, abs=1e-12
        )
