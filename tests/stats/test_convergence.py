"""σ- and β-convergence against numpy, scipy.stats.linregress and the closed forms of
Barro & Sala-i-Martin (1992), "Convergence", Journal of Political Economy 100: 223-251."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from explorer.data.model import DataError
from explorer.stats import convergence


def random_panel(seed: int, districts: int = 25, years: int = 6, population: bool = True):
    rng = np.random.default_rng(seed)
    region = np.repeat([f"D{i:02d}" for i in range(districts)], years)
    year = np.tile(np.arange(2010, 2010 + years), districts)
    mean = np.exp(rng.normal(10, 0.3, districts * years))
    data = {"region": region, "year": year, "mean_income": mean}
    if population:
        data["population"] = rng.integers(1_000, 200_000, districts * years).astype(float)
    return pd.DataFrame(data)


def shrinking_panel(factor: float, span: int, districts: int = 12, seed: int = 0) -> pd.DataFrame:
    """Two years in which every district's log gap to the mean is multiplied by ``factor``.

    With common growth c, ln y_iT - m_T = factor * (ln y_i0 - m_0), so the yearly growth is
    c/T + (factor - 1)/T * (ln y_i0 - m_0): an exact line with slope β = (factor - 1)/T.
    """
    rng = np.random.default_rng(seed)
    log0 = rng.normal(10.0, 0.4, districts)
    logT = log0.mean() + 0.3 + factor * (log0 - log0.mean())
    regions = [f"R{i}" for i in range(districts)]
    return pd.DataFrame(
        {
            "region": regions * 2,
            "year": [2000] * districts + [2000 + span] * districts,
            "mean_income": np.exp(np.concatenate([log0, logT])),
        }
    )


def measure(table: pd.DataFrame, name: str) -> pd.Series:
    rows = table[table["measure"] == name]
    return pd.Series(rows["value"].to_numpy(), index=rows["year"].to_numpy())


# ------------------------------------------------------------------------------ sigma


def test_sigma_measures_match_numpy_per_year():
    """sd_log = np.std of the logs; weighted forms from np.cov with aweights (ddof=0);
    cv = np.std / np.mean; cv_weighted is the population-weighted CV of Williamson (1965),
    "Regional inequality and the process of national development", Economic Development
    and Cultural Change 13(4): 1-84."""
    data = random_panel(1)
    table = convergence.sigma(data)
    for year, rows in data.groupby("year"):
        y, p = rows["mean_income"].to_numpy(), rows["population"].to_numpy()
        assert measure(table, "sd_log")[year] == pytest.approx(np.std(np.log(y)), rel=1e-12)
        assert measure(table, "cv")[year] == pytest.approx(np.std(y) / np.mean(y), rel=1e-12)
        sd_w = np.sqrt(np.cov(np.log(y), aweights=p, ddof=0))
        assert measure(table, "sd_log_weighted")[year] == pytest.approx(sd_w, rel=1e-12)
        cv_w = np.sqrt(np.cov(y, aweights=p, ddof=0)) / np.average(y, weights=p)
        assert measure(table, "cv_weighted")[year] == pytest.approx(cv_w, rel=1e-12)


def test_sigma_table_is_tidy_sorted_and_counts_districts():
    data = random_panel(2, districts=9, years=4)
    table = convergence.sigma(data.sample(frac=1.0, random_state=3))  # row order is irrelevant
    assert list(table.columns[:3]) == ["year", "measure", "value"]
    assert table["year"].tolist() == sorted(table["year"].tolist())
    per_year = table.groupby("year")["measure"].apply(tuple)
    assert all(order == convergence.SIGMA_MEASURES for order in per_year)
    assert (table["districts"] == 9).all()


def test_sigma_without_populations_gives_only_unweighted_measures():
    table = convergence.sigma(random_panel(4, population=False))
    assert set(table["measure"]) == {"sd_log", "cv"}


def test_sigma_weighted_is_nan_only_in_years_with_a_missing_population():
    data = random_panel(5)
    data.loc[(data["year"] == 2012) & (data["region"] == "D03"), "population"] = np.nan
    table = convergence.sigma(data)
    weighted = measure(table, "sd_log_weighted")
    assert np.isnan(weighted[2012])
    assert np.isfinite(weighted.drop(2012)).all()
    assert np.isfinite(measure(table, "sd_log")).all()


def test_sigma_shrinks_by_the_factor_applied_to_log_gaps():
    """Multiplying log gaps by φ multiplies their standard deviation by |φ| (common
    practice: sd(a + φx) = |φ| sd(x))."""
    data = shrinking_panel(0.6, span=10)
    sd = measure(convergence.sigma(data), "sd_log")
    assert sd[2010] == pytest.approx(0.6 * sd[2000], rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(
    seed=st.integers(0, 10_000),
    scale=st.lists(st.floats(0.01, 100.0), min_size=4, max_size=4),
)
def test_sigma_is_invariant_to_a_common_scale_in_each_year(seed, scale):
    """Dispersion of logs and the CV ignore the currency unit and inflation (common
    practice: scale invariance)."""
    data = random_panel(seed, districts=7, years=4)
    factor = np.asarray(scale)[data["year"].to_numpy() - 2010]
    scaled = data.assign(mean_income=data["mean_income"] * factor)
    a, b = convergence.sigma(data), convergence.sigma(scaled)
    np.testing.assert_allclose(a["value"], b["value"], rtol=1e-9, atol=1e-12)


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10_000), copies=st.integers(2, 4))
def test_sigma_is_invariant_to_replicating_every_district(seed, copies):
    """Population replication invariance (common practice for dispersion measures)."""
    data = random_panel(seed, districts=5, years=3)
    clones = pd.concat(
        [data.assign(region=data["region"] + f"_{c}") for c in range(copies)], ignore_index=True
    )
    a, b = convergence.sigma(data), convergence.sigma(clones)
    np.testing.assert_allclose(a["value"], b["value"], rtol=1e-9, atol=1e-12)


@settings(max_examples=40, deadline=None)
@given(level=st.floats(1.0, 1e6), districts=st.integers(2, 8))
def test_sigma_is_zero_when_every_district_has_the_same_mean(level, districts):
    data = pd.DataFrame(
        {
            "region": [f"R{i}" for i in range(districts)],
            "year": 2020,
            "mean_income": level,
            "population": np.arange(1, districts + 1, dtype=float),
        }
    )
    assert np.allclose(convergence.sigma(data)["value"], 0.0, atol=1e-9)


# ------------------------------------------------------------------------------- beta


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_beta_slope_error_and_fit_match_scipy_linregress(seed):
    """Reference: scipy.stats.linregress (slope, stderr, intercept, rvalue); interval
    slope ± t_{n-2} · stderr as in linregress's documented example."""
    data = random_panel(seed, districts=30, years=8)
    result = convergence.beta(data, 2011, 2016, level=0.9)
    start = data[data["year"] == 2011].set_index("region")["mean_income"]
    end = data[data["year"] == 2016].set_index("region")["mean_income"]
    x = np.log(start.to_numpy())
    growth = (np.log(end[start.index].to_numpy()) - x) / 5
    ref = stats.linregress(x, growth)
    assert result.beta == pytest.approx(ref.slope, rel=1e-10)
    assert result.se == pytest.approx(ref.stderr, rel=1e-10)
    assert result.intercept == pytest.approx(ref.intercept, rel=1e-10, abs=1e-12)
    assert result.r_squared == pytest.approx(ref.rvalue**2, rel=1e-9)
    t = stats.t.ppf(0.95, len(x) - 2)
    assert result.lower == pytest.approx(ref.slope - t * ref.stderr, rel=1e-10)
    assert result.upper == pytest.approx(ref.slope + t * ref.stderr, rel=1e-10)
    assert (result.n, result.year_from, result.year_to, result.level) == (30, 2011, 2016, 0.9)


def test_beta_defaults_to_first_and_last_year_and_uses_districts_in_both():
    data = random_panel(7, districts=10, years=5)
    data = data[~((data["region"] == "D00") & (data["year"] == 2014))]  # D00 lacks the end
    result = convergence.beta(data)
    assert (result.year_from, result.year_to, result.n) == (2010, 2014, 9)


@pytest.mark.parametrize(("factor", "span"), [(0.5, 10), (0.8, 5), (np.exp(-0.02 * 25), 25)])
def test_half_life_of_a_panel_whose_gaps_shrink_by_a_known_factor(factor, span):
    """Gaps × φ over T years: β = (φ - 1)/T, λ = -ln φ / T, half-life T ln 2 / (-ln φ).

    From memory of Barro & Sala-i-Martin (1992): β = -(1 - e^{-λT})/T; cross-checked here
    by following a gap that shrinks at rate λ year by year until it has halved.
    """
    result = convergence.beta(shrinking_panel(factor, span))
    assert result.beta == pytest.approx((factor - 1) / span, rel=1e-9)
    assert result.se == pytest.approx(0.0, abs=1e-12)  # an exact line
    assert result.speed == pytest.approx(-np.log(factor) / span, rel=1e-9)
    assert result.half_life == pytest.approx(span * np.log(2) / -np.log(factor), rel=1e-9)
    assert result.reason == "" and result.converging
    # numerical cross-check: the gap e^{-λt} first falls to one half at t = half-life
    t = np.linspace(0, 4 * result.half_life, 400_001)
    halved = t[np.argmax(np.exp(-result.speed * t) <= 0.5)]
    assert halved == pytest.approx(result.half_life, rel=1e-4)


def test_beta_of_half_gaps_over_ten_years_gives_a_ten_year_half_life():
    # worked example: gaps halve in 10 years, so the half-life is 10 years (common practice)
    assert convergence.beta(shrinking_panel(0.5, 10)).half_life == pytest.approx(10.0)


def test_divergence_gives_positive_beta_and_no_half_life_with_a_reason():
    result = convergence.beta(shrinking_panel(1.3, 10))
    assert result.beta == pytest.approx(0.03, rel=1e-9)
    assert np.isnan(result.speed) and np.isnan(result.half_life)
    assert "divergence" in result.reason
    assert not result.converging


def test_overtaking_beyond_the_model_gives_no_speed_with_a_reason():
    result = convergence.beta(shrinking_panel(-0.4, 10))  # 1 + βT = -0.4 < 0
    assert result.beta == pytest.approx(-0.14, rel=1e-9)
    assert np.isnan(result.speed) and np.isnan(result.half_life)
    assert "overtook" in result.reason


@pytest.mark.parametrize(
    ("data", "why"),
    [
        (shrinking_panel(0.5, 10, districts=2), "at least 3"),
        (shrinking_panel(0.5, 10).query("year == 2000"), "only one year"),
    ],
)
def test_beta_without_enough_data_is_nan_with_a_reason(data, why):
    result = convergence.beta(data)
    assert np.isnan(result.beta) and np.isnan(result.se) and np.isnan(result.half_life)
    assert why in result.reason


def test_beta_with_equal_starting_means_is_nan_with_a_reason():
    data = pd.DataFrame(
        {"region": list("abcabc"), "year": [1] * 3 + [2] * 3, "mean_income": [5.0] * 3 + [6, 7, 8]}
    )
    result = convergence.beta(data)
    assert np.isnan(result.beta) and "same mean" in result.reason


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 10_000), a=st.floats(0.01, 100.0), b=st.floats(0.01, 100.0))
def test_beta_is_invariant_to_a_common_scale_in_each_year(seed, a, b):
    """A change of currency unit or a common growth factor moves only the intercept
    (OLS slope invariance to shifts of x and y, common practice)."""
    data = random_panel(seed, districts=8, years=2)
    factor = np.where(data["year"] == 2010, a, b)
    scaled = data.assign(mean_income=data["mean_income"] * factor)
    r0, r1 = convergence.beta(data), convergence.beta(scaled)
    assert r1.beta == pytest.approx(r0.beta, rel=1e-7, abs=1e-10)
    assert r1.se == pytest.approx(r0.se, rel=1e-7, abs=1e-10)


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10_000))
def test_beta_does_not_depend_on_row_order(seed):
    data = random_panel(seed, districts=8, years=3)
    shuffled = data.sample(frac=1.0, random_state=seed)
    assert convergence.beta(shuffled).beta == pytest.approx(convergence.beta(data).beta, rel=1e-12)


# ------------------------------------------------------------------------ bad input


@pytest.mark.parametrize("function", [convergence.sigma, convergence.beta])
def test_missing_column_is_a_data_error_naming_it(function):
    data = random_panel(0).drop(columns="mean_income")
    with pytest.raises(DataError) as caught:
        function(data)
    assert caught.value.problems[0].column == "mean_income"
    assert caught.value.problems[0].fix


@pytest.mark.parametrize("bad", [0.0, -5.0, np.nan])
@pytest.mark.parametrize("function", [convergence.sigma, convergence.beta])
def test_non_positive_or_missing_mean_is_a_data_error_naming_the_district(function, bad):
    data = random_panel(0)
    data.loc[7, "mean_income"] = bad
    with pytest.raises(DataError) as caught:
        function(data)
    problem = caught.value.problems[0]
    assert problem.column == "mean_income" and data.loc[7, "region"] in problem.message


def test_duplicate_district_year_is_a_data_error():
    data = random_panel(0)
    with pytest.raises(DataError, match="more than once"):
        convergence.sigma(pd.concat([data, data.iloc[[3]]]))


def test_negative_population_is_a_data_error():
    data = random_panel(0)
    data.loc[2, "population"] = -1.0
    with pytest.raises(DataError) as caught:
        convergence.sigma(data)
    assert caught.value.problems[0].column == "population"


@pytest.mark.parametrize(
    ("year_from", "year_to", "level"),
    [(2010, 2030, 0.95), (2014, 2012, 0.95), (2012, 2012, 0.95), (2010, 2014, 1.5)],
)
def test_impossible_years_or_level_are_data_errors(year_from, year_to, level):
    with pytest.raises(DataError):
        convergence.beta(random_panel(0), year_from, year_to, level=level)


def test_inputs_are_not_modified():
    data = random_panel(0)
    before = data.copy(deep=True)
    convergence.sigma(data)
    convergence.beta(data)
    pd.testing.assert_frame_equal(data, before)


def test_demo_province_diverges_with_the_city_and_converges_without_it():
    """The demo scenario (demo_data/README.md): the city county pulls away; elsewhere
    poorer districts catch up."""
    from pathlib import Path

    means = pd.read_csv(Path(__file__).resolve().parents[2] / "demo_data" / "means.csv")
    everyone = convergence.beta(means)
    rest = convergence.beta(means[means["county"] != "Calvessa"])
    assert rest.beta < everyone.beta
    assert rest.upper < 0 and np.isfinite(rest.half_life)
