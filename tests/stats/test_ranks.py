"""Tests of rank intervals: coverage of the true rank in simulation, exact small cases."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from explorer.stats import ranks


def test_small_case_by_hand():
    # three districts: 0.2 [0.1, 0.3], 0.25 [0.22, 0.28], 0.5 [0.45, 0.55]: the first two
    # overlap, so each could be 1st or 2nd; the third is surely 3rd
    got = ranks.from_bounds([0.2, 0.25, 0.5], [0.1, 0.22, 0.45], [0.3, 0.28, 0.55])
    np.testing.assert_array_equal(got.rank, [1, 2, 3])
    np.testing.assert_array_equal(got.best, [1, 1, 3])
    np.testing.assert_array_equal(got.worst, [2, 2, 3])
    np.testing.assert_array_equal(got.clear, [False, False, True])


def test_descending_reverses_the_order():
    got = ranks.from_bounds([0.2, 0.25, 0.5], [0.1, 0.22, 0.45], [0.3, 0.28, 0.55], True)
    np.testing.assert_array_equal(got.rank, [3, 2, 1])
    np.testing.assert_array_equal(got.best, [2, 2, 1])
    np.testing.assert_array_equal(got.worst, [3, 3, 1])


def test_missing_values_are_not_ranked():
    got = ranks.from_bounds([0.2, np.nan, 0.5], [0.1, np.nan, 0.4], [0.3, np.nan, 0.6])
    assert np.isnan(got.rank[1]) and np.isnan(got.best[1])
    np.testing.assert_array_equal(got.rank[[0, 2]], [1, 2])


@settings(max_examples=50, deadline=None)
@given(st.integers(2, 60), st.integers(0, 10_000))
def test_bound_intervals_always_contain_the_rank_of_values_inside_the_bounds(n, seed):
    # the construction guarantees coverage 1: any true values inside the bounds rank each
    # district between its best and worst rank
    rng = np.random.default_rng(seed)
    centre = rng.normal(size=n)
    half = rng.uniform(0, 0.5, n)
    got = ranks.from_bounds(centre, centre - half, centre + half)
    truth = centre + rng.uniform(-1, 1, n) * half
    rank = ranks.ranks(truth)
    assert np.all(got.best <= rank) and np.all(rank <= got.worst)


def test_bootstrap_rank_intervals_cover_the_true_rank_at_the_stated_rate():
    # Simulation: 12 districts with true values 0.5 apart, estimates with standard error
    # 0.25, replicates drawn around the estimate as a parametric bootstrap would. The
    # percentile rank intervals at 90% must cover the true rank at least 90% of the time,
    # give or take three binomial standard errors of the simulation (Hall & Miller 2009
    # note these intervals are conservative for well-separated values).
    rng = np.random.default_rng(2024)
    n, trials, level = 12, 300, 0.9
    truth = np.arange(n) * 0.5
    true_rank = ranks.ranks(truth)
    covered = 0
    for _ in range(trials):
        estimate = truth + rng.normal(0, 0.25, n)
        replicates = estimate[:, None] + rng.normal(0, 0.25, (n, 199))
        got = ranks.from_replicates(estimate, replicates, level)
        covered += np.sum((got.best <= true_rank) & (true_rank <= got.worst))
    rate = covered / (n * trials)
    assert rate >= level - 3 * np.sqrt(level * (1 - level) / (n * trials))


def test_replicate_ranks_share_the_smallest_rank_on_ties():
    replicates = np.array([[0.0, 0.0], [0.0, 1.0], [2.0, 2.0]])
    got = ranks.from_replicates([0.0, 0.0, 2.0], replicates, level=0.5)
    np.testing.assert_array_equal(got.rank, [1, 1, 3])
    assert got.best[1] == 1 and got.worst[1] == 2 and got.best[2] == 3


def test_rank_change_is_clear_only_when_the_intervals_do_not_overlap():
    first = ranks.RankIntervals(np.array([1.0, 5.0]), np.array([1.0, 3.0]), np.array([2.0, 6.0]))
    second = ranks.RankIntervals(np.array([4.0, 5.0]), np.array([3.0, 4.0]), np.array([5.0, 6.0]))
    change, low, high, clear = ranks.rank_change(first, second)
    np.testing.assert_array_equal(change, [3, 0])
    np.testing.assert_array_equal(low, [1, -2])
    np.testing.assert_array_equal(high, [4, 3])
    np.testing.assert_array_equal(clear, [True, False])


@pytest.mark.parametrize("n", [1, 5000])
def test_point_rank_lies_inside_its_interval(n):
    rng = np.random.default_rng(n)
    v = rng.normal(size=n)
    got = ranks.from_bounds(v, v - rng.uniform(0, 0.1, n), v + rng.uniform(0, 0.1, n))
    assert np.all(got.best <= got.rank) and np.all(got.rank <= got.worst)


def test_rank_table_from_a_tidy_table_carries_the_caution():
    table = pd.DataFrame(
        {
            "region": ["Ashford", "Brackenmoor", "Cindervale"],
            "year": 2021,
            "index": "fgt_1",
            "value": [0.2, 0.25, 0.5],
            "lower": [0.1, 0.22, 0.45],
            "upper": [0.3, 0.28, 0.55],
            "method": "gq",
            "note": "",
        }
    )
    got = ranks.rank_table(table, "fgt_1", 2021)
    assert list(got.columns) == list(ranks.RANK_COLUMNS)
    assert got["region"].tolist() == ["Ashford", "Brackenmoor", "Cindervale"]
    assert got["clear"].tolist() == [False, False, True]
    assert "must not decide funding" in got.attrs["caution"]
