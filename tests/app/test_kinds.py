"""Household records and district means: every page works, figures match the files."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from app_helpers import ROOT, dataframe, page, run, view

PAGES = ("atlas", "timelines", "breakdown", "district", "compare", "what_if", "intake")


@pytest.mark.parametrize("dataset", ["demo-households", "demo-means", "demo-published"])
def test_every_page_renders_for_each_kind_of_data(app, dataset):
    app.query_params["d"] = dataset
    run(app)
    for name in PAGES:
        app.switch_page(page(name))
        run(app)
        assert view(app).dataset == dataset
        assert not app.error, (name, [e.value for e in app.error])


def weighted_gini(income: np.ndarray, weight: np.ndarray) -> float:
    """Mean absolute difference over twice the mean, by brute force over all pairs.

    The population convention of Lerman & Yitzhaki (1984), "A note on the calculation and
    interpretation of the Gini index", Economics Letters 15: 363-368, written directly as
    the double sum (no sorting) for the check.
    """
    w = weight / weight.sum()
    mean = np.sum(w * income)
    return float(np.sum(np.outer(w, w) * np.abs(income[:, None] - income[None, :])) / (2 * mean))


def test_household_gini_on_the_map_is_the_pairwise_gini_of_the_records(app):
    households = pd.read_csv(ROOT / "demo_data" / "households.csv")
    year = int(households["year"].max())
    app.query_params.update({"d": "demo-households", "y": str(year)})
    run(app)
    shown = dataframe(app, "atlas_ranking").set_index("Id")["Value"]
    rows = households[households["year"] == year]
    for region in shown.index[:8]:
        own = rows[rows["region"] == region]
        expected = weighted_gini(own["income"].to_numpy(float), own["weight"].to_numpy(float))
        assert abs(shown[region] - expected) < 1e-9


def test_bootstrap_intervals_contain_the_household_estimates(app):
    app.query_params.update({"d": "demo-households"})
    run(app)
    app.toggle(key="ctl_bootstrap").set_value(True)
    run(app)
    table = dataframe(app, "atlas_ranking")
    assert table["Lower bound"].notna().all()
    # A percentile bootstrap interval of a smooth statistic brackets its point estimate
    # here (common practice; not guaranteed in general, checked on the demo's samples).
    assert (
        (table["Lower bound"] <= table["Value"]) & (table["Value"] <= table["Upper bound"])
    ).mean() > 0.9


def test_published_figures_on_the_map_are_the_file_as_given(app):
    given = pd.read_csv(ROOT / "demo_data" / "published.csv", dtype={"region": str})
    app.query_params.update({"d": "demo-published", "ix": "top10_share", "y": "2015"})
    run(app)
    shown = dataframe(app, "atlas_ranking").set_index("Id")["Value"].sort_index()
    expected = given[given["year"] == 2015].set_index("region")["top10_share"].sort_index()
    assert np.array_equal(shown.to_numpy(), expected.to_numpy())
    # the sidebar offers exactly the figures the file holds, named as published
    figure = next(s for s in app.sidebar.selectbox if s.label == "Published figure")
    assert list(figure.options) == [
        "Gini coefficient, as published",
        "Median income, as published",
        "Income share of the top 10 %, as published",
    ]
    assert any("as the source published them" in i.value for i in app.info)


def test_the_breakdown_says_in_one_sentence_why_published_figures_do_not_split(app):
    app.query_params["d"] = "demo-published"
    run(app)
    app.switch_page(page("breakdown"))
    run(app)
    assert [i.value for i in app.info] == [
        "Published figures cannot be split into parts: the split needs the incomes behind "
        "each district's figure, which the source did not publish."
    ]
    assert not app.get("vega_lite_chart")


def test_district_means_on_timelines_follow_every_district_and_the_province(app):
    app.query_params.update({"d": "demo-means", "ix": "mean_ratio", "sel": "CAL01"})
    run(app)
    app.switch_page(page("timelines"))
    run(app)
    highlighted = dataframe(app, "timelines_table")
    means = pd.read_csv(ROOT / "demo_data" / "means.csv")
    year = means[means["year"] == 2016]
    province = (year["mean_income"] * year["population"]).sum() / year["population"].sum()
    own = year.set_index("region").loc["CAL01", "mean_income"]
    assert abs(highlighted.loc[2016].iloc[0] - round(own / province, 4)) < 1e-9


def test_growth_since_a_chosen_year_is_in_the_link(app):
    app.query_params.update({"d": "demo-means", "ix": "mean_growth"})
    run(app)
    app.selectbox(key="ctl_year_from").set_value(2015)
    run(app)
    assert view(app).year_from == 2015
    assert app.query_params["y0"] == ["2015"] or app.query_params["y0"] == "2015"
    assert any("growth of mean income since 2015" in c.value for c in app.caption)
