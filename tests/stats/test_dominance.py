"""Tests of dominance verdicts on curves built to cross or not.

Lognormal Lorenz curves with a smaller sigma lie above those with a larger one everywhere
(Aitchison & Brown 1957; the Lorenz order of the lognormal is the order of sigma), so they
must never be called crossing; curves built as a convex curve plus a bump that is positive
below p = 0.55 and negative above must be called crossing near the 5th or 6th decile.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from explorer.stats import dominance, measures

P = np.linspace(0, 1, 11)


def lognormal(sigma):
    L = special.ndtr(special.ndtri(P) - sigma)
    L[0], L[-1] = 0.0, 1.0
    return P, L


def crossing_pair():
    """A: lognormal sigma 0.6. B: A plus c p (1 - p) (0.55 - p), kept convex (checked)."""
    _, la = lognormal(0.6)
    lb = la + 0.12 * P * (1 - P) * (0.55 - P)
    assert np.all(np.diff(lb, 2) > 0) and np.all(np.diff(lb) > 0)
    return (P, la), (P, lb)


@pytest.mark.parametrize(("sa", "sb"), [(0.3, 0.7), (0.5, 0.6), (0.9, 0.4)])
def test_ordered_lognormals_are_never_called_crossing(sa, sb):
    got = dominance.compare(lognormal(sa), lognormal(sb), ("Ashford", "Brackenmoor"))
    assert got.kind == ("above" if sa < sb else "below")
    assert got.crossings == ()
    top = "Ashford" if sa < sb else "Brackenmoor"
    assert got.sentence.startswith(f"{top}'s Lorenz curve lies above")


def test_far_apart_curves_are_robust_and_close_ones_are_not():
    far = dominance.compare(lognormal(0.3), lognormal(0.7))
    near = dominance.compare(lognormal(0.69), lognormal(0.7))
    assert far.robust and "even at the bounds" in far.sentence
    assert not near.robust and "not at the bounds" in near.sentence


def test_curves_built_to_cross_are_called_crossing_near_the_right_decile():
    a, b = crossing_pair()
    got = dominance.compare(a, b)
    assert got.kind == "cross"
    assert len(got.crossings) == 1 and 0.5 <= got.crossings[0] <= 0.6
    assert "cross near the" in got.sentence and ("5th" in got.sentence or "6th" in got.sentence)


def test_identical_shares_cannot_be_told_apart():
    got = dominance.compare(lognormal(0.5), lognormal(0.5))
    assert got.kind == "undecided" and got.sentence == "the published shares cannot tell them apart"


def test_generalised_lorenz_uses_the_means():
    # Shorrocks (1983): a higher mean can make the more unequal distribution's generalised
    # curve lie above: sigma 0.7 with twice the mean dominates sigma 0.5 (the ratio of the
    # GL curves 2 Phi(z - 0.7) / Phi(z - 0.5) exceeds 1 at every decile, checked here)
    _, l7 = lognormal(0.7)
    _, l5 = lognormal(0.5)
    assert np.all(2 * l7[1:] > l5[1:])
    got = dominance.compare(lognormal(0.7), lognormal(0.5), means=(2000.0, 1000.0))
    assert got.kind == "above" and "generalised Lorenz curve" in got.sentence


def test_different_published_points_are_compared_on_their_union():
    pa, la = lognormal(0.4)
    quint = np.linspace(0, 1, 6)
    lb = special.ndtr(special.ndtri(quint) - 0.8)
    lb[0], lb[-1] = 0.0, 1.0
    got = dominance.compare((pa, la), (quint, lb))
    assert got.kind == "above"


def test_unit_decile_differences_match_direct_ordinates_and_flag_real_gaps():
    # Lorenz ordinate at p = k/n of n equal-weight sorted incomes: the share of the k
    # poorest (common practice); sigma 0.4 vs 0.8 lognormal samples differ at every decile
    rng = np.random.default_rng(0)
    y = np.concatenate([rng.lognormal(0, 0.4, 2000), rng.lognormal(0, 0.8, 2000)])
    units = measures.sort_units(y, None, np.repeat([0, 1], 2000))
    got = dominance.decile_differences(units, 0, 1, reps=99)
    direct = []
    for half in (y[:2000], y[2000:]):
        s = np.sort(half)
        direct.append(np.cumsum(s)[np.arange(200, 2000, 200) - 1] / s.sum())
    np.testing.assert_allclose(got["difference"], direct[0] - direct[1], atol=1e-12)
    assert got["exceeds"].all()
    same = measures.sort_units(rng.lognormal(0, 0.6, 1000), None, np.repeat([0, 1], 500))
    assert not dominance.decile_differences(same, 0, 1, reps=99)["exceeds"].all()
