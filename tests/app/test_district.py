"""District sheet: one district's indices, Lorenz points and fits, chosen from the view."""

from __future__ import annotations

import numpy as np
import pandas as pd
from app_helpers import ROOT, as_read, dataframe, page, run, view


def open_sheet(app, **params):
    app.query_params.update(params)
    run(app)
    app.switch_page(page("district"))
    return run(app)


def test_sheet_opens_on_the_district_of_the_link(app):
    open_sheet(app, sel="FER02", y="2016")
    assert view(app).districts == ("FER02",)
    assert app.selectbox(key="ctl_districts").value == "FER02"
    assert "FER02" in as_read(" ".join(m.value for m in app.markdown))


def test_every_index_lies_within_its_bounds(app):
    # Gastwirth (1972), "The estimation of the Lorenz curve and Gini index", Review of
    # Economics and Statistics 54: 306-316: a curve through the points that is convex lies
    # between the straight-line and the steepest convex curve, so its index lies between
    # their values (for shares of the bottom the order of the two bounds flips). The
    # monotone cubic interpolates the points; fitted curves need not pass through them.
    open_sheet(app, sel="CAL01", y="2020", lm="pchip")
    table = dataframe(app, "district_indices")
    finite = table[np.isfinite(table["Upper bound"]) & np.isfinite(table["Lower bound"])]
    assert len(finite) >= 5
    low = np.minimum(finite["Lower bound"], finite["Upper bound"])
    high = np.maximum(finite["Lower bound"], finite["Upper bound"])
    assert (low <= finite["Value"] + 1e-9).all() and (finite["Value"] <= high + 1e-9).all()


def test_straight_line_gini_of_the_sheet_is_the_trapezoid_rule(app):
    open_sheet(app, sel="QUI03", y="2011", lm="linear")
    table = dataframe(app, "district_indices").set_index("Index")
    frame = pd.read_csv(ROOT / "demo_data" / "deciles.csv")
    row = frame[(frame["region"] == "QUI03") & (frame["year"] == 2011)]
    shares = row[[f"share_{i}" for i in range(1, 11)]].to_numpy()[0]
    lorenz = np.concatenate([[0.0], np.cumsum(shares / shares.sum())])
    gini = 1.0 - np.sum(0.1 * (lorenz[1:] + lorenz[:-1]))  # Gastwirth (1972) lower bound
    assert abs(table.loc["gini", "Value"] - gini) < 1e-6


def test_choosing_another_district_changes_the_figures(app):
    open_sheet(app, sel="CAL01")
    first = dataframe(app, "district_indices")["Value"].to_numpy()
    app.selectbox(key="ctl_districts").set_value("TAN02")
    run(app)
    assert view(app).districts == ("TAN02",)
    assert not np.allclose(first, dataframe(app, "district_indices")["Value"].to_numpy())


def test_fit_diagnostics_list_every_method_once(app):
    open_sheet(app, sel="OSS01", y="2019")
    fits = dataframe(app, "district_fits")
    assert len(fits) == len(set(fits["method"])) >= 7
    assert set(fits["region"].astype(str)) == {"OSS01"}


def test_a_second_district_is_compared_side_by_side_and_kept_in_the_link(app):
    """Lorenz dominance (Atkinson 1970) checked by hand on the two districts' published
    points: the verdict names as less unequal the one whose curve is higher everywhere."""
    app.query_params.update({"d": "demo", "sel": "CAL01", "y": "2020"})
    run(app)
    app.switch_page(page("district"))
    run(app)
    app.selectbox(key="ctl_districts__compare").set_value("BRE01")
    run(app)
    assert view(app).districts == ("CAL01", "BRE01")
    texts = " ".join(m.value for m in app.markdown)
    deciles = pd.read_csv(ROOT / "demo_data" / "deciles.csv")
    rows = deciles[deciles["year"] == 2020].set_index("region")
    shares = [f"share_{k}" for k in range(1, 11)]
    city, farm = (np.cumsum(rows.loc[r, shares].to_numpy(float)) for r in ("CAL01", "BRE01"))
    above = "Sallowfen" if np.all(farm[:-1] >= city[:-1]) else "Port Idrel"
    assert f"{above}'s Lorenz curve lies above" in texts
    assert "The chosen measure." in texts
    # choosing another first district keeps the one it is compared with
    app.selectbox(key="ctl_districts").set_value("FER01")
    run(app)
    assert view(app).districts == ("FER01", "BRE01")
