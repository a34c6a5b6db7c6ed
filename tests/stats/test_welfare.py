"""Tests of the welfare measures: Sen's welfare and Atkinson's equally distributed equivalent."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import special

from explorer.data.validate import validate
from explorer.stats import measures, welfare


def test_weighted_median_by_hand():
    # common practice: the median of 1, 2, 3, 4 is 2.5; with weights (1, 1, 1, 1, 1) on
    # 1, 2, 3, 4, 10 it is 3; weights (1, 2, 1) on 5, 6, 7 put half the weight at 6
    units = measures.sort_units(
        [1, 2, 3, 4, 10, 5, 6, 7], [1, 1, 1, 1, 1, 1, 2, 1], [0] * 5 + [1] * 3
    )
    np.testing.assert_array_equal(welfare.weighted_median(units), [3.0, 6.0])
    np.testing.assert_array_equal(welfare.weighted_median(measures.sort_units([4, 1, 3, 2])), [2.5])


def test_unit_welfare_matches_the_definitions():
    # Sen (1976): W = mu (1 - G). Atkinson (1970): EDE(eps) = (mean of y^(1 - eps))^(1/(1 - eps)),
    # and EDE(1) the geometric mean, equal to mu (1 - A(eps)).
    rng = np.random.default_rng(1)
    y = rng.lognormal(7, 0.6, 500)
    panel = validate(pd.DataFrame({"region": "Ashford", "year": 2021, "income": y}), kind="units")
    table = welfare.compute(panel).set_index("index")["value"]
    gini = np.abs(y[:, None] - y[None, :]).mean() / (2 * y.mean())
    assert table["mean"] == pytest.approx(y.mean(), rel=1e-12)
    assert table["median"] == pytest.approx(np.median(y), rel=1e-12)
    assert table["sen_welfare"] == pytest.approx(y.mean() * (1 - gini), rel=1e-9)
    assert table["ede_0.5"] == pytest.approx(np.mean(np.sqrt(y)) ** 2, rel=1e-9)
    assert table["ede_1"] == pytest.approx(np.exp(np.mean(np.log(y))), rel=1e-9)
    assert table["ede_2"] == pytest.approx(1 / np.mean(1 / y), rel=1e-9)


def test_bracket_median_bounds_contain_the_lognormal_median():
    # the lognormal median is mu exp(-sigma^2 / 2) (Aitchison & Brown 1957)
    for k in (5, 10):
        P = np.linspace(0, 1, k + 1)
        L = special.ndtr(special.ndtri(P) - 0.7)
        low, high = welfare.median_bounds(P[None], L[None], np.array([1000.0]))
        assert low[0] < 1000 * np.exp(-0.245) < high[0]


def test_means_panel_gives_the_mean_only_and_says_why():
    frame = pd.DataFrame(
        {"region": ["Ashford", "Brackenmoor"], "year": 2021, "mean_income": [1.0, 3.0]}
    )
    table = welfare.compute(validate(frame, kind="means"))
    assert table.loc[table["index"] == "mean", "value"].tolist() == [1.0, 3.0]
    rest = table[table["index"] != "mean"]
    assert rest["value"].isna().all() and rest["note"].str.contains("means alone").all()
