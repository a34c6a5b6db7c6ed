"""Tests of explorer.stats.intervals: bootstrap and analytic intervals for unit data.

Outside references: exact enumeration of the multinomial bootstrap distribution
(Efron 1979, "Bootstrap methods: another look at the jackknife", Annals of Statistics 7:
1-26) on a tiny sample; the sampling distribution of the Gini simulated from the
lognormal (its closed-form Gini 2 Phi(sigma / sqrt 2) - 1, from memory of Aitchison &
Brown 1957, The Lognormal Distribution, CUP, checked by quadrature below); Davidson
(2009), "Reliable inference for the Gini index", Journal of Econometrics 150: 30-40, for
the Gini's asymptotic variance (from memory, cross-checked here against simulation and
the bootstrap); binomial error of a coverage rate (common practice).
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import stats

from explorer.stats.intervals import (
    SCHEMES,
    bootstrap,
    bootstrap_replicates,
    gini_analytic,
    gini_se,
)
from explorer.stats.measures import STANDARD_INDICES, compute, sort_units

SIGMA = 0.7
# 0.3793820536 (Aitchison & Brown 1957, from memory; checked by quadrature in
# test_closed_form_gini_of_the_simulated_lognormal_equals_quadrature)
TRUE_GINI = 2 * stats.norm.cdf(SIGMA / math.sqrt(2)) - 1


def test_closed_form_gini_of_the_simulated_lognormal_equals_quadrature():
    """TRUE_GINI against 1 - 2 * integral of the lognormal Lorenz curve (scipy quad), and
    the project's Gini of units at the means of 20,000 equal bins of that curve, which
    lies just below it (the bins drop the within-bin spread; derived)."""
    from scipy import integrate

    def curve(p):
        return stats.norm.cdf(stats.norm.ppf(p) - SIGMA)

    area = integrate.quad(curve, 0, 1, epsabs=1e-14, epsrel=1e-13, limit=200)[0]
    assert TRUE_GINI == pytest.approx(1 - 2 * area, abs=1e-10)
    assert TRUE_GINI == pytest.approx(0.3793820536, abs=1e-10)
    p = np.linspace(0, 1, 20_001)
    means = np.diff(np.concatenate([[0.0], curve(p[1:-1]), [1.0]]))
    gini = compute(sort_units(means, None, None), ["gini"])["gini"].value[0]
    assert 0 <= TRUE_GINI - gini < 1e-7


def lognormal_groups(groups: int, size: int, seed: int, weighted: bool = False):
    rng = np.random.default_rng(seed)
    values = rng.lognormal(0.0, SIGMA, groups * size)
    weights = rng.uniform(0.5, 1.5, groups * size) if weighted else None
    return sort_units(values, weights, np.repeat(np.arange(groups), size))


@pytest.fixture(scope="module")
def districts():
    return lognormal_groups(groups=12, size=300, seed=1, weighted=True)


@pytest.mark.parametrize("scheme", SCHEMES)
def test_same_seed_gives_the_same_intervals_and_another_seed_does_not(districts, scheme):
    keys = ["gini", "mld", "palma"]
    first = bootstrap(districts, keys, reps=49, seed=5, scheme=scheme)
    again = bootstrap(districts, keys, reps=49, seed=5, scheme=scheme)
    other = bootstrap(districts, keys, reps=49, seed=6, scheme=scheme)
    for key in keys:
        np.testing.assert_array_equal(first[key][0], again[key][0])
        np.testing.assert_array_equal(first[key][1], again[key][1])
        assert not np.array_equal(first[key][0], other[key][0])


@pytest.mark.parametrize("scheme", SCHEMES)
def test_chunking_replicates_does_not_change_the_result(districts, scheme):
    whole = bootstrap_replicates(
        districts, ["gini", "top10_share"], reps=23, seed=2, chunk=23, scheme=scheme
    )
    pieces = bootstrap_replicates(
        districts, ["gini", "top10_share"], reps=23, seed=2, chunk=4, scheme=scheme
    )
    for key in whole:
        np.testing.assert_allclose(whole[key], pieces[key], rtol=1e-12, atol=1e-15)


@pytest.mark.parametrize("scheme", SCHEMES)
def test_every_interval_contains_its_point_estimate_and_is_ordered(districts, scheme):
    point = compute(districts, STANDARD_INDICES)
    intervals = bootstrap(districts, STANDARD_INDICES, reps=199, seed=0, scheme=scheme)
    for key in STANDARD_INDICES:
        lower, upper = intervals[key]
        value = point[key].value
        assert np.all(lower <= value) and np.all(value <= upper), key
        assert np.all(lower < upper), key


def test_higher_level_gives_a_wider_interval(districts):
    narrow = bootstrap(districts, ["gini"], reps=199, level=0.8)["gini"]
    wide = bootstrap(districts, ["gini"], reps=199, level=0.99)["gini"]
    assert np.all(wide[0] <= narrow[0]) and np.all(narrow[1] <= wide[1])


def test_multinomial_replicates_follow_the_enumerated_bootstrap_distribution():
    """Efron (1979): a bootstrap sample draws n units with replacement. For 3 units the
    27 equally likely samples can be enumerated; the replicates' mean and spread of the
    Gini must match that exact distribution within Monte-Carlo error (each of 400
    identical groups is resampled independently, 100 replicates: 40,000 draws)."""
    sample = np.array([1.0, 2.0, 6.0])
    exact = []
    for picks in itertools.product(range(3), repeat=3):
        ys = sample[list(picks)]
        exact.append(np.abs(ys[:, None] - ys[None, :]).sum() / (2 * 9 * ys.mean()))
    exact = np.array(exact)
    groups = 400
    units = sort_units(np.tile(sample, groups), None, np.repeat(np.arange(groups), 3))
    draws = bootstrap_replicates(units, ["gini"], reps=100, seed=3)["gini"].ravel()
    se_mean = exact.std() / math.sqrt(draws.size)
    assert abs(draws.mean() - exact.mean()) < 4 * se_mean
    assert draws.std() == pytest.approx(exact.std(), rel=0.03)
    # Only values the enumeration can produce
    assert np.all(np.min(np.abs(draws[:, None] - np.unique(exact)[None, :]), axis=1) < 1e-12)


def test_zero_weight_units_are_never_drawn():
    """A unit of weight 0 is no observation: resampling among the others only, so a
    group of two real units still resamples to exactly two units."""
    units = sort_units([1.0, 3.0, 100.0], [1.0, 1.0, 0.0])
    draws = bootstrap_replicates(units, ["gini"], reps=400, seed=4)["gini"][0]
    # Two units resampled to size two: Gini 0 (both the same) or 1/4, each half the time.
    assert set(np.round(draws, 12)) <= {0.0, 0.25}
    assert abs(np.mean(draws == 0.25) - 0.5) < 4 * math.sqrt(0.25 / 400)


def test_undefined_point_estimate_gives_undefined_interval():
    units = sort_units(
        [0.0, 1.0, 2.0, 5.0, 3.0, 4.0, 8.0], None, ["a", "a", "a", "a", "b", "b", "b"]
    )
    intervals = bootstrap(units, ["mld", "gini"], reps=99)
    assert np.isnan(intervals["mld"][0][0]) and np.isnan(intervals["mld"][1][0])
    assert np.isfinite(intervals["mld"][0][1])
    assert np.isfinite(intervals["gini"][0]).all()


def test_analytic_standard_error_matches_the_simulated_sampling_spread():
    """Davidson (2009), from memory: Var(G) = sum (Z_i - Zbar)^2 / (n mu)^2 with
    Z_i = -(G + 1) y_i + (2i - 1) y_i / n - (2/n) sum_{j<=i} y_j. Cross-checked here
    against simulation: 3000 lognormal samples of n = 500 give the sampling SD of the
    Gini directly; the mean analytic SE must match it to within the SD's own Monte-Carlo
    error (about 1.5% relative for 3000 samples of a slightly heavy-tailed statistic;
    4 x that allowed)."""
    units = lognormal_groups(groups=3000, size=500, seed=8)
    gini = compute(units, ["gini"])["gini"].value
    se = gini_se(units)
    assert se.mean() == pytest.approx(gini.std(ddof=1), rel=0.06)
    # Davidson's formula written out for one sample, as remembered, by a plain loop.
    ys = np.sort(units.values[:500])
    n, mu = len(ys), ys.mean()
    g = gini[0]
    Z = np.array(
        [-(g + 1) * y + (2 * i - 1) * y / n - 2 / n * ys[:i].sum() for i, y in enumerate(ys, 1)]
    )
    davidson = math.sqrt(np.sum((Z - Z.mean()) ** 2)) / (n * mu)
    assert se[0] == pytest.approx(davidson, rel=0.01)


def test_analytic_and_bootstrap_standard_errors_agree_with_weights():
    """The linearised SE and the bootstrap SD estimate the same thing (Efron 1979;
    Davidson 2009): on 20 weighted samples of n = 2000 their ratio is near 1 (bootstrap
    SD from 199 replicates is itself uncertain by about 5%)."""
    units = lognormal_groups(groups=20, size=2000, seed=9, weighted=True)
    replicates = bootstrap_replicates(units, ["gini"], reps=199, seed=1)["gini"]
    ratio = gini_se(units) / replicates.std(axis=1, ddof=1)
    assert np.median(ratio) == pytest.approx(1.0, abs=0.05)
    assert np.all((ratio > 0.8) & (ratio < 1.25))


def test_analytic_interval_is_symmetric_about_the_gini_at_the_normal_quantile(districts):
    lower, upper = gini_analytic(districts, level=0.9)
    gini = compute(districts, ["gini"])["gini"].value
    se = gini_se(districts)
    np.testing.assert_allclose((lower + upper) / 2, gini, rtol=1e-12)
    np.testing.assert_allclose((upper - lower) / (2 * se), stats.norm.ppf(0.95), rtol=1e-12)


@pytest.mark.parametrize(
    ("kwargs", "words"),
    [({"level": 1.5}, "level"), ({"scheme": "jackknife"}, "scheme"), ({"reps": 0}, "reps")],
)
def test_bad_arguments_raise_clear_value_errors(districts, kwargs, words):
    with pytest.raises(ValueError, match=words):
        bootstrap(districts, ["gini"], **kwargs)


@pytest.mark.slow
@pytest.mark.parametrize("scheme", ["multinomial", "poisson"])
def test_percentile_interval_covers_the_true_gini_about_95_percent(scheme):
    """Coverage on simulated lognormal samples (sigma = 0.7, true Gini from the closed
    form): 300 districts of n = 400, 95% percentile intervals from 199 replicates. The
    share covering the truth is binomial(300, ~0.95): SD 0.0126; allowed: within 3 SD
    of 0.95 (percentile intervals run slightly short in skewed samples, Davidson 2009)."""
    units = lognormal_groups(groups=300, size=400, seed=2024)
    lower, upper = bootstrap(units, ["gini"], reps=199, seed=7, scheme=scheme)["gini"]
    covered = np.mean((lower <= TRUE_GINI) & (TRUE_GINI <= upper))
    assert abs(covered - 0.95) <= 3 * math.sqrt(0.95 * 0.05 / 300), covered
    a_lower, a_upper = gini_analytic(units, 0.95)
    analytic = np.mean((a_lower <= TRUE_GINI) & (TRUE_GINI <= a_upper))
    assert abs(analytic - 0.95) <= 3 * math.sqrt(0.95 * 0.05 / 300), analytic


def test_percentile_bounds_are_numpy_weibull_quantiles_of_the_replicates(districts):
    """The (R + 1) p order-statistic rule: numpy.quantile(method="weibull") is the
    reference (Hyndman & Fan 1996, "Sample quantiles in statistical packages", American
    Statistician 50: 361-365, definition 6); with 199 replicates the 95% bounds
    are order statistics 5 and 195 exactly."""
    keys = ["gini", "s80_s20"]
    intervals = bootstrap(districts, keys, reps=199, seed=12)
    replicates = bootstrap_replicates(districts, keys, reps=199, seed=12)
    for key in keys:
        expected = np.quantile(replicates[key], [0.025, 0.975], axis=1, method="weibull")
        np.testing.assert_allclose(intervals[key][0], expected[0], rtol=1e-14)
        np.testing.assert_allclose(intervals[key][1], expected[1], rtol=1e-14)
        ordered = np.sort(replicates[key], axis=1)
        np.testing.assert_allclose(intervals[key][0], ordered[:, 4], rtol=1e-14)
        np.testing.assert_allclose(intervals[key][1], ordered[:, 194], rtol=1e-14)
