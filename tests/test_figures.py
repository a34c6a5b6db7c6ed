"""The figures layer: what a page, the report and the command line show for one view."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
import pytest

from explorer import figures
from explorer.data import catalog
from explorer.figures.compute import PlainCompute
from explorer.present import vocabulary
from explorer.views import ViewState


@pytest.fixture(scope="module")
def demo():
    return catalog.open_dataset("demo")


@pytest.fixture(scope="module")
def means():
    return catalog.open_dataset("demo-means")


@dataclass(frozen=True)
class WithoutOne(PlainCompute):
    """The plain computations with one district's row dropped from the index table.

    Stands for a district-year set aside (or an index undefined there): the table has no
    finite figure for it while its boundary is still on the map.
    """

    missing: str = ""

    def indices(self, method, ci=None):
        table = PlainCompute.indices(self, method, ci)
        return table[table["region"].astype(str) != self.missing].reset_index(drop=True)


def test_settle_fills_the_years_and_drops_what_the_panel_lacks(demo):
    years = [int(y) for y in demo.years]
    view = ViewState(districts=("NOWHERE", str(demo.regions[0])), method="beta")
    settled = figures.settle(view, demo)
    assert (settled.year, settled.year_from, settled.year_to) == (years[-1], years[0], years[-1])
    assert settled.districts == (str(demo.regions[0]),)
    assert settled.method == "beta"  # grouped shares keep their Lorenz method
    households = catalog.open_dataset("demo-households")
    assert figures.settle(view, households).method == "auto"


def test_atlas_ranks_the_largest_index_value_first(demo):
    view = figures.settle(ViewState(index="theil_t"), demo)
    compute = PlainCompute(demo)
    shown = figures.atlas(demo, view, compute)
    table = compute.indices(view.method)
    year = table[(table["year"] == view.year) & (table["index"] == "theil_t")]
    assert shown.ranking["value"].iloc[0] == pytest.approx(year["value"].max())
    assert shown.ranking["value"].iloc[-1] == pytest.approx(year["value"].min())
    top = year.loc[year["value"].idxmax(), "region"]
    assert shown.ranking["region"].iloc[0] == str(top)
    assert shown.headline[0][0].startswith("Highest: ")
    assert list(shown.ranking["rank"]) == sorted(shown.ranking["rank"])


def test_the_report_holds_the_same_ranking_and_charts_as_the_pages(demo):
    view = figures.settle(ViewState(index="gini", districts=("BRE01",)), demo)
    compute = PlainCompute(demo)
    report = figures.sections(view, demo, compute)
    page = figures.atlas(demo, view, compute)
    shown = report.tables[page.ranking_title].data  # the printed rows keep their keys here
    pd.testing.assert_frame_equal(shown, page.ranking.drop(columns=["wide"]))
    split = figures.breakdown(demo, view, compute)
    key = next(k for k in report.tables if k.startswith("Split of"))
    pd.testing.assert_frame_equal(report.tables[key].data, split.shares)
    assert report.charts["Map"].to_dict() == page.chart.to_dict()


def test_a_means_ranking_reads_highest_mean_income_first_in_page_and_report(means):
    view = figures.settle(ViewState(dataset="demo-means"), means)
    page = figures.atlas(means, view, PlainCompute(means))
    report = figures.sections(view, means)
    assert page.ranking_title == "Districts ranked (1 = highest mean income)"
    assert page.ranking_title in report.tables
    assert not any("most unequal" in title for title in report.tables)
    values = report.tables[page.ranking_title].data["value"]
    assert values.iloc[0] == values.max()


def test_breakdown_shares_of_an_exact_split_add_up_to_the_whole(demo):
    # Theil's T splits exactly into within and between parts at every level
    # (Shorrocks, 1980, "The class of additively decomposable inequality measures",
    # Econometrica 48: 613-625), so each level's shares sum to one.
    view = figures.settle(ViewState(index="theil_t"), demo)
    split = figures.breakdown(demo, view, PlainCompute(demo))
    assert split.index == "theil_t" and not split.instead
    for _, level in split.shares.groupby("level"):
        assert level["share"].sum() == pytest.approx(1.0, abs=1e-9)


@pytest.mark.parametrize(
    ("index", "fallback", "used"),
    [
        # The generalised entropy family splits exactly (Shorrocks 1980, Econometrica 48:
        # 613-625); the Gini with an overlap term (Dagum 1997, Empirical Economics 22:
        # 515-531); the Palma ratio and Atkinson's index do not split additively.
        ("mld", "gini", "mld"),
        ("gini", "mld", "gini"),
        ("ge_2", "mld", "ge_2"),
        ("palma", "mld", "mld"),
        ("atkinson_1", "gini", "gini"),
    ],
)
def test_the_breakdown_splits_the_views_own_index_when_it_decomposes(demo, index, fallback, used):
    view = figures.settle(ViewState(index=index, decomposition_index=fallback), demo)
    split = figures.breakdown(demo, view, PlainCompute(demo))
    assert split.index == used
    assert set(split.parts.query("component != 'total'")["component"]) >= {"between", "within"}
    if used == index:
        assert split.instead == ""
    else:  # the page says which index it splits instead, in planner words
        assert vocabulary.index_label(index) in split.instead
        assert vocabulary.index_label(used) in split.instead


def test_cluster_layer_leaves_a_district_without_a_value_out_of_the_graph(demo):
    view = figures.settle(ViewState(), demo)
    gap = str(demo.regions[3])
    compute = WithoutOne(demo, missing=gap)
    shown = figures.atlas(demo, view, compute, layer="clusters")
    layer = shown.clusters
    assert layer is not None and layer.overall is not None
    row = layer.districts.set_index("region").loc[gap]
    assert row["cluster"] == figures.spatial.NO_VALUE
    assert layer.left_out == (gap,)
    assert gap in layer.notice and any(gap in n for n in shown.notices)
    mapped = len(set(map(str, demo.regions)) & set(demo.boundaries["region"].astype(str)))
    assert layer.overall.n == mapped - 1
    # Moran's I expected without autocorrelation is -1/(n-1) (Cliff, A. D. and Ord, J. K.,
    # 1981, Spatial Processes: Models and Applications, Pion): n counts the graph's
    # districts only.
    assert layer.overall.expected == pytest.approx(-1.0 / (mapped - 2))
    clustered = layer.districts[layer.districts["region"] != gap]
    assert (clustered["cluster"] != figures.spatial.NO_VALUE).all()


def test_cluster_layer_with_too_few_values_draws_every_district_as_no_value(demo):
    values = pd.Series(np.nan, index=[str(r) for r in demo.regions])
    values.iloc[:2] = [0.3, 0.4]
    layer = figures.cluster_layer(demo, values, PlainCompute(demo))
    assert layer.overall is None
    assert set(layer.districts["cluster"]) == {figures.spatial.NO_VALUE}
    assert "Fewer than 3" in layer.notice


def test_the_command_lines_spatial_figures_are_the_maps_clusters(demo):
    view = figures.settle(ViewState(), demo)
    compute = PlainCompute(demo)
    values = figures.atlas(demo, view, compute).layer.set_index("region")["value"]
    layer = figures.cluster_layer(demo, values, compute, permutations=99)
    result = figures.for_panel(demo, index="gini", year=view.year, permutations=99)
    merged = layer.districts.merge(result.districts, on="region", suffixes=("_map", "_cli"))
    assert len(merged) == len(result.districts)
    assert (merged["cluster_map"] == merged["cluster_cli"]).all()
    assert layer.overall.moran_i == pytest.approx(result.stats.moran_i)


def test_convergence_slope_matches_a_least_squares_fit_of_the_points(means):
    # β-convergence: growth regressed on the log starting level (Barro and Sala-i-Martin,
    # 1992, "Convergence", Journal of Political Economy 100: 223-251); the slope is checked
    # against numpy's least squares on the same points.
    trend = figures.convergence(means)
    points = trend.beta.points
    slope = np.polyfit(points["log_initial"], points["growth"], 1)[0]
    assert trend.beta.result.beta == pytest.approx(slope, rel=1e-9)
    assert trend.sentence.startswith("β = ")


def test_a_group_filter_keeps_exactly_the_districts_of_the_chosen_counties(demo):
    # common practice: a filter keeps every district of the chosen groups and no other
    level = demo.levels[-1]
    chosen = sorted(demo.hierarchy[level].unique())[:2]
    cut = figures.narrow(demo, chosen)
    expected = set(demo.hierarchy.loc[demo.hierarchy[level].isin(chosen), "region"])
    assert set(cut.regions) == expected and 0 < len(expected) < len(demo.regions)
    assert set(cut.boundaries["region"]) == expected
    assert cut.fingerprint != demo.fingerprint
    assert figures.narrow(demo, ()) is demo
    view = figures.settle(ViewState(counties=tuple(chosen)), cut)
    shown = figures.atlas(cut, view, PlainCompute(cut))
    assert set(shown.ranking["region"]) == expected
    assert f"only the districts of the {vocabulary.groups_word(level)}" in vocabulary.caption(
        view, cut
    )


def test_the_district_sheet_names_every_unusable_curve_and_the_method_used(demo):
    # The fit table's "valid" (a Lorenz curve is increasing and convex from (0,0) to (1,1):
    # Gastwirth 1971, Econometrica 39: 1037-1039) decides which curves are said unusable.
    from explorer.figures.district import NOT_VALID, curve_names

    compute = PlainCompute(demo)
    methods = ("pchip", "gq", "beta", "quadratic", "lognormal")
    fits = compute.fits(methods + ("auto",))
    unusable = 0
    for region, year in [(str(demo.regions[0]), 2008), (str(demo.regions[-1]), 2025)]:
        curves = compute.lorenz_curves(region, year, methods)
        names = curve_names(curves, "beta")
        rows = fits[(fits["region"].astype(str) == region) & (fits["year"] == year)]
        for method in methods:
            said = set(names[curves["method"] == method])
            valid = bool(rows.loc[rows["method"] == method, "valid"].iloc[0])
            assert len(said) == 1
            assert (NOT_VALID in said.pop()) is (not valid)
            unusable += not valid
        assert all("used for the figures" in n for n in names[curves["method"] == "beta"])
        assert not any("used for the figures" in n for n in names[curves["method"] != "beta"])
    assert unusable, "the check needs at least one curve the fit table marks unusable"
