"""Breakdown: the within/between parts add up, and follow the index and the years."""

from __future__ import annotations

import numpy as np
import pandas as pd
from app_helpers import ROOT, as_read, dataframe, page, run, view


def open_breakdown(app, **params):
    app.query_params.update(params)
    run(app)
    app.switch_page(page("breakdown"))
    return run(app)


def shares(app) -> dict[str, float]:
    return {as_read(m.label): float(m.value.rstrip("%")) / 100 for m in app.metric}


def test_theil_parts_of_every_level_add_up_to_the_provinces_total(app):
    open_breakdown(app, ix="theil_t", y="2021")
    detail = dataframe(app, "breakdown_detail")
    total = float(
        detail[(detail["component"] == "total") & (detail["group"] == "(all)")]["value"].iloc[0]
    )
    # Shorrocks (1980), "The class of additively decomposable inequality measures",
    # Econometrica 48: 613-625: total = nested between parts + within districts, exactly.
    nested = detail[(detail["group"] == "(all)") & (detail["level"] != "total")]
    assert abs(nested["value"].sum() - total) < 1e-9
    by_level = dataframe(app, "breakdown_table")
    between = {}
    for level, rows in by_level.groupby("level", sort=False):
        assert abs(rows["value"].sum() - total) < 1e-9
        assert abs(rows["share"].sum() - 1.0) < 1e-9
        between[level] = float(rows.loc[rows["component"] == "between", "value"].iloc[0])
    # A finer partition never has a smaller between part (common practice for GE).
    assert between["district"] >= between["county"] - 1e-12
    metric = {as_read(m.label): m.value for m in app.metric}
    # The metric names its groups in planner words ("between (county)" before).
    assert metric["Between counties"] == f"{between['county'] / total:.1%}"


def test_gini_breakdown_has_an_overlap_part(app):
    open_breakdown(app, ix="gini")
    parts = dataframe(app, "breakdown_table")
    assert "overlap" in set(parts["component"])


def test_between_district_theil_of_district_means_matches_a_direct_formula(app):
    # Between-district Theil T = sum_i s_i ln(s_i / p_i) over district population shares
    # p_i and income shares s_i (Theil 1967, Economics and Information Theory,
    # North-Holland; Shorrocks 1980), from the shipped means.
    open_breakdown(app, ix="theil_t", y="2018", d="demo-means")
    assert view(app).dataset == "demo-means"
    means = pd.read_csv(ROOT / "demo_data" / "means.csv")
    year = means[means["year"] == 2018]
    p = year["population"] / year["population"].sum()
    s = year["population"] * year["mean_income"]
    s = s / s.sum()
    direct = float(np.sum(s * np.log(s / p)))
    parts = dataframe(app, "breakdown_detail")
    total = parts[(parts["component"] == "total") & (parts["group"] == "(all)")]["value"]
    assert abs(float(total.iloc[0]) - direct) < 1e-9


def test_changing_the_years_changes_the_change_decomposition(app):
    open_breakdown(app, dx="mld", y0="2008", y1="2012")
    first = dataframe(app, "change_table")
    app.selectbox(key="ctl_year_to").set_value(2025)
    run(app)
    second = dataframe(app, "change_table")
    assert view(app).year_to == 2025
    assert set(first["year"]) == {"2008-2012"} and set(second["year"]) == {"2008-2025"}
    assert not np.allclose(first["value"].to_numpy(), second["value"].to_numpy())


def test_years_in_the_wrong_order_are_closed_up_with_a_hint(app):
    open_breakdown(app, y0="2010", y1="2012")
    app.selectbox(key="ctl_year_from").set_value(2020)
    run(app)
    assert view(app).year_from == view(app).year_to == 2020
    assert any("before the 'To' year" in i.value for i in app.info)
