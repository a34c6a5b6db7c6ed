"""Welfare and growth incidence as the planner gets them: the District sheet and the Map.

Checked against formulas written out here on the demo's household records with pandas, not
with the project's code: Sen's welfare μ(1 − G) (Sen, A. 1976, "Real national income",
*Review of Economic Studies* 43: 19–39), the equally distributed equivalent with ε = 1, the
weighted geometric mean (Atkinson, A. B. 1970, "On the measurement of inequality", *Journal
of Economic Theory* 2: 244–263, eq. for ε = 1), and the growth of the mean compounded per
year (common practice); and the growth incidence identity of Ravallion, M. & Chen, S. 2003,
"Measuring pro-poor growth", *Economics Letters* 78: 93–99, eq. (1): uniform growth is that
growth at every percentile.
"""

from __future__ import annotations

import dataclasses
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from explorer import figures
from explorer.data import demo_panel
from explorer.figures import series
from explorer.figures.compute import PlainCompute
from explorer.views import ViewState

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests" / "app"))


@pytest.fixture(scope="module")
def households() -> pd.DataFrame:
    return pd.read_csv(ROOT / "demo_data" / "households.csv", dtype={"region": str})


def gini(group: pd.DataFrame) -> float:
    """Weighted Gini as half the mean absolute difference over the mean, pair by pair."""
    y, w = group["income"].to_numpy(float), group["weight"].to_numpy(float)
    diff = np.abs(y[:, None] - y[None, :])
    return float(
        (w[:, None] * w[None, :] * diff).sum() / (2 * w.sum() ** 2 * np.average(y, weights=w))
    )


def money(text: str) -> float:
    return float(text.replace(",", ""))


@pytest.fixture(scope="module")
def units():
    return demo_panel("units")


def test_the_district_sheet_gives_sen_welfare_and_the_geometric_mean_in_money(units, households):
    region = str(units.regions[3])
    year = int(units.years[-1])
    view = ViewState(dataset="demo-households", districts=(region,), year=year)
    sheet = figures.district(units, view, PlainCompute(units))
    shown = sheet.welfare.set_index("figure")["value"]
    group = households[(households["region"] == region) & (households["year"] == year)]
    mean = np.average(group["income"], weights=group["weight"])
    sen = mean * (1 - gini(group))
    geometric = np.exp(np.average(np.log(group["income"]), weights=group["weight"]))
    assert money(shown["Sen's welfare μ(1 − Gini)"]) == pytest.approx(sen, abs=0.5)
    assert money(shown["Equally distributed equivalent income (ε = 1)"]) == pytest.approx(
        geometric, abs=0.5
    )
    assert money(shown["Mean income"]) == pytest.approx(mean, abs=0.5)


def test_means_only_data_has_no_welfare_table_and_no_growth_curve():
    panel = demo_panel("means")
    view = ViewState(dataset="demo-means", year=int(panel.years[-1]))
    sheet = figures.district(panel, view, PlainCompute(panel))
    assert sheet.welfare is None and sheet.growth is None
    assert not set(series.GROWTH_FIGURES) & set(series.figure_keys(panel))
    assert not set(series.WELFARE_FIGURES) & set(series.figure_keys(panel))


def test_the_growth_of_the_mean_on_the_sheet_is_the_compounded_growth_of_the_records(
    units, households
):
    region = str(units.regions[0])
    first, last = int(units.years[0]), int(units.years[-1])
    view = ViewState(districts=(region,), year=last, year_from=first)
    growth = figures.district(units, view, PlainCompute(units)).growth
    facts = dict(growth.facts)
    own = households[households["region"] == region]
    means = own.groupby("year").apply(lambda g: np.average(g["income"], weights=g["weight"]))
    expected = 100 * ((means[last] / means[first]) ** (1 / (last - first)) - 1)
    label = f"Growth of the mean, {first}–{last} (% a year)"
    assert float(facts[label]) == pytest.approx(expected, abs=0.006)
    assert growth.chart is not None


def test_the_same_year_twice_asks_for_an_earlier_first_year(units):
    year = int(units.years[0])
    view = ViewState(districts=(str(units.regions[0]),), year=year, year_from=year)
    growth = figures.district(units, view, PlainCompute(units)).growth
    assert growth.chart is None and "first year before" in growth.note


def test_the_map_of_growth_at_the_bottom_is_bottom_40_minus_the_mean(units):
    first, last = int(units.years[0]), int(units.years[-1])
    compute = PlainCompute(units)
    view = ViewState(year=last, year_from=first)
    gap = series.values(units, compute, "growth_gap_bottom40", "auto", first, view)
    bottom = series.values(units, compute, "growth_bottom40", "auto", first, view)
    mean = series.values(units, compute, "growth_mean", "auto", first, view)
    key = ["region", "year"]
    joined = gap.merge(bottom, on=key, suffixes=("", "_b")).merge(mean, on=key, suffixes=("", "_m"))
    assert len(joined) == len(gap) > 0
    assert np.allclose(joined["value"], joined["value_b"] - joined["value_m"], atol=1e-12)
    shown = figures.atlas(
        units, ViewState(index="growth_gap_bottom40", year=last, year_from=first), compute
    )
    mapped = shown.layer.assign(region=shown.layer["region"].astype(str)).set_index("region")[
        "value"
    ]
    expected = gap[gap["year"] == last].set_index("region")["value"]
    assert np.allclose(mapped.sort_index(), expected.sort_index())


def test_uniform_growth_maps_as_no_gap_between_the_bottom_and_the_mean(units):
    """Ravallion & Chen (2003), eq. (1): every percentile grows as the mean does."""
    data = units.data[units.data["year"] == units.years[0]]
    later = data.assign(year=int(units.years[0]) + 4, income=data["income"] * 1.2)
    twin = dataclasses.replace(units, data=pd.concat([data, later], ignore_index=True))
    view = ViewState(year=int(units.years[0]) + 4, year_from=int(units.years[0]))
    rows = series.values(twin, PlainCompute(twin), "growth_gap_bottom40", "auto", None, view)
    assert len(rows) == twin.data["region"].nunique()
    assert np.allclose(rows["value"], 0.0, atol=1e-9)
    bottom = series.values(twin, PlainCompute(twin), "growth_bottom40", "auto", None, view)
    assert np.allclose(bottom["value"], 100 * (1.2 ** (1 / 4) - 1), atol=1e-9)


def test_the_district_sheet_shows_welfare_and_growth_in_the_app(tmp_path, monkeypatch):
    from app_helpers import APP, dataframe, page, run
    from streamlit.testing.v1 import AppTest

    monkeypatch.setenv("RIFT_DATA", str(tmp_path / "workspace"))
    app = AppTest.from_file(str(APP), default_timeout=120)
    app.query_params.update({"d": "demo-households", "y0": "2010", "y": "2024"})
    run(app)
    app.switch_page(page("district"))
    run(app)
    assert "Did growth reach the poorest?" in [h.value for h in app.subheader]
    welfare = dataframe(app, "district_welfare")
    assert "Sen's welfare μ(1 − Gini)" in set(welfare["figure"])
    labels = [m.label for m in app.metric]
    assert "Growth at the bottom 40 % (% a year)" in labels
    app.selectbox(key="ctl_year_from").set_value(2017).run()
    assert app.session_state["rift_view"].year_from == 2017
    assert any("2017–2024" in m.label for m in app.metric)
