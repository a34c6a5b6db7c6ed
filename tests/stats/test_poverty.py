"""Tests of the poverty measures on units and on Lorenz curves, against closed forms and quadrature.

Each check value names its source beside it. Values derived rather than printed in a paper
say how, and the test recomputes them by scipy quadrature or root finding, independently of
explorer.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, optimize, special, stats

from explorer.data.model import DataError
from explorer.stats import lorenz, measures, poverty, poverty_curves, poverty_lines

pytestmark = pytest.mark.filterwarnings("ignore::scipy.integrate.IntegrationWarning")

SIGMA, MEAN, LINE = 0.7, 1000.0, 600.0


def lognormal_deciles(sigma=SIGMA):
    """Exact decile points of the lognormal Lorenz curve L(p) = Phi(Phi^-1(p) - sigma)
    (Aitchison & Brown 1957)."""
    P = np.linspace(0, 1, 11)
    L = special.ndtr(special.ndtri(P) - sigma)
    L[0], L[-1] = 0.0, 1.0
    return P[None, :], L[None, :]


def lognormal_by_quadrature(sigma, mean, line):
    """FGT(0, 1, 2) and Watts of the lognormal by direct integration of its density."""
    dist = stats.lognorm(s=sigma, scale=mean * math.exp(-sigma * sigma / 2))
    pdf = dist.pdf
    fgt = [
        integrate.quad(lambda y, a=a: (1 - y / line) ** a * pdf(y), 0, line)[0] for a in (0, 1, 2)
    ]
    watts = integrate.quad(lambda y: math.log(line / y) * pdf(y), 0, line, limit=200)[0]
    return fgt + [watts]


# Lognormal sigma = 0.7, mean 1000, line 600: values derived from the lognormal partial
# moments (Aitchison & Brown 1957, The Lognormal Distribution, ch. 2), from memory, and
# recomputed here by quadrature of the density.
LOGNORMAL_VALUES = {
    "fgt_0": 0.3520651697,
    "fgt_1": 0.1185208988,
    "fgt_2": 0.0552742245,
    "watts": 0.1662443591,
}


def test_lognormal_check_values_match_quadrature():
    got = lognormal_by_quadrature(SIGMA, MEAN, LINE)
    np.testing.assert_allclose(got, list(LOGNORMAL_VALUES.values()), rtol=0, atol=1e-9)


def test_lognormal_closed_forms_from_fitted_curve():
    P, L = lognormal_deciles()
    values, notes, used = poverty_curves.from_points(P, L, np.array([LINE / MEAN]), "lognormal")
    for key, expected in LOGNORMAL_VALUES.items():
        assert values[key][0] == pytest.approx(expected, abs=1e-9), key
        assert notes[key][0] == ""


def _row_curve(method, P, L):
    fits = lorenz.fit_points(P, L, method)
    assert fits.valid[0], fits.reason[0]

    def level(p):
        return float(fits.evaluate([p])[0, 0])

    def slope(p):
        return float(fits.slope([p])[0, 0])

    return level, slope


def _by_quadrature(level, slope, r):
    """H by root finding on L'(H) = r; FGT(1), FGT(2), Watts and Sen by scipy quad."""
    h = optimize.brentq(lambda p: slope(p) - r, 1e-9, 1 - 1e-9, xtol=1e-15)
    fgt1 = integrate.quad(lambda p: 1 - slope(p) / r, 0, h, limit=200)[0]
    fgt2 = integrate.quad(lambda p: (1 - slope(p) / r) ** 2, 0, h, limit=200)[0]
    watts = integrate.quad(lambda p: math.log(r / max(slope(p), 1e-300)), 0, h, limit=200)[0]
    sen = 2 / h * integrate.quad(lambda p: (h - p) * (1 - slope(p) / r), 0, h, limit=200)[0]
    return {"fgt_0": h, "fgt_1": fgt1, "fgt_2": fgt2, "watts": watts, "sen_poverty": sen}


# Datt (1998), Computational tools for poverty measurement and analysis, FCND DP 50,
# Table 2 (GQ and Beta headcount, poverty gap and squared gap), from memory: checked
# against numerical integration of the same fitted curve.
@pytest.mark.parametrize("method", ["gq", "beta"])
def test_datt_closed_forms_match_integration_of_fitted_curve(method):
    P, L = lognormal_deciles()
    r = LINE / MEAN
    values, notes, _ = poverty_curves.from_points(P, L, np.array([r]), method)
    level, slope = _row_curve(method, P, L)
    expected = _by_quadrature(level, slope, r)
    for key in ("fgt_0", "fgt_1", "fgt_2"):
        assert values[key][0] == pytest.approx(expected[key], abs=1e-9), key
    # the Sen index comes from the grid: its O(step^2) error is well below 1e-5
    assert values["sen_poverty"][0] == pytest.approx(expected["sen_poverty"], abs=1e-5)
    # FGT(1) = H - L(H) / r (Datt 1998, from memory): the identity with the fitted curve
    h = values["fgt_0"][0]
    assert values["fgt_1"][0] == pytest.approx(h - level(h) / r, abs=1e-12)


def test_grid_measures_match_integration_for_gq_watts():
    P, L = lognormal_deciles(0.5)
    r = 0.7
    values, _, _ = poverty_curves.from_points(P, L, np.array([r]), "gq")
    expected = _by_quadrature(*_row_curve("gq", P, L), r)
    assert values["watts"][0] == pytest.approx(expected["watts"], abs=1e-5)


@pytest.mark.parametrize("sigma", [0.3, 0.7, 1.1])
@pytest.mark.parametrize("ratio", [0.3, 0.6, 1.0])
def test_bounds_contain_the_true_lognormal_values(sigma, ratio):
    """The lognormal is one distribution with these decile shares, so its exact FGT(1),
    FGT(2) and Watts (Aitchison & Brown 1957 partial moments, recomputed by quadrature)
    must lie inside the bounds."""
    P, L = lognormal_deciles(sigma)
    lower, upper, notes = poverty_curves.bounds(P, L, np.array([ratio]))
    truth = lognormal_by_quadrature(sigma, 1.0, ratio)
    for key, value in zip(("fgt_1", "fgt_2", "watts"), truth[1:], strict=True):
        assert lower[key][0] <= value + 1e-9 <= upper[key][0] + 2e-9, key
    assert np.isinf(upper["watts"][0]) and notes["watts"][0]
    assert np.isnan(lower["fgt_0"][0]) and notes["fgt_0"][0] == poverty_curves.NO_BOUND_NOTE


def test_linear_curve_is_the_lower_bound_and_upper_curve_the_upper():
    P, L = lognormal_deciles()
    r = np.array([0.6])
    lower, upper, _ = poverty_curves.bounds(P, L, r)
    low, _, _ = poverty_curves.from_points(P, L, r, "linear")
    high, _, _ = poverty_curves.from_points(P, L, r, "upper")
    for key in ("fgt_1", "fgt_2"):
        assert low[key][0] == pytest.approx(lower[key][0], abs=1e-12)
        assert high[key][0] == pytest.approx(upper[key][0], abs=1e-12)


# ---------------------------------------------------------------------------- units


def _units(values, weights=None, groups=None):
    groups = np.zeros(len(values), int) if groups is None else groups
    frame = pd.DataFrame({"region": np.asarray(groups).astype(str), "year": 2020})
    return measures.sort_units(values, weights, frame)


def _direct(y, w, z):
    """FGT, Watts by their definitions (Foster, Greer & Thorbecke 1984, eq. 1; Watts 1968)."""
    w = w / w.sum()
    poor = y < z
    return {
        "fgt_0": np.sum(w[poor]),
        "fgt_1": np.sum(w[poor] * (1 - y[poor] / z)),
        "fgt_2": np.sum(w[poor] * (1 - y[poor] / z) ** 2),
        "watts": np.sum(w[poor] * np.log(z / y[poor])),
    }


def test_unit_measures_match_definitions_group_by_group():
    rng = np.random.default_rng(3)
    y = rng.lognormal(7, 0.8, 3000)
    w = rng.uniform(0.5, 3, 3000)
    g = rng.integers(0, 7, 3000)
    lines = rng.uniform(500, 1500, 7)
    units = _units(y, w, g)
    got = poverty.measure_units(units, lines)
    for code in range(7):
        keep = g == code
        expected = _direct(y[keep], w[keep], lines[code])
        for key, value in expected.items():
            assert got[key][0, code] == pytest.approx(value, rel=1e-12, abs=1e-15)


def test_sen_equal_poor_incomes_is_headcount_times_gap():
    # Sen (1976), Econometrica 44: 219-231: with equal incomes among the poor G_p = 0 and
    # S = H * I.
    y = np.array([300.0] * 4 + [900.0] * 6)
    got = poverty.measure_units(_units(y), np.array([600.0]))
    assert got["sen_poverty"][0, 0] == pytest.approx(0.4 * 0.5, abs=1e-15)


def test_sen_matches_sens_discrete_formula_up_to_rank_convention():
    # Sen (1976), eq. (10): S = 2 / ((q + 1) n z) sum_i (z - y_i)(q + 1 - i), the poor ranked
    # from the poorest (i = 1). The midpoint-rank form differs only by the q/(q+1) factor on
    # the Gini term: S = H [I + (1 - I) G_p] with G_p on midpoint ranks.
    rng = np.random.default_rng(5)
    y = np.sort(rng.lognormal(0, 0.6, 400))
    z = 1.1
    got = poverty.measure_units(_units(y), np.array([z]))["sen_poverty"][0, 0]
    poor = y[y < z]
    q, n = poor.size, y.size
    i = np.arange(1, q + 1)
    discrete = 2 / ((q + 1) * n * z) * np.sum((z - poor) * (q + 1 - i))
    H, income_gap = q / n, 1 - poor.mean() / z
    gini_mid = 2 * np.sum((i - 0.5) / q * poor) / (q * poor.mean()) - 1
    assert got == pytest.approx(H * (income_gap + (1 - income_gap) * gini_mid), rel=1e-12)
    assert abs(got - discrete) < 2 * H / q


def test_zero_income_makes_watts_infinite_with_a_note():
    units = _units(np.array([0.0, 100.0, 900.0]))
    table = poverty.from_units(units, np.array([600.0]))
    row = table[table["index"] == "watts"].iloc[0]
    assert np.isinf(row["value"]) and "zero" in row["note"]


def test_bootstrap_is_reproducible_and_brackets_the_estimate():
    rng = np.random.default_rng(8)
    units = _units(rng.lognormal(0, 0.7, 800), None, rng.integers(0, 3, 800))
    line = np.full(3, 0.8)
    a = poverty.bootstrap(units, line, reps=99, seed=4)
    b = poverty.bootstrap(units, line, reps=99, seed=4)
    point = poverty.measure_units(units, line)
    for key in poverty.POVERTY_INDICES:
        np.testing.assert_array_equal(a[key][0], b[key][0])
        assert np.all(a[key][0] <= point[key][0]) and np.all(point[key][0] <= a[key][1])


def test_decomposition_sums_to_the_pooled_measure():
    # Foster, Greer & Thorbecke (1984), eq. (4): FGT of the whole equals the population-share
    # weighted sum of the subgroups' FGT, at a common line.
    rng = np.random.default_rng(11)
    y = rng.lognormal(0, 0.9, 5000)
    g = rng.integers(0, 9, 5000)
    z = np.full(9, 0.7)
    parts = poverty.measure_units(_units(y, None, g), z)
    pooled = poverty.measure_units(_units(y), z[:1])
    population = np.bincount(g, minlength=9).astype(float)
    for key in ("fgt_0", "fgt_1", "fgt_2", "watts"):
        split = poverty.decompose(parts[key][0], population, np.zeros(9, int))
        assert math.fsum(split.contribution) == pytest.approx(split.total[0], abs=1e-12)
        assert split.total[0] == pytest.approx(pooled[key][0, 0], abs=1e-12)
        assert math.fsum(split.percent) == pytest.approx(100.0, abs=1e-9)


def test_decomposition_refuses_missing_population():
    with pytest.raises(DataError, match="population"):
        poverty.decompose([0.1, 0.2], [10.0, np.nan], [0, 0])


# ---------------------------------------------------------------------------- axioms

incomes = st.lists(st.floats(1.0, 1e5), min_size=1, max_size=40)


@settings(max_examples=60, deadline=None)
@given(incomes, st.floats(2.0, 5e4), st.floats(1.01, 3.0))
def test_fgt_monotone_in_the_line(values, z, factor):
    # common practice: every FGT measure and the Watts index rise (weakly) with the line
    units = _units(np.array(values))
    low = poverty.measure_units(units, np.array([z]))
    high = poverty.measure_units(units, np.array([z * factor]))
    for key in ("fgt_0", "fgt_1", "fgt_2", "watts"):
        assert high[key][0, 0] >= low[key][0, 0] - 1e-12
    assert 0.0 <= high["fgt_0"][0, 0] <= 1.0


@settings(max_examples=60, deadline=None)
@given(incomes, st.floats(2.0, 5e4), st.floats(0.0, 1e5))
def test_focus_axiom(values, z, raise_by):
    # Sen (1976): raising a non-poor income leaves a poverty measure unchanged
    y = np.array(values)
    rich = np.flatnonzero(y >= z)
    before = poverty.measure_units(_units(y), np.array([z]))
    if rich.size:
        y = y.copy()
        y[rich[0]] += raise_by
    after = poverty.measure_units(_units(y), np.array([z]))
    for key in poverty.POVERTY_INDICES:
        assert after[key][0, 0] == pytest.approx(before[key][0, 0], abs=1e-12)


@settings(max_examples=60, deadline=None)
@given(incomes, st.floats(2.0, 5e4), st.integers(2, 4))
def test_replication_invariance(values, z, copies):
    # Foster, Greer & Thorbecke (1984): the measures are unchanged by replicating the
    # population
    y = np.array(values)
    once = poverty.measure_units(_units(y), np.array([z]))
    many = poverty.measure_units(_units(np.tile(y, copies)), np.array([z]))
    for key in ("fgt_0", "fgt_1", "fgt_2", "watts"):
        assert many[key][0, 0] == pytest.approx(once[key][0, 0], rel=1e-12, abs=1e-14)


# ---------------------------------------------------------------------------- lines


@pytest.mark.parametrize(
    ("text", "amount", "fraction", "base"),
    [
        ("12000", 12000.0, None, None),
        ("12,000", 12000.0, None, None),
        ("60%median", None, 0.6, "median"),
        ("50 % Mean", None, 0.5, "mean"),
        (9000, 9000.0, None, None),
    ],
)
def test_parse_line(text, amount, fraction, base):
    line = poverty_lines.parse_line(text)
    assert (line.amount, line.fraction, line.base) == (amount, fraction, base)


@pytest.mark.parametrize("text", ["60%", "median", "-5", "60%mode", ""])
def test_parse_line_refuses_with_the_forms(text):
    with pytest.raises(DataError, match="60%median"):
        poverty_lines.parse_line(text)


def test_resolve_relative_to_district_or_province():
    line = poverty_lines.parse_line("60%median", scope="district")
    np.testing.assert_allclose(
        poverty_lines.resolve(line, district_base=np.array([100.0, 200.0])), [60.0, 120.0]
    )
    province = poverty_lines.parse_line("50%mean")
    with pytest.raises(DataError, match="province"):
        poverty_lines.resolve(province, district_base=np.array([1.0]))


@settings(max_examples=30, deadline=None)
@given(st.floats(0.2, 1.2), st.floats(0.2, 1.5), st.floats(1.01, 2.0))
def test_curve_measures_monotone_in_the_line_and_headcount_at_most_one(sigma, r, factor):
    # common practice: poverty rises with the line; FGT(2) <= FGT(1) <= FGT(0) <= 1 since
    # the normalised gap lies in [0, 1]
    P, L = lognormal_deciles(sigma)
    for method in ("gq", "lognormal", "linear", "upper"):
        low, _, _ = poverty_curves.from_points(P, L, np.array([r]), method)
        high, _, _ = poverty_curves.from_points(P, L, np.array([r * factor]), method)
        if not np.isfinite(low["fgt_0"][0]):
            continue  # the fit is not a valid curve here; its note says why
        for key in ("fgt_0", "fgt_1", "fgt_2"):
            assert high[key][0] >= low[key][0] - 1e-9, (method, key)
        assert low["fgt_2"][0] <= low["fgt_1"][0] + 1e-12 <= low["fgt_0"][0] + 2e-12 <= 1 + 3e-12
