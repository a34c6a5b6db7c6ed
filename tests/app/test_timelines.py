"""Timelines: highlighted districts, county panels and convergence follow the controls."""

from __future__ import annotations

import numpy as np
import pandas as pd
import scipy.stats
from app_helpers import ROOT, dataframe, page, run, view


def open_timelines(app, **params):
    app.query_params.update(params)
    run(app)
    app.switch_page(page("timelines"))
    return run(app)


def test_highlighting_districts_shows_exactly_their_series(app):
    open_timelines(app)
    app.multiselect(key="ctl_districts").set_value(["BRE01", "CAL01"])
    run(app)
    assert view(app).districts == ("BRE01", "CAL01")
    table = dataframe(app, "timelines_table")
    assert len(table.columns) == 2
    assert list(table.index) == sorted(table.index) and len(table) == 18  # 2008-2025


def test_highlighted_series_are_the_atlas_values_of_each_year(app):
    open_timelines(app, sel="BRE01", lm="linear")
    series = dataframe(app, "timelines_table").iloc[:, 0]
    # The straight-line Gini by the trapezoid rule, from the CSV: the lower bound of
    # Gastwirth (1972), Review of Economics and Statistics 54: 306-316.
    frame = pd.read_csv(ROOT / "demo_data" / "deciles.csv")
    frame = frame[frame["region"] == "BRE01"].sort_values("year")
    shares = frame[[f"share_{i}" for i in range(1, 11)]].to_numpy()
    shares = shares / shares.sum(axis=1, keepdims=True)
    lorenz = np.concatenate([np.zeros((len(frame), 1)), np.cumsum(shares, axis=1)], axis=1)
    gini = 1.0 - np.sum(0.1 * (lorenz[:, 1:] + lorenz[:, :-1]), axis=1)
    np.testing.assert_allclose(series.to_numpy(), gini, atol=1e-4)


def test_county_panels_toggle_faceted_chart(app):
    open_timelines(app)
    spec = app.get("vega_lite_chart")[0].proto.spec
    assert '"facet"' not in spec
    app.toggle(key="ctl_by_county").set_value(True)
    run(app)
    assert '"facet"' in app.get("vega_lite_chart")[0].proto.spec


def test_beta_convergence_sentence_matches_scipy_linregress(app):
    open_timelines(app)
    # Reference: scipy.stats.linregress of yearly log growth on the starting log mean
    # (Barro & Sala-i-Martin 1992), from the shipped district means.
    means = pd.read_csv(ROOT / "demo_data" / "means.csv")
    first, last = means["year"].min(), means["year"].max()
    start = means[means["year"] == first].set_index("region")["mean_income"]
    end = means[means["year"] == last].set_index("region")["mean_income"]
    growth = (np.log(end) - np.log(start.loc[end.index])) / (last - first)
    fit = scipy.stats.linregress(np.log(start.loc[end.index]), growth)
    sentence = next(m.value for m in app.markdown if m.value.startswith("β ="))
    assert f"β = {fit.slope:.4f}" in sentence
    assert f"standard error {fit.stderr:.4f}" in sentence
