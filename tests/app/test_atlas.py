"""Atlas: the map's figures follow the controls, and match figures computed from the file."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
from app_helpers import ROOT, as_read, charts, dataframe, run, save_demo_with_a_gap, view

DECILES = ROOT / "demo_data" / "deciles.csv"


def trapezoid_gini(year: int) -> pd.Series:
    """Gini of the straight-line Lorenz curve through the decile points, per district.

    G = 1 - sum (P_i - P_{i-1}) (L_i + L_{i-1}): the trapezoid rule, the lower bound of
    Gastwirth (1972) "The estimation of the Lorenz curve and Gini index", Review of
    Economics and Statistics 54: 306-316, computed here from the shipped CSV with numpy,
    independently of the app.
    """
    frame = pd.read_csv(DECILES)
    frame = frame[frame["year"] == year].set_index("region")
    shares = frame[[f"share_{i}" for i in range(1, 11)]].to_numpy()
    shares = shares / shares.sum(axis=1, keepdims=True)
    lorenz = np.concatenate([np.zeros((len(frame), 1)), np.cumsum(shares, axis=1)], axis=1)
    gini = 1.0 - np.sum(0.1 * (lorenz[:, 1:] + lorenz[:, :-1]), axis=1)
    return pd.Series(gini, index=frame.index.astype(str))


def ranking(at) -> pd.DataFrame:
    return dataframe(at, "atlas_ranking").set_index("Id")


def test_straight_line_gini_on_the_map_equals_the_trapezoid_rule_on_the_file(app):
    app.query_params.update({"lm": "linear", "y": "2014"})
    run(app)
    shown = ranking(app)["Value"]
    expected = trapezoid_gini(2014).loc[shown.index]
    np.testing.assert_allclose(shown.to_numpy(), expected.to_numpy(), atol=1e-6)


def test_top_decile_share_on_the_map_equals_the_files_top_share(app):
    # At a bracket limit every Lorenz-consistent curve passes through the file's point,
    # so the top 10 % share is the file's share_10 (common practice).
    app.query_params.update({"lm": "linear", "y": "2020", "ix": "top10_share"})
    run(app)
    shown = ranking(app)["Value"]
    frame = pd.read_csv(DECILES)
    frame = frame[frame["year"] == 2020].set_index("region")
    shares = frame[[f"share_{i}" for i in range(1, 11)]]
    top = (shares["share_10"] / shares.sum(axis=1)).loc[shown.index]
    np.testing.assert_allclose(shown.to_numpy(), top.to_numpy(), atol=1e-6)


def test_changing_the_year_changes_the_mapped_values(app):
    run(app)
    before = ranking(app)["Value"]
    app.select_slider(key="ctl_year").set_value(2009)
    run(app)
    after = ranking(app)["Value"].loc[before.index]
    assert view(app).year == 2009
    assert not np.allclose(before.to_numpy(), after.to_numpy())


def test_changing_the_index_to_palma_maps_the_files_top_to_bottom_ratio(app):
    # Palma = top 10 % share / bottom 40 % share (Cobham & Sumner 2013); both are bracket
    # limits of the deciles, so with the straight-line curve it is the file's ratio.
    app.query_params.update({"lm": "linear", "y": "2017"})
    run(app)
    gini = ranking(app)["Value"]
    app.selectbox(key="ctl_index").set_value("palma")
    run(app)
    palma = ranking(app)["Value"].loc[gini.index]
    frame = pd.read_csv(DECILES)
    frame = frame[frame["year"] == 2017].set_index("region").loc[palma.index]
    ratio = frame["share_10"] / frame[[f"share_{i}" for i in range(1, 5)]].sum(axis=1)
    np.testing.assert_allclose(palma.to_numpy(), ratio.to_numpy(), rtol=1e-6)
    assert not np.allclose(gini.to_numpy(), palma.to_numpy())


def test_the_upper_bound_method_gives_larger_ginis_than_the_lower_bound(app):
    # Gastwirth (1972): the steepest convex curve bounds the Gini from above.
    app.query_params.update({"lm": "linear"})
    run(app)
    lower = ranking(app)["Value"]
    app.selectbox(key="ctl_method").set_value("upper")
    run(app)
    upper = ranking(app)["Value"].loc[lower.index]
    assert (upper > lower).all()


def test_number_of_classes_sets_the_number_of_colour_classes(app):
    run(app)
    for k in (3, 7):
        app.slider(key="ctl_k").set_value(k)
        run(app)
        assert ranking(app)["Class"].nunique() == k
    app.selectbox(key="ctl_classes").set_value("equal")
    app.slider(key="ctl_k").set_value(4)
    run(app)
    classes = ranking(app)
    # Equal widths: class i holds the values in [min + i w, min + (i + 1) w], w = range / k
    # (common practice); checked here with numpy against the shown values.
    low, high = classes["Value"].min(), classes["Value"].max()
    expected = np.clip(np.ceil((classes["Value"] - low) / ((high - low) / 4)) - 1, 0, 3)
    order = sorted(classes["Class"].unique(), key=lambda label: float(label.split(" – ")[0]))
    shown = classes["Class"].map({label: i for i, label in enumerate(order)})
    assert (shown.to_numpy() == expected.to_numpy()).all()


def test_metrics_name_the_highest_and_lowest_district(app):
    run(app)
    table = ranking(app)
    metrics = {as_read(m.label): m.value for m in app.metric}
    top, bottom = table["Value"].idxmax(), table["Value"].idxmin()
    assert float(metrics[f"Highest: {table.loc[top, 'District']}"]) == round(
        table["Value"].max(), 3
    )
    assert float(metrics[f"Lowest: {table.loc[bottom, 'District']}"]) == round(
        table["Value"].min(), 3
    )


def test_ranking_shows_the_funding_caution(app):
    run(app)
    text = as_read(" ".join(m.value for m in app.markdown))
    assert "allocation" in text or "funds" in text


def test_cluster_layer_shows_global_moran_within_its_range(app):
    run(app)
    app.button_group(key="ctl_layer").set_value("clusters")
    run(app)
    metrics = {
        as_read(m.label): float(m.value)
        for m in app.metric
        if not as_read(m.label).startswith(("Highest", "Lowest", "Median"))
    }
    # With n districts, Moran's I under no autocorrelation is -1/(n-1) (Cliff & Ord 1981,
    # Spatial Processes: Models and Applications, Pion).
    n = len(ranking(app))
    assert metrics["Expected Moran's I under no clustering"] == round(-1 / (n - 1), 3)
    assert 0 <= metrics["p-value (permutations)"] <= 1


def test_cluster_layer_draws_a_set_aside_district_as_no_value_and_names_it(app, tmp_path):
    # One district-year is set aside: the cluster layer must still draw, with that district
    # left out of the neighbour graph. Moran's I expected without autocorrelation is
    # -1/(n-1) over the graph's n districts (Cliff, A. D. and Ord, J. K., 1981, Spatial
    # Processes: Models and Applications, Pion).
    dataset = save_demo_with_a_gap(tmp_path / "workspace", "CAL03", 2015)
    app.query_params.update({"d": dataset, "y": "2015"})
    run(app)
    n = len(ranking(app))
    app.button_group(key="ctl_layer").set_value("clusters")
    run(app)
    warnings = " ".join(w.value for w in app.warning)
    assert "CAL03" in warnings and "no value" in warnings
    metrics = {
        as_read(m.label): float(m.value)
        for m in app.metric
        if as_read(m.label).startswith("Expected Moran")
    }
    assert metrics["Expected Moran's I under no clustering"] == round(-1 / (n - 1), 3)
    spec = json.loads(charts(app)[0].spec)
    features = spec["datasets"]["districts"]  # the map's districts travel as a named dataset
    cluster = {f["properties"]["region"]: f["properties"]["cluster"] for f in features}
    assert cluster["CAL03"] == "no value"
    assert sum(c == "no value" for c in cluster.values()) == 1
