"""Tests of explorer.stats.indices: the tidy index table for each kind of panel.

Bracket panels are built from exact lognormal bracket shares (Aitchison & Brown 1957, The
Lognormal Distribution, CUP: L(p) = Phi(Phi^-1(p) - sigma), from memory, checked by
quadrature in test_measures and test_lorenz);
unit and means panels from a few incomes whose indices follow by hand from the
definitions (common practice). District names are invented.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from scipy import special

from explorer.data.model import DataError
from explorer.data.validate import validate
from explorer.stats import indices, lorenz

SIGMA = 0.7


def lognormal_shares(k: int, sigma: float = SIGMA) -> np.ndarray:
    """Exact income shares of k equal brackets of a lognormal (Aitchison & Brown 1957)."""
    P = np.linspace(0, 1, k + 1)
    return np.diff(special.ndtr(special.ndtri(P) - sigma))


def bracket_panel(spec) -> object:
    """spec: list of (region, year, k, sigma)."""
    rows = []
    for region, year, k, sigma in spec:
        for share in lognormal_shares(k, sigma):
            rows.append(dict(region=region, year=year, pop_share=1 / k, income_share=share))
    return validate(pd.DataFrame(rows), kind="brackets")


@pytest.fixture(scope="module")
def quintile_panel():
    return bracket_panel(
        [(r, y, 5, SIGMA) for r in ("Ashford", "Brackenmoor") for y in (2020, 2021)]
    )


def test_table_has_the_contract_columns_and_one_row_per_district_year_index_method(
    quintile_panel,
):
    table = indices.compute(quintile_panel, methods=("linear", "lognormal"))
    assert tuple(table.columns) == indices.COLUMNS
    assert len(table) == 2 * 2 * len(indices.DEFAULT_INDICES) * 2
    assert set(table["method"]) == {"linear", "lognormal"}
    assert table["year"].dtype == np.int64
    assert not table.duplicated(["region", "year", "index", "method"]).any()


def test_bracket_bounds_are_gastwirths_bounds_and_contain_the_truth(quintile_panel):
    """Gini bounds at quintiles of lognormal 0.7: 0.3537347204 and 0.4233549230 (Gastwirth
    1972, "The estimation of the Lorenz curve and Gini index", Review of Economics and
    Statistics 54: 306-316; values derived by the trapezoid rule and by quadrature of the
    envelope, both recomputed in test_lorenz); the lognormal fit gives the true
    2 Phi(0.7 / sqrt 2) - 1 = 0.3793820536 (Aitchison & Brown 1957) between them."""
    table = indices.compute(quintile_panel, methods=("lognormal",))
    gini = table[table["index"] == "gini"]
    assert np.allclose(gini["lower"], 0.3537347204, atol=1e-10)
    assert np.allclose(gini["upper"], 0.4233549230, atol=2e-10)
    assert np.allclose(gini["value"], 0.3793820536, atol=1e-9)
    P, L = np.linspace(0, 1, 6), np.cumsum(np.r_[0.0, lognormal_shares(5)])
    assert 1 - np.sum(np.diff(P) * (L[1:] + L[:-1])) == pytest.approx(0.3537347204, abs=1e-10)
    assert 2 * special.ndtr(SIGMA / np.sqrt(2)) - 1 == pytest.approx(0.3793820536, abs=1e-10)
    finite = np.isfinite(table["upper"])
    assert (table["lower"] <= table["value"] + 1e-12).all()
    assert (table.loc[finite, "value"] <= table.loc[finite, "upper"] + 1e-12).all()


def test_unbounded_upper_bounds_are_infinite_with_the_reason_in_the_note(quintile_panel):
    """The upper curve's jump at p = 1 leaves Theil T without a finite upper bound
    (Gastwirth 1972 envelope); the note says so while the value itself stays finite."""
    table = indices.compute(quintile_panel, methods=("auto",), indices=("theil_t", "gini"))
    theil = table[table["index"] == "theil_t"]
    assert np.isinf(theil["upper"]).all() and np.isfinite(theil["value"]).all()
    assert theil["note"].str.contains("upper bound infinite").all()
    assert theil["note"].str.contains("jump at p = 1").all()
    assert (table.loc[table["index"] == "gini", "note"] == "").all()


def test_linear_method_equals_everyone_at_the_bracket_mean():
    """linear = each bracket's people at the bracket mean (common practice): its Theil T is
    sum s_j ln(s_j / p_j) over brackets with shares s_j and population shares p_j."""
    panel = bracket_panel([("Corrin", 2022, 10, 0.5)])
    table = indices.compute(panel, methods=("linear",), indices=("theil_t", "mld"))
    s, p = lognormal_shares(10, 0.5), np.full(10, 0.1)
    value = dict(zip(table["index"], table["value"], strict=True))
    assert value["theil_t"] == pytest.approx(np.sum(s * np.log(s / p)), abs=1e-13)
    assert value["mld"] == pytest.approx(np.sum(p * np.log(p / s)), abs=1e-13)


def test_mixed_bracket_counts_are_fitted_in_one_call():
    """Quintiles and deciles side by side: each district-year gets its own bounds."""
    panel = bracket_panel([("Ashford", 2020, 5, SIGMA), ("Dunmere", 2020, 10, SIGMA)])
    table = indices.compute(panel, methods=("lognormal",), indices=("gini",))
    assert list(table["region"]) == ["Ashford", "Dunmere"]
    assert np.allclose(table["value"], 0.3793820536, atol=1e-9)
    assert table["lower"].iloc[0] == pytest.approx(0.3537347204, abs=1e-10)
    assert table["lower"].iloc[1] < table["value"].iloc[1] < table["upper"].iloc[1]
    assert table["upper"].iloc[1] < table["upper"].iloc[0]  # deciles bound more tightly


def test_excluded_district_years_are_not_in_the_table():
    """A district-year whose shares do not sum to 1 is left out by validation and so is
    absent from the table (it is listed in panel.excluded)."""
    rows = []
    for region, scale in (("Ashford", 1.0), ("Brackenmoor", 1.3)):
        for share in lognormal_shares(5):
            rows.append(dict(region=region, year=2020, pop_share=0.2, income_share=share * scale))
    panel = validate(pd.DataFrame(rows), kind="brackets")
    assert list(panel.excluded["region"]) == ["Brackenmoor"]
    table = indices.compute(panel, methods=("linear",))
    assert set(table["region"]) == {"Ashford"}


def test_fits_table_reports_method_used_parameters_and_validity():
    """fits(): one row per district-year and method; GQ on Pareto alpha = 1.5 deciles is
    invalid (a + c < 1; Datt 1998 conditions, from memory, checked in test_lorenz)."""
    P = np.linspace(0, 1, 11)
    pareto = np.diff(1 - (1 - P) ** (1 - 1 / 1.5))  # Kleiber & Kotz (2003) Lorenz curve
    rows = [dict(region="Ashford", year=2020, pop_share=0.1, income_share=s) for s in pareto]
    rows += [
        dict(region="Brackenmoor", year=2020, pop_share=0.1, income_share=s)
        for s in lognormal_shares(10)
    ]
    panel = validate(pd.DataFrame(rows), kind="brackets")
    table = indices.fits(panel, ("gq", "auto"))
    assert tuple(table.columns) == indices.FIT_COLUMNS
    gq = table[table["method"] == "gq"].set_index("region")
    assert not gq.loc["Ashford", "valid"] and "a + c < 1" in gq.loc["Ashford", "reason"]
    assert gq.loc["Brackenmoor", "valid"]
    assert set(json.loads(gq.loc["Brackenmoor", "params"])) == {"a", "b", "c"}
    auto = table[table["method"] == "auto"].set_index("region")
    assert auto.loc["Brackenmoor", "used"] == "lognormal"
    assert json.loads(auto.loc["Brackenmoor", "params"])["sigma"] == pytest.approx(SIGMA)
    # the index table withholds the invalid GQ value and says why
    values = indices.compute(panel, methods=("gq",), indices=("gini",)).set_index("region")
    assert np.isnan(values.loc["Ashford", "value"])
    assert "a + c < 1" in values.loc["Ashford", "note"]


def unit_panel():
    """Two districts: incomes 1 and 3 (Ashford), and 2, 2, 2 (Brackenmoor)."""
    frame = pd.DataFrame(
        {
            "region": ["Ashford", "Ashford", "Brackenmoor", "Brackenmoor", "Brackenmoor"],
            "year": 2021,
            "income": [1.0, 3.0, 2.0, 2.0, 2.0],
        }
    )
    return validate(frame, kind="units")


def test_unit_panel_gives_the_hand_computed_indices():
    """Incomes (1, 3): Gini = mean absolute difference / (2 mean) = 1 / 4; Theil T =
    (1/2)[(1/2) ln(1/2) + (3/2) ln(3/2)]; equal incomes give 0 (common practice)."""
    table = indices.compute(unit_panel(), indices=("gini", "theil_t"))
    assert set(table["method"]) == {"units"}
    got = table.set_index(["region", "index"])["value"]
    assert got[("Ashford", "gini")] == pytest.approx(0.25, abs=1e-12)
    theil = 0.5 * (0.5 * np.log(0.5) + 1.5 * np.log(1.5))
    assert got[("Ashford", "theil_t")] == pytest.approx(theil, abs=1e-12)
    assert got[("Brackenmoor", "gini")] == pytest.approx(0.0, abs=1e-12)
    assert table[["lower", "upper"]].isna().all().all()


def test_unit_panel_bootstrap_intervals_contain_the_estimate_and_state_the_level():
    """Percentile bootstrap (Efron 1979): a seeded interval around the point estimate."""
    rng = np.random.default_rng(8)
    frame = pd.DataFrame(
        {
            "region": np.repeat(["Ashford", "Brackenmoor"], 200),
            "year": 2021,
            "income": np.concatenate([rng.lognormal(0, 0.5, 200), rng.lognormal(0, 1.0, 200)]),
        }
    )
    panel = validate(frame, kind="units")
    table = indices.compute(panel, indices=("gini",), ci="bootstrap", reps=99, seed=3, level=0.9)
    assert table.attrs["level"] == 0.9 and table.attrs["ci"] == "bootstrap"
    assert (table["lower"] <= table["value"]).all() and (table["value"] <= table["upper"]).all()
    again = indices.compute(panel, indices=("gini",), ci="bootstrap", reps=99, seed=3, level=0.9)
    pd.testing.assert_frame_equal(table, again)


def means_panel(populations):
    frame = pd.DataFrame(
        {
            "region": ["Ashford", "Brackenmoor"] * 2,
            "year": [2020, 2020, 2021, 2021],
            "mean_income": [1.0, 3.0, 1.0, 3.0],
        }
    )
    if populations is not None:
        frame["population"] = populations
    return validate(frame, kind="means")


def test_means_panel_gives_between_district_inequality_weighted_by_population():
    """Means 1 and 3 with populations 1 and 3: the mean is 2.5 and the mean absolute
    difference 2 * (1 * 3 / 16) * 2 = 0.75, so Gini = 0.75 / 5 = 0.15; unweighted it is
    0.25 (common practice: Gini = MAD / (2 mean))."""
    weighted = indices.compute(means_panel([1.0, 3.0, 1.0, 3.0]), indices=("gini",))
    assert list(weighted["region"]) == ["(all)", "(all)"]
    assert list(weighted["year"]) == [2020, 2021]
    assert set(weighted["method"]) == {"means"}
    assert np.allclose(weighted["value"], 0.15, atol=1e-12)
    assert weighted["note"].str.contains("weighted by population").all()
    unweighted = indices.compute(means_panel(None), indices=("gini",))
    assert np.allclose(unweighted["value"], 0.25, atol=1e-12)
    assert unweighted["note"].str.contains("unweighted").all()


@pytest.mark.parametrize(
    "kwargs, column",
    [
        ({"methods": ("spline",)}, "method"),
        ({"indices": ("hoover",)}, "index"),
        ({"ci": "jackknife"}, "ci"),
    ],
)
def test_bad_arguments_raise_a_data_error_naming_the_choices(quintile_panel, kwargs, column):
    with pytest.raises(DataError) as caught:
        indices.compute(quintile_panel, **kwargs)
    problem = caught.value.problems[0]
    assert problem.column == column and problem.fix


def test_every_method_gives_a_value_or_a_reason_for_every_default_index(quintile_panel):
    """No silent gaps: a missing or infinite value always carries a note."""
    table = indices.compute(quintile_panel, methods=lorenz.METHODS)
    gap = ~np.isfinite(table["value"])
    assert (table.loc[gap, "note"] != "").all()
    assert set(table["method"]) == set(lorenz.METHODS)


def test_inputs_are_not_modified(quintile_panel):
    before = quintile_panel.data.copy()
    indices.compute(quintile_panel, methods=("auto", "pchip"))
    indices.fits(quintile_panel, ("auto",))
    pd.testing.assert_frame_equal(quintile_panel.data, before)


def test_shares_at_bracket_boundaries_are_the_published_shares_for_every_method():
    """With decile shares, the top 10 % share is 1 − L(0.9) and the bottom 40 % share L(0.4)
    exactly (common practice: a share at a published boundary is read off the table); every
    method shows that value, and says so where its own curve differs."""
    from explorer.data import demo

    panel = demo.demo_panel()
    data = panel.data
    first = data.groupby(["region", "year"], sort=False)
    top = first["income_share"].apply(lambda s: float(s.iloc[-1]))
    bottom = first["income_share"].apply(lambda s: float(s.iloc[:4].sum()))
    for method in ("gq", "beta", "lognormal", "pchip", "auto"):
        table = indices.compute(panel, methods=(method,), indices=("top10_share", "bottom40_share"))
        table = table.assign(region=table["region"].astype(str))
        for key, expected in (("top10_share", top), ("bottom40_share", bottom)):
            rows = table[table["index"] == key].set_index(["region", "year"])["value"]
            want = expected.rename(index=str, level=0).reindex(rows.index)
            assert np.allclose(rows.to_numpy(), want.to_numpy(), atol=1e-12), (method, key)
        if method == "gq":
            assert table["note"].str.contains("fix this value").any()
