"""Tests of the tidy poverty table for each kind of panel."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import special

from explorer.data.model import DataError
from explorer.data.validate import validate
from explorer.stats import poverty_table
from explorer.stats.poverty_lines import parse_line

COLUMNS = ["region", "year", "index", "value", "lower", "upper", "method", "note"]


def bracket_panel(mean=True):
    rows = []
    for region, sigma, mu in (("Ashford", 0.5, 900.0), ("Brackenmoor", 0.9, 1200.0)):
        P = np.linspace(0, 1, 11)
        shares = np.diff(special.ndtr(special.ndtri(P) - sigma))  # lognormal deciles
        for share in shares:
            row = dict(region=region, year=2021, pop_share=0.1, income_share=share)
            if mean:
                row.update(mean_income=mu, population=1000.0)
            rows.append(row)
    return validate(pd.DataFrame(rows), kind="brackets")


def test_bracket_table_has_the_contract_columns_and_lognormal_values():
    table = poverty_table.compute(bracket_panel(), 600.0, ["lognormal", "gq"])
    assert list(table.columns) == COLUMNS
    assert len(table) == 2 * 2 * 5
    row = table[(table["method"] == "lognormal") & (table["region"] == "Ashford")]
    got = row.set_index("index")["value"]
    # lognormal partial moments (Aitchison & Brown 1957): H = Phi(ln(z/mu)/sigma + sigma/2)
    a = np.log(600 / 900) / 0.5 + 0.25
    assert got["fgt_0"] == pytest.approx(special.ndtr(a), abs=1e-9)
    assert row["note"].str.contains("600 per person per year").all()


def test_relative_line_to_each_districts_own_mean():
    table = poverty_table.compute(bracket_panel(), parse_line("50%mean", "district"), "lognormal")
    got = table.set_index(["region", "index"])["value"]
    for region, sigma in (("Ashford", 0.5), ("Brackenmoor", 0.9)):
        a = np.log(0.5) / sigma + sigma / 2
        assert got[(region, "fgt_0")] == pytest.approx(special.ndtr(a), abs=1e-9)


def test_province_median_line_is_the_same_amount_for_every_district():
    table = poverty_table.compute(bracket_panel(), "60%median", "lognormal")
    assert table.attrs["line"] == "60% of the province median"
    head = table[table["index"] == "fgt_0"].set_index("region")["value"]
    # the more unequal, richer district and the poorer equal one, against one line
    assert 0 < head["Ashford"] < 1 and 0 < head["Brackenmoor"] < 1


def test_means_panel_is_refused_with_a_plain_message():
    frame = pd.DataFrame({"region": ["Ashford"], "year": [2021], "mean_income": [900.0]})
    with pytest.raises(DataError, match="cannot be measured from district means alone"):
        poverty_table.compute(validate(frame, kind="means"), 600.0)


def test_relative_line_without_means_is_refused():
    with pytest.raises(DataError, match="mean income"):
        poverty_table.compute(bracket_panel(mean=False), "60%median")


def test_unit_table_with_bootstrap():
    rng = np.random.default_rng(2)
    frame = pd.DataFrame(
        {
            "region": np.repeat(["Ashford", "Brackenmoor"], 300),
            "year": 2021,
            "income": rng.lognormal(7, 0.7, 600),
        }
    )
    table = poverty_table.compute(
        validate(frame, kind="units"), "60%median", ci="bootstrap", reps=49
    )
    assert list(table.columns) == COLUMNS
    assert (table["lower"] <= table["value"]).all() and (table["value"] <= table["upper"]).all()
    assert table["note"].str.contains("sampling error of the relative line").all()


def test_province_mean_line_is_the_population_weighted_mean():
    # equal populations: the province mean is (900 + 1200) / 2 = 1050, the line 525; each
    # district's headcount is the lognormal Phi(ln(z/mu)/sigma + sigma/2) (Aitchison &
    # Brown 1957)
    table = poverty_table.compute(bracket_panel(), "50%mean", "lognormal")
    got = table[table["index"] == "fgt_0"].set_index("region")["value"]
    for region, sigma, mu in (("Ashford", 0.5, 900.0), ("Brackenmoor", 0.9, 1200.0)):
        a = np.log(525.0 / mu) / sigma + sigma / 2
        assert got[region] == pytest.approx(special.ndtr(a), abs=1e-9)


def test_province_median_of_identical_districts_is_their_median():
    # two districts with the same lognormal deciles and mean: the pooled median is the
    # lognormal median mu exp(-sigma^2 / 2) (Aitchison & Brown 1957), up to the fitted
    # curve's error at p = 1/2
    rows = []
    P = np.linspace(0, 1, 11)
    shares = np.diff(special.ndtr(special.ndtri(P) - 0.6))
    for region in ("Ashford", "Brackenmoor"):
        for share in shares:
            rows.append(
                dict(
                    region=region,
                    year=2021,
                    pop_share=0.1,
                    income_share=share,
                    mean_income=1000.0,
                    population=500.0,
                )
            )
    panel = validate(pd.DataFrame(rows), kind="brackets")
    table = poverty_table.compute(panel, "100%median", "lognormal")
    head = table[table["index"] == "fgt_0"]["value"].to_numpy()
    np.testing.assert_allclose(head, 0.5, atol=1e-4)
