"""District means and published figures on the Map, Timelines and District sheet, checked
against the demo files computed here by hand (pandas on the CSV, not the project's code)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from explorer import figures
from explorer.data import demo_panel
from explorer.figures import PlainCompute, series
from explorer.views import ViewState

DEMO = Path(__file__).resolve().parents[1] / "demo_data"


@pytest.fixture(scope="module")
def means_panel():
    return demo_panel("means")


@pytest.fixture(scope="module")
def published_panel():
    return demo_panel("published")


@pytest.fixture(scope="module")
def means_file():
    return pd.read_csv(DEMO / "means.csv", dtype={"region": str})


def province_means(rows: pd.DataFrame) -> pd.Series:
    """Population-weighted mean of district means: the province's mean income per person."""
    return rows.groupby("year").apply(
        lambda g: (g["mean_income"] * g["population"]).sum() / g["population"].sum()
    )


def test_ratio_to_the_province_is_the_mean_over_the_weighted_province_mean(means_panel, means_file):
    view = ViewState(dataset="demo-means", index="mean_ratio", year=2016)
    shown = figures.atlas(means_panel, view, PlainCompute(means_panel))
    got = shown.layer.set_index("region")["value"]
    rows = means_file[means_file["year"] == 2016].set_index("region")
    expected = rows["mean_income"] / province_means(means_file)[2016]
    pd.testing.assert_series_equal(got.sort_index(), expected.sort_index(), check_names=False)
    assert "furthest above the province mean" in shown.ranking_title


def test_growth_is_the_compound_yearly_growth_since_the_first_year(means_panel, means_file):
    """Average yearly growth 100·((m_t/m_s)^(1/(t−s)) − 1), common practice."""
    view = ViewState(dataset="demo-means", index="mean_growth", year=2020, year_from=2012)
    shown = figures.atlas(means_panel, view, PlainCompute(means_panel))
    got = shown.layer.set_index("region")["value"]
    wide = means_file.pivot(index="region", columns="year", values="mean_income")
    expected = 100 * ((wide[2020] / wide[2012]) ** (1 / 8) - 1)
    assert np.allclose(got.sort_index(), expected.sort_index(), rtol=1e-12)
    # the label names the first year, the ranking what rank 1 means
    assert "since 2012" in shown.value_label
    assert "fastest growth" in shown.ranking_title
    # growth is blank at and before the first year, with the reason
    rows = series.means_figure(means_panel, "mean_growth", since=2012)
    early = rows[rows["year"] <= 2012]
    assert early["value"].isna().all()
    assert (early["note"] == "growth is measured from 2012 on").all()


def test_timelines_draw_every_district_mean_and_the_weighted_province(means_panel, means_file):
    view = ViewState(dataset="demo-means", index="mean_income", districts=("BRE01",))
    shown = figures.timelines(means_panel, view, PlainCompute(means_panel))
    assert shown.series is not None and shown.chart is not None
    got = shown.series.set_index(["region", "year"])["value"]
    expected = means_file.set_index(["region", "year"])["mean_income"]
    assert np.allclose(got.sort_index(), expected.sort_index())
    province = shown.province.set_index("year")["value"]
    assert np.allclose(province.sort_index(), province_means(means_file).sort_index())
    assert shown.convergence is not None
    assert list(shown.highlighted.columns) == ["Sallowfen"]  # BRE01 by its name


def test_the_district_sheet_gives_mean_rank_and_growth(means_panel, means_file):
    view = ViewState(dataset="demo-means", year=2020, year_from=2010, districts=("FER03",))
    sheet = figures.district(means_panel, view, PlainCompute(means_panel))
    facts = dict(sheet.facts)
    rows = means_file[means_file["year"] == 2020].set_index("region")["mean_income"]
    rank = int(rows.rank(ascending=False, method="min")["FER03"])
    assert facts["Rank (1 = highest mean)"] == f"{rank} of {len(rows)}"
    assert facts["Mean income, 2020"] == f"{rows['FER03']:,.0f}"
    start = means_file[(means_file["year"] == 2010) & (means_file["region"] == "FER03")]
    growth = 100 * ((rows["FER03"] / start["mean_income"].iloc[0]) ** (1 / 10) - 1)
    assert facts["Growth since 2010 (% a year)"] == f"{growth:.2f}"
    own = sheet.means.set_index("year")
    assert np.isclose(
        own.loc[2020, "ratio"], rows["FER03"] / province_means(means_file)[2020], rtol=1e-12
    )


def test_published_figures_are_mapped_ranked_and_followed_as_given(published_panel):
    given = pd.read_csv(DEMO / "published.csv", dtype={"region": str})
    view = ViewState(dataset="demo-published", index="median_income", year=2018)
    compute = PlainCompute(published_panel)
    shown = figures.atlas(published_panel, view, compute)
    got = shown.layer.set_index("region")["value"].sort_index()
    expected = given[given["year"] == 2018].set_index("region")["median_income"].sort_index()
    assert np.array_equal(got.to_numpy(), expected.to_numpy(dtype=float))
    assert shown.money and "as published" in shown.value_label
    assert shown.layer["lower"].isna().all()
    lines = figures.timelines(published_panel, view, compute)
    assert lines.province is None and lines.convergence is None
    assert "not recomputed" in lines.notices[0]
    sheet = figures.district(published_panel, view.replace(districts=("CAL01",)), compute)
    table = sheet.published.set_index("figure")
    ranked = (
        given[given["year"] == 2018].set_index("region")["gini"].rank(ascending=False, method="min")
    )
    assert table.loc["Gini coefficient", "rank"] == f"{int(ranked['CAL01'])} of 46"
    assert table.loc["Gini coefficient", "scale"] == "percent"


def test_a_view_of_an_index_the_panel_cannot_show_settles_on_one_it_can(
    means_panel, published_panel
):
    assert figures.settle(ViewState(index="theil_t"), means_panel).index == "mean_income"
    assert figures.settle(ViewState(index="theil_t"), published_panel).index == "gini"
    brackets = demo_panel("brackets")
    assert figures.settle(ViewState(index="mean_ratio"), brackets).index == "gini"


def test_possible_ranks_are_the_ranks_the_bounds_allow():
    """Best rank: the district at its lower bound, all others at their upper; worst rank the
    reverse (Goldstein & Spiegelhalter 1996, JRSS A 159: 385-443, on league tables),
    counted here by brute force over the table."""
    panel = demo_panel("brackets")
    view = figures.settle(ViewState(), panel)
    ranked = figures.atlas(panel, view, PlainCompute(panel)).ranking
    lower, upper = ranked["lower"].to_numpy(), ranked["upper"].to_numpy()
    for i, words in enumerate(ranked["rank_range"]):
        best = 1 + int(np.sum(np.delete(lower, i) > upper[i]))
        worst = 1 + int(np.sum(np.delete(upper, i) > lower[i]))
        assert words == (f"{best}" if best == worst else f"{best}–{worst}"), ranked.iloc[i]
        assert best <= ranked["rank"].iloc[i] <= worst
