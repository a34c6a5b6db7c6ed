"""Tests of growth incidence (Ravallion & Chen 2003, Economics Letters 78: 93-99)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest
from scipy import integrate, special

from explorer.data.validate import validate
from explorer.stats import growth, lorenz

P = np.linspace(0, 1, 11)


def lognormal_points(sigma):
    """Exact decile points of the lognormal Lorenz curve (Aitchison & Brown 1957)."""
    L = special.ndtr(special.ndtri(P) - sigma)
    L[0], L[-1] = 0.0, 1.0
    return np.vstack([P, P]), np.vstack([L, L])


@pytest.mark.parametrize("method", ["lognormal", "gq", "pchip", "linear"])
def test_uniform_growth_gives_that_growth_at_every_percentile(method):
    # Ravallion & Chen (2003), eq. (1): with an unchanged Lorenz curve, g(p) is the growth
    # of the mean at every p
    Pm, Lm = lognormal_points(0.5)
    fits = lorenz.fit_points(Pm, Lm, method)
    got = growth.incidence(fits, fits, [1000.0, 500.0], [1100.0, 540.0], headcount=[0.3, 0.2])
    np.testing.assert_allclose(got.rate[0], 0.1, atol=1e-12)
    np.testing.assert_allclose(got.rate[1], 0.08, atol=1e-12)
    np.testing.assert_allclose(got.pro_poor, [0.1, 0.08], atol=1e-12)
    np.testing.assert_allclose(got.bottom40, [0.1, 0.08], atol=1e-12)
    np.testing.assert_allclose(got.mean_growth, [0.1, 0.08], atol=1e-15)


def test_lognormal_incidence_matches_its_closed_form():
    # Lognormal quantiles y(p) = mu exp(sigma Phi^-1(p) - sigma^2 / 2) (Aitchison & Brown
    # 1957), so g(p) = (mu1/mu0) exp((s1 - s0) Phi^-1(p) - (s1^2 - s0^2) / 2) - 1; the
    # pro-poor rate is its mean over (0, H], by quadrature here
    s0, s1, m0, m1, h = 0.7, 0.5, 1000.0, 1050.0, 0.35
    first = lorenz.fit_points(*lognormal_points(s0), "lognormal")
    second = lorenz.fit_points(*lognormal_points(s1), "lognormal")
    got = growth.incidence(first, second, [m0, m0], [m1, m1], headcount=[h, h])

    def g(p):
        z = special.ndtri(p)
        return m1 / m0 * np.exp((s1 - s0) * z - (s1**2 - s0**2) / 2) - 1

    np.testing.assert_allclose(got.rate[0], g(growth.GRID), rtol=1e-9)
    expected = integrate.quad(g, 0, h)[0] / h
    assert got.pro_poor[0] == pytest.approx(expected, abs=1e-6)
    assert got.bottom40[0] == pytest.approx(integrate.quad(g, 0, 0.4)[0] / 0.4, abs=1e-6)
    assert got.pro_poor[0] > got.mean_growth[0]  # inequality fell: growth favoured the poor


def test_annualise_compounds():
    assert growth.annualise(0.21, 2) == pytest.approx(0.1, abs=1e-12)


def test_from_panel_uniform_growth_for_every_district():
    # Ravallion & Chen (2003), eq. (1): the same shares in both years and a 10 % higher
    # mean give 10 % growth at every percentile, for the bottom 40 % and for the poor
    shares = np.diff(special.ndtr(special.ndtri(P) - 0.6))
    rows = []
    for region, mu in (("Ashford", 900.0), ("Brackenmoor", 1300.0)):
        for year, grow in ((2019, 1.0), (2021, 1.1)):
            for share in shares:
                rows.append(
                    dict(
                        region=region,
                        year=year,
                        pop_share=0.1,
                        income_share=share,
                        mean_income=mu * grow,
                        population=1000.0,
                    )
                )
    panel = validate(pd.DataFrame(rows), kind="brackets")
    summary, curves = growth.from_panel(panel, 2019, 2021, "gq", line=700.0)
    np.testing.assert_allclose(summary["value"], 0.1, atol=1e-9)
    np.testing.assert_allclose(curves["rate"], 0.1, atol=1e-9)
    assert set(summary["index"]) == set(growth.SUMMARY_KEYS)


def test_units_uniform_growth_is_that_growth_at_every_percentile():
    """Ravallion & Chen (2003), *Economics Letters* 78: 93-99, eq. (1): when every income
    grows by the same factor, g(p) equals that growth at every p, and so do the rate of
    pro-poor growth and the growth of the mean."""
    from explorer.data import demo

    panel = demo.demo_panel("units")
    first = panel.data[panel.data["year"] == 2010]
    grown = first.assign(year=2017, income=first["income"] * 1.25)
    data = pd.concat([first, grown], ignore_index=True)
    twin = dataclasses.replace(panel, data=data)
    summary, curves = growth.from_panel(twin, 2010, 2017, line=float(first["income"].median()))
    assert np.allclose(curves["rate"], 0.25, atol=1e-12)
    for key in growth.SUMMARY_KEYS:
        got = summary.loc[summary["index"] == key, "value"].to_numpy(float)
        assert np.allclose(got, 0.25, atol=1e-9), key


def test_since_stacks_every_later_year_with_one_fit():
    """Growth from a first year to every later year equals the pairwise computation."""
    from explorer.data import demo

    panel = demo.demo_panel()
    years = sorted(int(y) for y in panel.data["year"].unique())
    summary, curves = growth.since(panel, years[0], "gq")
    assert sorted(summary["year"].unique()) == years[1:]
    one, one_curves = growth.from_panel(panel, years[0], years[5], "gq")
    got = summary[summary["year"] == years[5]].reset_index(drop=True)
    pd.testing.assert_frame_equal(got, one.reset_index(drop=True), check_exact=False, rtol=1e-12)
    assert np.allclose(
        curves[curves["year"] == years[5]]["rate"].to_numpy(), one_curves["rate"].to_numpy()
    )


def test_growth_bounds_from_the_brackets_contain_the_true_lognormal_growth():
    """Two lognormal years given only by their decile shares: the true growth at every
    percentile, g(p) = exp(σ0 z - σ1 z + ...) from the quantiles μ exp(σ z − σ²/2)
    (Aitchison & Brown 1957, *The Lognormal Distribution*, the quantile function), lies
    inside the bounds that the bracket means allow, and so does the true growth of the
    bottom 40 % (its mean over (0, 0.4], by quadrature)."""
    from explorer.data import demo

    panel = demo.demo_panel()
    years = sorted(int(y) for y in panel.data["year"].unique())[:2]
    data = panel.data[panel.data["year"].isin(years)].copy()
    regions = list(dict.fromkeys(data["region"].astype(str)))[:6]
    data = data[data["region"].astype(str).isin(regions)]
    p10 = np.linspace(0, 1, 11)
    rng = np.random.default_rng(7)
    truth = {}
    for region in regions:
        for year in years:
            sigma = float(rng.uniform(0.4, 1.0))
            mean = float(rng.uniform(10_000, 30_000))
            lorenz = special.ndtr(special.ndtri(p10) - sigma)
            lorenz[0], lorenz[-1] = 0.0, 1.0
            rows = (data["region"].astype(str) == region) & (data["year"] == year)
            data.loc[rows, "income_share"] = np.diff(lorenz)
            data.loc[rows, "pop_share"] = 0.1
            data.loc[rows, "mean_income"] = mean
            truth[(region, year)] = (sigma, mean)
    twin = dataclasses.replace(panel, data=data.reset_index(drop=True))
    summary, curves = growth.from_panel(twin, years[0], years[1], "gq")

    def quantile(p, sigma, mean):
        return mean * np.exp(sigma * special.ndtri(p) - sigma**2 / 2)

    for region in regions:
        (s0, m0), (s1, m1) = truth[(region, years[0])], truth[(region, years[1])]
        own = curves[curves["region"] == region]
        true = quantile(own["p"].to_numpy(), s1, m1) / quantile(own["p"].to_numpy(), s0, m0) - 1
        assert np.all(own["lower"].to_numpy() <= true + 1e-9)
        assert np.all(true <= own["upper"].to_numpy() + 1e-9)
        bottom = (
            integrate.quad(
                lambda p, s0=s0, m0=m0, s1=s1, m1=m1: quantile(p, s1, m1) / quantile(p, s0, m0) - 1,
                0,
                0.4,
                limit=200,
            )[0]
            / 0.4
        )
        row = summary[(summary["region"] == region) & (summary["index"] == "growth_bottom40")]
        assert row["lower"].iloc[0] <= bottom <= row["upper"].iloc[0]
        mean_row = summary[(summary["region"] == region) & (summary["index"] == "growth_mean")]
        assert mean_row["lower"].iloc[0] == pytest.approx(m1 / m0 - 1, rel=1e-12)
    # the bounds say something: inside the interior brackets the curve's range is finite
    inner = curves[(curves["p"] > 0.1) & (curves["p"] < 0.9)]
    assert np.isfinite(inner["upper"]).all() and (inner["lower"] > -1).any()
