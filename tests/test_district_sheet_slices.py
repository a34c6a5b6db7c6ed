"""The District sheet computes one district from its own rows: the same figures as the whole panel.

Each figure the sheet now takes from the chosen district's rows alone (its fits, its welfare,
its Lorenz curves, its first-year headcount and growth) is compared with the same figure
read from the table of every district, on the invented demo province. Where a figure needs
the other districts (a poverty line at a share of the province's median) the line is still
set by all of them, and the comparison shows it. Numbers agree to 1e-12 relative; the
figures themselves are checked against published forms elsewhere (test_welfare,
test_growth, test_poverty_table).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from explorer import data as readers
from explorer import figures
from explorer.figures.compute import PlainCompute, lorenz_curves
from explorer.present import vocabulary
from explorer.stats import lorenz, poverty_lines, poverty_table
from explorer.views import ViewState

REGION, YEAR, FIRST = "BRE01", 2025, 2016


@pytest.fixture(scope="module")
def panel():
    return readers.demo_panel("brackets")


@pytest.fixture(scope="module")
def compute(panel):
    return PlainCompute(panel)


def _rows(table: pd.DataFrame, region: str, year: int | None = None) -> pd.DataFrame:
    keep = table["region"].astype(str) == region
    if year is not None:
        keep &= table["year"] == year
    return table[keep].reset_index(drop=True)


def _equal(got: pd.DataFrame, expected: pd.DataFrame) -> None:
    assert len(got) and len(got) == len(expected)
    pd.testing.assert_frame_equal(
        got.reset_index(drop=True).astype({"region": object}),
        expected.reset_index(drop=True).astype({"region": object}),
        check_exact=False,
        rtol=1e-12,
        atol=0.0,
    )


def test_one_district_years_fits_equal_the_whole_panels(compute):
    """The fitted parameters travel as JSON text: compared as numbers (a batch of one row
    and a batch of all rows may round the least squares in the last place)."""
    import json

    methods = tuple(vocabulary.METHOD_LABELS)
    got = compute.district_fits(REGION, YEAR, methods)
    expected = _rows(compute.fits(methods), REGION, YEAR)
    _equal(got.drop(columns="params"), expected.drop(columns="params"))
    for a, b in zip(got["params"], expected["params"], strict=True):
        a, b = json.loads(a), json.loads(b)
        assert a.keys() == b.keys()
        np.testing.assert_allclose(list(a.values()), list(b.values()), rtol=1e-12)


def test_one_district_years_welfare_equals_the_whole_panels(compute):
    for method in ("auto", "pchip"):
        got = compute.district_welfare(REGION, YEAR, method)
        _equal(got, _rows(compute.welfare(method), REGION, YEAR))


def test_the_lorenz_curves_of_one_district_equal_those_of_the_whole_panel(panel):
    methods = [m for m in vocabulary.METHOD_LABELS if m != "auto"]
    curves = lorenz_curves(panel, REGION, YEAR, methods)
    grid = np.linspace(0.0, 1.0, 101)
    for method in methods:
        whole = lorenz.fit_panel(panel, method)
        row = np.flatnonzero(
            (whole.keys["region"].astype(str) == REGION).to_numpy() & (whole.keys["year"] == YEAR)
        )[0]
        drawn = curves.loc[curves["method"] == method, "L"].to_numpy()
        np.testing.assert_allclose(drawn, whole.evaluate(grid)[row], rtol=1e-12, atol=1e-15)


def test_headcount_of_one_district_is_measured_against_the_provinces_line(panel):
    """60 % of the province median: set by every district, so cutting the panel to the
    one district first would give another line; measuring only it does not."""
    line = poverty_lines.parse_line("60%median", scope="province")
    year = panel.data["year"] == FIRST
    import dataclasses

    one_year = dataclasses.replace(panel, data=panel.data[year].reset_index(drop=True))
    whole = poverty_table.compute(one_year, line)
    only = poverty_table.compute(one_year, line, regions=(REGION,))
    _equal(only, _rows(whole, REGION))
    alone = poverty_table.compute(
        dataclasses.replace(one_year, data=_rows(one_year.data, REGION)), line
    )
    assert not np.allclose(alone["value"], only["value"])  # the line really needs them all


def test_growth_of_one_district_equals_its_rows_in_the_whole_panels(compute):
    summary, curves = compute.growth(FIRST, "auto", "60%median", "province", to=YEAR, region=REGION)
    every, every_curve = compute.growth(FIRST, "auto", "60%median", "province", to=YEAR)
    _equal(summary, _rows(every, REGION, YEAR))
    _equal(curves, _rows(every_curve, REGION, YEAR))


def test_the_sheet_names_the_curve_the_whole_panels_fits_chose(panel, compute):
    sheet = figures.district(panel, ViewState(year=YEAR, districts=(REGION,)), compute)
    whole = _rows(compute.fits(("auto",)), REGION, YEAR)
    chosen = vocabulary.method_label(str(whole["used"].iloc[0])) + " · used for the figures"
    legend = sheet.profile.to_dict()
    assert chosen in str(legend)
    welfare = _rows(compute.welfare("auto"), REGION, YEAR)
    mean = welfare.loc[welfare["index"] == "mean", "value"].iloc[0]
    assert vocabulary.figure(mean, money=True) in set(sheet.welfare["value"])
