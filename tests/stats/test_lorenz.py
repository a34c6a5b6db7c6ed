"""Tests of explorer.stats.lorenz against published values, closed forms and reference libraries.

Exact bracket shares of a distribution (its Lorenz curve at the bracket points) give
deterministic checks. Each check value names its source beside it; values derived from a
method rather than printed in a paper say how they were derived, and the test recomputes
them independently of explorer (numpy.linalg.lstsq, scipy.integrate.quad, scipy.special).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, interpolate, special, stats

from explorer.stats import lorenz
from explorer.stats.lorenz.parametric import _lstsq_rows

# quad warns of roundoff at the kinks of piecewise curves; every tolerance asserted below is
# far looser than the error it then achieves
pytestmark = pytest.mark.filterwarnings("ignore::scipy.integrate.IntegrationWarning")

SIGMA = 0.7
INTEGRAL_KEYS = [
    "theil_t",
    "mld",
    "ge_2",
    "ge_0.5",
    "ge_-1",
    "atkinson_0.5",
    "atkinson_1",
    "atkinson_2",
    "cv",
]
ALL_KEYS = ["gini", *INTEGRAL_KEYS, "palma", "s80_s20", "top10_share", "bottom40_share"]


def lognormal_points(k: int, sigma: float = SIGMA):
    """Exact Lorenz points of the lognormal at k equal brackets: L(p) = Phi(Phi^-1(p) - sigma)
    (Aitchison & Brown 1957, from memory; checked by quadrature in test_measures.py)."""
    P = np.linspace(0.0, 1.0, k + 1)
    return P[None, :], special.ndtr(special.ndtri(P) - sigma)[None, :]


def pareto_points(k: int, alpha: float):
    """Exact Lorenz points of Pareto I: L(p) = 1 - (1 - p)^(1 - 1/alpha) (Kleiber & Kotz 2003,
    Statistical Size Distributions in Economics and Actuarial Sciences, Wiley; from memory,
    checked by quadrature in tests/stats/test_measures.py)."""
    P = np.linspace(0.0, 1.0, k + 1)
    return P[None, :], (1 - (1 - P) ** (1 - 1 / alpha))[None, :]


def lognormal_closed_form(key: str, sigma: float) -> float:
    """Closed forms for the lognormal, from memory of Aitchison & Brown (1957), The Lognormal
    Distribution, CUP, and Cowell (2011), Measuring Inequality, 3rd ed., OUP; checked by
    quadrature in test_lognormal_method_recovers_sigma_and_every_closed_form."""
    s2 = sigma**2
    if key == "gini":
        return 2 * special.ndtr(sigma / np.sqrt(2)) - 1
    if key in ("theil_t", "mld"):
        return s2 / 2
    if key == "cv":
        return np.sqrt(np.exp(s2) - 1)  # CV^2 = 2 GE(2) (common practice)
    family, value = key.split("_")
    value = float(value)
    if family == "ge":
        return (np.exp(value * (value - 1) * s2 / 2) - 1) / (value * (value - 1))
    return 1 - np.exp(-value * s2 / 2)  # atkinson


# ---------------------------------------------------------------- published check values


def test_linear_and_upper_gini_are_gastwirths_bounds_at_lognormal_quintiles():
    """Gastwirth (1972), "The estimation of the Lorenz curve and Gini index", Review of
    Economics and Statistics 54: 306-316: the trapezoid (lower) and convex-envelope (upper)
    Gini bounds at quintiles of lognormal sigma = 0.7. The values are derived, not printed
    there: lower by the trapezoid rule on the exact points, upper by quadrature of the
    envelope; both are recomputed below without explorer."""
    P, L = lognormal_points(5)
    lower = lorenz.fit_points(P, L, "linear").indices(["gini"])["gini"].value[0]
    upper = lorenz.fit_points(P, L, "upper").indices(["gini"])["gini"].value[0]
    assert lower == pytest.approx(0.3537347204, abs=1e-10)
    # the quad below gives 0.42335492310; the 10-digit value is rounded, so allow 2e-10
    assert upper == pytest.approx(0.4233549230, abs=2e-10)
    # the true lognormal Gini 2 Phi(sigma / sqrt 2) - 1 (Aitchison & Brown 1957) lies between
    assert lower < 0.3793820536 < upper
    assert 2 * special.ndtr(SIGMA / np.sqrt(2)) - 1 == pytest.approx(0.3793820536, abs=1e-10)
    trapezoid = 1 - np.sum(np.diff(P[0]) * (L[0, 1:] + L[0, :-1]))
    assert trapezoid == pytest.approx(0.3537347204, abs=1e-10)

    # cross-check: in bracket i the curve is the larger of the neighbouring chords
    # extended (floor 0), integrated by scipy.integrate.quad
    s = np.diff(L[0]) / np.diff(P[0])

    def envelope(p):
        i = min(int(p * 5), 4)
        lines = [0.0]
        if i > 0:
            lines.append(L[0, i] + s[i - 1] * (p - P[0, i]))
        if i < 4:
            lines.append(L[0, i + 1] + s[i + 1] * (p - P[0, i + 1]))
        return max(lines)

    area = integrate.quad(
        envelope, 0, 1, points=P[0, 1:-1], limit=1000, epsabs=1e-15, epsrel=1e-14
    )[0]
    assert upper == pytest.approx(1 - 2 * area, abs=1e-12)


def test_gq_gini_at_lognormal_deciles_matches_reference_value():
    """Villaseñor & Arnold (1989), "Elliptical Lorenz curves", Journal of Econometrics 40:
    327-338: the general quadratic fitted by least squares (no intercept) to deciles of
    lognormal 0.7 has Gini 0.3788570611. Derived, not printed there: recomputed below by
    numpy.linalg.lstsq and scipy.integrate.quad of the fitted curve, without explorer."""
    P, L = lognormal_points(10)
    fit = lorenz.fit_points(P, L, "gq")
    assert fit.valid[0]
    assert fit.indices(["gini"])["gini"].value[0] == pytest.approx(0.3788570611, abs=1e-10)
    p, l_ = P[0, 1:-1], L[0, 1:-1]
    X = np.column_stack([p * p - l_, l_ * (p - 1), p - l_])
    a, b, c = np.linalg.lstsq(X, l_ * (1 - l_), rcond=None)[0]
    e = -(a + b + c + 1)
    m, n = b * b - 4 * a, 2 * b * e - 4 * c

    def curve(q):
        return -(b * q + e + np.sqrt(m * q * q + n * q + e * e)) / 2

    area = integrate.quad(curve, 0, 1, epsabs=1e-14, epsrel=1e-13)[0]
    assert 1 - 2 * area == pytest.approx(0.3788570611, abs=1e-10)


def test_beta_gini_at_lognormal_deciles_matches_reference_value():
    """Kakwani (1980), "On a class of poverty measures", Econometrica 48: 437-446: the Beta
    curve L = p - theta p^gamma (1 - p)^delta fitted to deciles of lognormal 0.7 has Gini
    0.3802814461. Derived, not printed there: recomputed below by numpy.linalg.lstsq of
    the log-linear regression and Gini = 2 theta B(1 + gamma, 1 + delta) (Kakwani 1980,
    from memory), which scipy.integrate.quad of the curve confirms."""
    P, L = lognormal_points(10)
    fit = lorenz.fit_points(P, L, "beta")
    assert fit.valid[0]
    assert fit.indices(["gini"])["gini"].value[0] == pytest.approx(0.3802814461, abs=1e-10)
    p, l_ = P[0, 1:-1], L[0, 1:-1]
    X = np.column_stack([np.ones_like(p), np.log(p), np.log(1 - p)])
    log_theta, gamma, delta = np.linalg.lstsq(X, np.log(p - l_), rcond=None)[0]
    theta = np.exp(log_theta)
    gini = 2 * theta * special.beta(1 + gamma, 1 + delta)
    assert gini == pytest.approx(0.3802814461, abs=1e-10)
    area = integrate.quad(lambda q: q - theta * q**gamma * (1 - q) ** delta, 0, 1)[0]
    assert 1 - 2 * area == pytest.approx(gini, abs=1e-10)


@pytest.mark.parametrize("k", [5, 10, 20])
def test_lognormal_method_recovers_sigma_and_every_closed_form(k):
    """Exact lognormal points give sigma = 0.7 and the lognormal closed forms (Aitchison &
    Brown 1957, from memory) to 1e-9; the 10-digit values are checked here by
    scipy.stats.lognorm.expect and quadrature of the Lorenz curve, without explorer."""
    fit = lorenz.fit_points(*lognormal_points(k), "lognormal")
    assert fit.params[0, 0] == pytest.approx(SIGMA, abs=1e-9)
    values = fit.indices(ALL_KEYS)
    published = {
        "gini": 0.3793820536,
        "theil_t": 0.245,
        "mld": 0.245,
        "atkinson_2": 0.3873736058,
        "ge_2": 0.3161581100,
    }
    dist = stats.lognorm(s=SIGMA)
    by_quadrature = {
        "gini": 1 - 2 * integrate.quad(lambda q: special.ndtr(special.ndtri(q) - SIGMA), 0, 1)[0],
        "theil_t": dist.expect(lambda x: x / dist.mean() * np.log(x / dist.mean())),
        "mld": -dist.expect(lambda x: np.log(x / dist.mean())),
        "atkinson_2": 1 - 1 / (dist.expect(lambda x: 1 / x) * dist.mean()),
        "ge_2": (dist.expect(lambda x: x * x) / dist.mean() ** 2 - 1) / 2,
    }
    for key, expected in published.items():
        assert values[key].value[0] == pytest.approx(expected, abs=1e-9), key
        assert by_quadrature[key] == pytest.approx(expected, abs=1e-8), key
    for key in INTEGRAL_KEYS:
        expected = lognormal_closed_form(key, SIGMA)
        assert values[key].value[0] == pytest.approx(expected, abs=1e-9), key
    share = special.ndtr(special.ndtri(np.array([0.2, 0.4, 0.8, 0.9])) - SIGMA)
    assert values["bottom40_share"].value[0] == pytest.approx(share[1], abs=1e-9)
    assert values["top10_share"].value[0] == pytest.approx(1 - share[3], abs=1e-9)
    assert values["palma"].value[0] == pytest.approx((1 - share[3]) / share[1], abs=1e-9)
    assert values["s80_s20"].value[0] == pytest.approx((1 - share[2]) / share[0], abs=1e-9)


@pytest.mark.parametrize("sigma", [0.2, 0.7, 1.3])
def test_probit_grid_quadrature_reaches_lognormal_closed_forms(sigma):
    """The fixed quadrature grid against the lognormal closed forms, error below 1e-9.

    Relative income of the lognormal at rank p = Phi(z) is exp(sigma z - sigma^2 / 2)
    (Aitchison & Brown 1957).
    """
    grid = lorenz.PROBIT_GRID
    y = np.exp(sigma * grid.z - sigma**2 / 2)[None, :]
    got = lorenz.indices_from_slope(y, grid.weights, INTEGRAL_KEYS)
    for key in INTEGRAL_KEYS:
        assert got[key][0] == pytest.approx(lognormal_closed_form(key, sigma), abs=1e-9), key


@pytest.mark.parametrize("alpha", [3.0, 4.0])
def test_gq_is_exact_on_its_own_family_and_pareto_alpha2(alpha):
    """Pareto I with alpha = 2 is a GQ curve (a = b = 0, c = 1, so m = 0): the quadrature
    fallback must give 1/(2 alpha - 1) = 1/3 (Kleiber & Kotz 2003, from memory; here 1/3 is
    also 1 - 2 * integral of 1 - sqrt(1 - p), which is 1 - 2/3). Other alphas are close."""
    fit = lorenz.fit_points(*pareto_points(10, 2.0), "gq")
    assert fit.valid[0]
    assert fit.indices(["gini"])["gini"].value[0] == pytest.approx(1 / 3, abs=1e-12)
    near = lorenz.fit_points(*pareto_points(10, alpha), "gq").indices(["gini"])["gini"]
    assert near.value[0] == pytest.approx(1 / (2 * alpha - 1), abs=5e-3)


# ---------------------------------------------------------------- reference libraries


def random_convex_points(rng, n, k):
    """Rows of Lorenz points from random positive, increasing bracket means."""
    pop = rng.dirichlet(np.ones(k), size=n)
    means = np.sort(rng.lognormal(0.0, 0.8, size=(n, k)), axis=1)
    income = pop * means
    income /= income.sum(axis=1, keepdims=True)
    zeros = np.zeros((n, 1))
    P = np.hstack([zeros, np.cumsum(pop, axis=1)])
    L = np.hstack([zeros, np.cumsum(income, axis=1)])
    P[:, -1] = L[:, -1] = 1.0
    return P, L


def test_pchip_matches_scipy_pchip_interpolator_row_by_row():
    """scipy.interpolate.PchipInterpolator is the reference Fritsch–Carlson implementation."""
    rng = np.random.default_rng(3)
    P, L = random_convex_points(rng, 40, 7)
    # plus power curves p^a at the same points, some of which pchip keeps convex
    P, L = np.vstack([P, P]), np.vstack([L, P ** rng.uniform(1.5, 3.0, (40, 1))])
    fit = lorenz.fit_points(P, L, "pchip")
    assert 0 < fit.valid.sum() < len(P)  # both outcomes are exercised
    p = np.sort(np.concatenate([rng.uniform(0, 1, 50), [0.0, 1.0], P[0]]))
    values, slopes = fit.evaluate(p), fit.slope(p)
    for row in range(P.shape[0]):
        ref = interpolate.PchipInterpolator(P[row], L[row])
        np.testing.assert_allclose(fit.params[row], ref.derivative()(P[row]), atol=1e-12)
        np.testing.assert_allclose(values[row], ref(p), atol=1e-12)
        inside = (p > 0) & (p < 1) & ~np.isin(p, P[row])  # slope is one-sided at knots
        np.testing.assert_allclose(slopes[row, inside], ref.derivative()(p[inside]), atol=1e-10)
        # validity = convexity of scipy's curve: its L'' is linear on each piece, so a fine
        # grid plus points just inside every piece's ends decides it
        h = np.diff(P[row])
        probe = np.concatenate(
            [np.linspace(0, 1, 4001), P[row, :-1] + 1e-9 * h, P[row, 1:] - 1e-9 * h]
        )
        curvature = ref.derivative(2)(probe).min()
        assert fit.valid[row] == (curvature >= -1e-6), (row, curvature, fit.reason[row])


@pytest.mark.parametrize("method", ["gq", "beta"])
def test_gq_and_beta_parameters_equal_numpy_lstsq_row_by_row(method):
    """The batched least squares against numpy.linalg.lstsq on each row's own design."""
    rng = np.random.default_rng(5)
    P, L = random_convex_points(rng, 30, 10)
    fit = lorenz.fit_points(P, L, method)
    for row in range(P.shape[0]):
        p, l_ = P[row, 1:-1], L[row, 1:-1]
        if method == "gq":  # Villaseñor & Arnold (1989) regression, no intercept
            X = np.column_stack([p * p - l_, l_ * (p - 1), p - l_])
            ref = np.linalg.lstsq(X, l_ * (1 - l_), rcond=None)[0]
        else:  # Kakwani (1980): ln(p - L) = ln theta + gamma ln p + delta ln(1 - p)
            X = np.column_stack([np.ones_like(p), np.log(p), np.log(1 - p)])
            coef = np.linalg.lstsq(X, np.log(p - l_), rcond=None)[0]
            ref = np.array([np.exp(coef[0]), coef[1], coef[2]])
        np.testing.assert_allclose(fit.params[row], ref, rtol=1e-9, atol=1e-11)


def gq_points(a, b, c, k=10):
    """Points on the GQ curve with parameters (a, b, c): the explicit root of Villaseñor &
    Arnold (1989), from memory; test_gq_closed_form_gini_equals_quad_area_for_both_signs_of_m
    checks the fit recovers (a, b, c) from them."""
    e = -(a + b + c + 1)
    m, n = b * b - 4 * a, 2 * b * e - 4 * c
    P = np.linspace(0, 1, k + 1)
    L = -(b * P + e + np.sqrt(m * P * P + n * P + e * e)) / 2
    L[0], L[-1] = 0.0, 1.0
    return P[None, :], L[None, :], m


@pytest.mark.parametrize(
    "abc",
    [
        (1.0023193, -0.93790055, 0.23988732),  # m < 0 (fit to lognormal deciles)
        (0.3460733073, 1.3587384144, 0.9058944412),  # m > 0, n < 0, vertex beyond 1
        (-0.8783649681, -0.0592361023, 1.9229487992),  # m > 0
    ],
)
def test_gq_closed_form_gini_equals_quad_area_for_both_signs_of_m(abc):
    """Datt (1998) Gini formulas (from memory), cross-checked with scipy.integrate.quad."""
    P, L, m = gq_points(*abc)
    fit = lorenz.fit_points(P, L, "gq")
    assert fit.valid[0], fit.reason[0]
    np.testing.assert_allclose(fit.params[0], abc, atol=1e-8)  # exact points: exact fit
    area = integrate.quad(lambda p: fit.evaluate([p])[0, 0], 0, 1, epsabs=1e-13)[0]
    assert fit.indices(["gini"])["gini"].value[0] == pytest.approx(1 - 2 * area, abs=1e-9)


# A power curve p^2.2 keeps pchip convex; the quadratic needs a curve flatter than p^2;
# the Beta fit is valid on lognormal deciles.
CURVE_FOR = {
    "pchip": lambda P: P**2.2,
    "linear": lambda P: P**2.2,
    "upper": lambda P: P**2.2,
    "quadratic": lambda P: 0.3 * P + 0.5 * P**2 + 0.2 * P**3,
    "beta": lambda P: special.ndtr(special.ndtri(P) - SIGMA),
    "gq": lambda P: special.ndtr(special.ndtri(P) - SIGMA),
}


@pytest.mark.parametrize("method", ["pchip", "beta", "quadratic", "linear", "upper"])
def test_gini_equals_one_minus_twice_quad_area(method):
    """Gini = 1 - 2 * area under L (common practice), area by scipy.integrate.quad."""
    P = np.linspace(0, 1, 11)[None, :]
    fit = lorenz.fit_points(P, CURVE_FOR[method](P), method)
    assert fit.valid[0], fit.reason[0]
    area = integrate.quad(
        lambda p: fit.evaluate([p])[0, 0], 0, 1, points=P[0, 1:-1], limit=1000, epsabs=1e-14
    )[0]
    # quad meets the envelope's unlisted kinks; the exact check is in the quintile test
    tol = 1e-8 if method == "upper" else 1e-9
    assert fit.indices(["gini"])["gini"].value[0] == pytest.approx(1 - 2 * area, abs=tol)


@pytest.mark.parametrize("method", ["pchip", "gq", "beta", "quadratic"])
def test_integral_indices_equal_scipy_quad_of_the_slope(method):
    """Theil T, MLD, GE(2), Atkinson(0.5) from L'(p) by quadrature against scipy quad."""
    P = np.linspace(0, 1, 11)[None, :]
    fit = lorenz.fit_points(P, CURVE_FOR[method](P), method)
    assert fit.valid[0], fit.reason[0]
    keys = ["theil_t", "ge_2", "atkinson_0.5"] + (["mld"] if method != "beta" else [])
    got = fit.indices(keys)

    def y(p):
        return max(fit.slope([p])[0, 0], 1e-300)

    def quad(f):
        return integrate.quad(f, 0, 1, points=P[0, 1:-1], limit=400)[0]

    expected = {
        "theil_t": quad(lambda p: y(p) * np.log(y(p))),
        "mld": -quad(lambda p: np.log(y(p))) if "mld" in keys else None,
        "ge_2": (quad(lambda p: y(p) ** 2) - 1) / 2,
        "atkinson_0.5": 1 - quad(lambda p: y(p) ** 0.5) ** 2,
    }
    for key in keys:
        assert got[key].value[0] == pytest.approx(expected[key], abs=2e-6), key


# ---------------------------------------------------------------- bounds and validity


def mixture_curve(weights, sigmas, alphas):
    """A mixture of lognormal and Pareto Lorenz curves (a convex combination of Lorenz
    curves is one: common practice); returns L(p) and the relative income L'(p)."""

    def curve(p):
        p = np.asarray(p, float)
        out = sum(
            w * special.ndtr(special.ndtri(p) - s)
            for w, s in zip(weights[: len(sigmas)], sigmas, strict=True)
        )
        return out + sum(
            w * (1 - (1 - p) ** (1 - 1 / a))
            for w, a in zip(weights[len(sigmas) :], alphas, strict=True)
        )

    def slope(p):
        z = special.ndtri(p)
        out = sum(
            w * np.exp(s * z - s * s / 2)
            for w, s in zip(weights[: len(sigmas)], sigmas, strict=True)
        )
        return out + sum(
            w * (1 - 1 / a) * max(1 - p, 1e-300) ** (-1 / a)
            for w, a in zip(weights[len(sigmas) :], alphas, strict=True)
        )

    return curve, slope


@settings(max_examples=30, deadline=None)
@given(
    raw=st.lists(st.floats(0.05, 1.0), min_size=3, max_size=3),
    sigmas=st.lists(st.floats(0.1, 1.5), min_size=2, max_size=2),
    alpha=st.floats(2.5, 6.0),
    cuts=st.lists(st.floats(0.02, 0.98), min_size=2, max_size=9, unique=True),
)
def test_linear_and_upper_bound_every_index_of_a_random_lorenz_curve(raw, sigmas, alpha, cuts):
    """linear <= true <= upper for Lorenz-consistent indices (Gastwirth 1972); the truth of
    a mixture of lognormal and Pareto curves comes from scipy.integrate.quad of L'(p)."""
    weights = np.array(raw) / np.sum(raw)
    curve, slope = mixture_curve(weights, sigmas, [alpha])
    P = np.concatenate([[0.0], np.sort(cuts), [1.0]])
    if np.diff(P).min() < 1e-3:
        return
    L = curve(P)
    L[0], L[-1] = 0.0, 1.0
    keys = ["gini", "theil_t", "mld", "atkinson_0.5", "ge_2", "top10_share", "palma"]
    low = lorenz.fit_points(P[None], L[None], "linear").indices(keys)
    high = lorenz.fit_points(P[None], L[None], "upper").indices(keys)

    def quad(f):
        return integrate.quad(f, 0, 1, limit=400)[0]

    truth = {
        "gini": 1 - 2 * quad(curve),
        "theil_t": quad(lambda p: slope(p) * np.log(slope(p))),
        "mld": -quad(lambda p: np.log(slope(p))),
        "atkinson_0.5": 1 - quad(lambda p: np.sqrt(slope(p))) ** 2,
        "ge_2": (quad(lambda p: slope(p) ** 2) - 1) / 2,
        "top10_share": 1 - curve(0.9),
        "palma": (1 - curve(0.9)) / curve(0.4),
    }
    for key, value in truth.items():
        assert low[key].value[0] <= value + 1e-7, key
        assert value <= high[key].value[0] + 1e-7, key


def test_upper_curve_reports_unbounded_indices_with_reasons():
    """The upper curve's jump at p = 1 and floor at 0 (Gastwirth 1972) leave Theil T, GE(2)
    and CV (jump) and MLD (zero incomes) without a finite bound; the rest stay finite."""
    fit = lorenz.fit_points(*lognormal_points(10), "upper")
    got = fit.indices(ALL_KEYS)
    for key in ("theil_t", "ge_2", "cv"):
        assert np.isinf(got[key].value[0]) and "jump at p = 1" in got[key].note[0]
    for key in ("mld", "ge_-1"):
        assert np.isinf(got[key].value[0]) and "zero income" in got[key].note[0]
    for key in ("gini", "ge_0.5", "atkinson_0.5", "palma", "s80_s20", "top10_share"):
        assert np.isfinite(got[key].value[0]) and got[key].note[0] == ""
    # the curve includes the jump: L(1) = 1 but L(1 - tiny) < 1
    near_one = fit.evaluate([1 - 1e-12, 1.0])[0]
    assert near_one[1] == 1.0 and near_one[0] < 0.99


def test_upper_curve_passes_the_points_and_lies_below_a_convex_curve_through_them():
    """Gastwirth's envelope passes through the points, is convex inside each bracket, and
    lies below the true lognormal curve (any convex curve through the points lies above the
    extended neighbouring chords: common practice)."""
    P, L = lognormal_points(10)
    fit = lorenz.fit_points(P, L, "upper")
    np.testing.assert_allclose(fit.evaluate(P[0])[0], L[0], atol=1e-14)
    for j in range(10):
        p = np.linspace(P[0, j], P[0, j + 1], 401)[:-1]
        assert np.all(np.diff(fit.evaluate(p)[0], 2) >= -1e-12)
    p = np.linspace(0, 1 - 1e-9, 2001)
    assert np.all(fit.evaluate(p)[0] <= special.ndtr(special.ndtri(p) - SIGMA) + 1e-12)


def test_gq_fit_to_pareto_is_flagged_invalid_with_a_reason():
    """GQ on Pareto alpha = 1.5 deciles breaks a + c >= 1 (Datt 1998 conditions, from
    memory; cross-checked: L(1) computed from the fit is below 1)."""
    fit = lorenz.fit_points(*pareto_points(10, 1.5), "gq")
    assert not fit.valid[0]
    assert "a + c < 1" in fit.reason[0]
    assert fit.evaluate([1 - 1e-12])[0, 0] < 0.99  # the curve really misses (1, 1)
    gini = fit.indices(["gini"])["gini"]
    assert np.isnan(gini.value[0]) and "a + c < 1" in gini.note[0]


def test_non_convex_pchip_and_out_of_range_quadratic_are_flagged():
    """Monotone cubics need not be convex (Fritsch & Carlson 1980, SIAM J. Numer. Anal. 17:
    238-246, preserve monotonicity only); the quadratic needs 0 <= a <= 1 (common practice)."""
    P, L = lognormal_points(10)
    pchip = lorenz.fit_points(P, L, "pchip")
    assert not pchip.valid[0] and "not convex" in pchip.reason[0]
    # the claim is real: the second derivative of scipy's interpolant goes negative
    ref = interpolate.PchipInterpolator(P[0], L[0]).derivative(2)
    assert ref(np.linspace(0.001, 0.999, 4001)).min() < 0
    quadratic = lorenz.fit_points(P, L, "quadratic")
    assert quadratic.params[0, 0] > 1 and not quadratic.valid[0]


def test_bad_points_are_invalid_for_every_method_and_never_used():
    """Points that are not a Lorenz sequence (common practice: convex, from (0,0) to (1,1))."""
    P = np.array([[0, 0.5, 1.0], [0, 0.5, 1.0], [0, 0.5, 1.0]])
    L = np.array([[0, 0.6, 1.0], [0, 0.2, 0.9], [0, 0.3, 1.0]])
    for method in lorenz.METHODS:
        fit = lorenz.fit_points(P, L, method)
        assert not fit.valid[0] and "not convex" in fit.reason[0]
        assert not fit.valid[1] and "(1, 1)" in fit.reason[1]
        gini = fit.indices(["gini"])["gini"].value
        assert np.isnan(gini[:2]).all()
        assert np.isnan(fit.evaluate([0.5])[:2]).all()


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10_000), k=st.integers(4, 12))
def test_every_curve_flagged_valid_is_a_lorenz_curve_on_a_fine_grid(seed, k):
    """valid => L(0) = 0, L(1) = 1, non-decreasing and convex (common practice),
    checked numerically on a fine grid: this cross-checks the GQ conditions (from memory of
    Datt 1998) and the Beta and pchip checks."""
    P, L = random_convex_points(np.random.default_rng(seed), 8, k)
    p = np.concatenate([np.linspace(1e-3, 1 - 1e-3, 3001)])
    # not "upper": the envelope is convex inside brackets only (see test above)
    for method in ("pchip", "gq", "beta", "quadratic", "lognormal", "linear"):
        fit = lorenz.fit_points(P, L, method)
        values = fit.evaluate(np.concatenate([[0.0], p, [1.0]]))
        for row in np.flatnonzero(fit.valid):
            curve = values[row]
            assert abs(curve[0]) < 1e-9 and abs(curve[-1] - 1) < 1e-9, method
            inner = curve[1:-1]
            assert np.all(np.diff(inner) >= -1e-9), method
            assert np.all(np.diff(inner, 2) >= -1e-9), method


# ---------------------------------------------------------------- axioms on curves


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 10_000), t=st.floats(0.05, 0.95))
def test_moving_towards_equality_never_raises_an_index(seed, t):
    """Lorenz dominance (the transfer principle on curves, Atkinson 1970): mixing the points
    with the equality line gives a curve above the original, so no index may rise."""
    P, L = random_convex_points(np.random.default_rng(seed), 6, 8)
    closer = (1 - t) * L + t * P
    for method in ("linear", "upper", "lognormal"):
        before = lorenz.fit_points(P, L, method).indices(ALL_KEYS)
        after = lorenz.fit_points(P, closer, method).indices(ALL_KEYS)
        for key in ALL_KEYS:
            b, a = before[key].value, after[key].value
            if key == "bottom40_share":
                b, a = -b, -a
            ok = np.isinf(b) | (a <= b + 1e-10)
            assert ok.all(), (method, key)


@pytest.mark.parametrize("method", [m for m in lorenz.METHODS if m != "upper"])
def test_equal_shares_give_zero_inequality_for_every_method(method):
    """Everyone at the mean: every index 0, Palma 1/4, S80/S20 1 (common practice)."""
    P = np.linspace(0, 1, 11)[None, :]
    got = lorenz.fit_points(P, P.copy(), method).indices(ALL_KEYS)
    for key in ALL_KEYS:
        expected = {"palma": 0.25, "s80_s20": 1.0, "top10_share": 0.1, "bottom40_share": 0.4}
        if method in ("gq", "beta") and np.isnan(got[key].value[0]):
            continue  # p - L = 0 is outside both families' regressions: flagged, not used
        assert got[key].value[0] == pytest.approx(expected.get(key, 0.0), abs=1e-9), (method, key)


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 10_000), split=st.floats(0.1, 0.9))
def test_splitting_a_bracket_at_its_mean_leaves_linear_indices_unchanged(seed, split):
    """Population replication: cutting a bracket in two with the same mean changes nothing
    for the linear curve (everyone in a bracket at the bracket mean; common practice)."""
    P, L = random_convex_points(np.random.default_rng(seed), 1, 6)
    j = 3
    p_mid = P[0, j] + split * (P[0, j + 1] - P[0, j])
    l_mid = L[0, j] + split * (L[0, j + 1] - L[0, j])
    P2 = np.insert(P[0], j + 1, p_mid)[None]
    L2 = np.insert(L[0], j + 1, l_mid)[None]
    a = lorenz.fit_points(P, L, "linear").indices(ALL_KEYS)
    b = lorenz.fit_points(P2, L2, "linear").indices(ALL_KEYS)
    for key in ALL_KEYS:
        assert b[key].value[0] == pytest.approx(a[key].value[0], rel=1e-10, abs=1e-12), key


# ---------------------------------------------------------------- auto and batching


def test_auto_picks_the_smallest_valid_error_and_names_it():
    """auto = the valid parametric fit with the least squared error (own rule)."""
    P, L = lognormal_points(10)
    P2, L2 = pareto_points(10, 3.0)
    P, L = np.vstack([P, P2]), np.vstack([L, L2])
    auto = lorenz.fit_points(P, L, "auto")
    sse = {m: lorenz.fit_points(P, L, m) for m in lorenz.AUTO_ORDER}
    for row in range(2):
        candidates = {m: f.sse[row] for m, f in sse.items() if f.valid[row]}
        assert auto.used[row] == min(candidates, key=candidates.get)
    assert list(auto.used) == ["lognormal", "gq"]
    gini = auto.indices(["gini"])["gini"].value
    assert gini[0] == pytest.approx(0.3793820536, abs=1e-9)  # lognormal closed form


def test_auto_ties_go_to_the_earlier_method():
    """L = p^2 is exactly Beta (theta = gamma = delta = 1) and exactly quadratic (a = 1):
    a tie, which the earlier of AUTO_ORDER (beta) wins (documented rule)."""
    P = np.linspace(0, 1, 11)[None, :]
    auto = lorenz.fit_points(P, P**2, "auto")
    assert auto.used[0] == "beta"
    assert auto.indices(["gini"])["gini"].value[0] == pytest.approx(1 / 3, abs=1e-12)


def test_auto_falls_back_to_pchip_then_linear(monkeypatch):
    """With every parametric candidate invalid, auto uses pchip if valid, else linear."""
    monkeypatch.setattr(lorenz.batch, "AUTO_ORDER", ("gq", "quadratic"))
    P, L = pareto_points(10, 1.5)  # GQ invalid (a + c < 1), quadratic a > 1, pchip not convex
    Pp, Lp = np.linspace(0, 1, 11)[None, :], np.linspace(0, 1, 11)[None, :] ** 6
    auto = lorenz.fit_points(np.vstack([P, Pp]), np.vstack([L, Lp]), "auto")
    assert auto.used[0] == "linear"
    assert auto.used[1] == "pchip"  # p^6: quadratic needs a > 1 and GQ misses (see below)
    assert not lorenz.fit_points(Pp, Lp, "quadratic").valid[0]
    assert auto.valid.all()
    linear = lorenz.fit_points(P, L, "linear").indices(["gini"])["gini"].value[0]
    assert auto.indices(["gini"])["gini"].value[0] == linear


def test_unknown_method_and_index_are_rejected_with_the_valid_names():
    P, L = lognormal_points(5)
    with pytest.raises(ValueError, match="lognormal"):
        lorenz.fit_points(P, L, "spline")
    with pytest.raises(ValueError, match="atkinson"):
        lorenz.fit_points(P, L, "linear").indices(["hoover"])


def test_batches_with_different_bracket_counts_equal_each_row_fitted_alone():
    """Vectorisation does not mix rows: a panel-like batch equals row-by-row fits."""
    from types import SimpleNamespace

    import pandas as pd

    rows = []
    for region, k in (("Ashford", 5), ("Brackenmoor", 10), ("Corrin", 5)):
        P, L = lognormal_points(k, sigma=0.4 + 0.1 * k / 5)
        for j in range(k):
            rows.append((region, 2020, j + 1, P[0, j + 1] - P[0, j], L[0, j + 1] - L[0, j]))
    data = pd.DataFrame(rows, columns=["region", "year", "bracket", "pop_share", "income_share"])
    panel = SimpleNamespace(kind="brackets", data=data)
    fits = lorenz.fit_panel(panel, "auto")
    assert list(fits.keys["region"]) == ["Ashford", "Brackenmoor", "Corrin"]
    together = fits.indices(ALL_KEYS)
    for i, k in enumerate((5, 10, 5)):
        alone = lorenz.fit_points(*lognormal_points(k, sigma=0.4 + 0.1 * k / 5), "auto")
        assert fits.used[i] == alone.used[0]
        for key in ALL_KEYS:
            assert together[key].value[i] == pytest.approx(alone.indices([key])[key].value[0])
    import json

    assert json.loads(fits.params_json()[1])["sigma"] == pytest.approx(0.6, abs=1e-9)


@pytest.mark.parametrize("method", ["gq", "beta", "quadratic", "lognormal", "pchip"])
def test_slope_is_the_derivative_of_the_curve(method):
    """slope(p) = dL/dp, checked by central differences (common practice)."""
    P, L = lognormal_points(10)
    if method in ("quadratic", "pchip"):
        L = CURVE_FOR[method](P)
    fit = lorenz.fit_points(P, L, method)
    p = np.linspace(0.05, 0.95, 19) + 0.013  # off the knots: pchip's slope is exact there
    h = 1e-6
    numeric = (fit.evaluate(p + h) - fit.evaluate(p - h)) / (2 * h)
    np.testing.assert_allclose(fit.slope(p), numeric, rtol=1e-6, atol=1e-7)


def test_fitting_never_writes_to_the_input_arrays():
    """Inputs are never modified: read-only arrays go through every method untouched."""
    rng = np.random.default_rng(11)
    P, L = random_convex_points(rng, 20, 8)
    before = P.copy(), L.copy()
    P.setflags(write=False)
    L.setflags(write=False)
    for method in lorenz.METHODS:
        fit = lorenz.fit_points(P, L, method)
        fit.indices(ALL_KEYS)
        fit.evaluate([0.3])
    np.testing.assert_array_equal(P, before[0])
    np.testing.assert_array_equal(L, before[1])


def test_bad_arguments_raise_data_errors_with_a_fix():
    """Every refusal is a DataError naming what is wrong and how to fix it."""
    from explorer.data.model import DataError

    P, L = lognormal_points(5)
    cases = [
        lambda: lorenz.fit_points(P, L, "spline"),
        lambda: lorenz.fit_points(P, L[:, :-1], "linear"),
        lambda: lorenz.fit_points(P, L, "linear").indices(["hoover"]),
    ]
    for case in cases:
        with pytest.raises(DataError) as caught:
            case()
        assert caught.value.problems[0].fix


def test_upper_mld_is_finite_when_the_bottom_two_brackets_share_a_mean():
    """With equal bottom means the envelope needs no zero incomes (the extended chord of
    bracket 2 passes through (0, 0)), so MLD is bounded; the top jump remains, so Theil T
    is not (Gastwirth 1972 envelope; common practice)."""
    P = np.array([[0.0, 0.25, 0.5, 0.75, 1.0]])
    L = np.array([[0.0, 0.1, 0.2, 0.45, 1.0]])
    got = lorenz.fit_points(P, L, "upper").indices(["mld", "theil_t"])
    assert np.isfinite(got["mld"].value[0]) and got["mld"].note[0] == ""
    assert np.isinf(got["theil_t"].value[0])
    # by hand (bracket slopes 0.4, 0.4, 1.0, 2.2): brackets 1-2 at relative income 0.4;
    # bracket 3 at 0.4 for x = 0.25 (2.2 - 1.0) / (2.2 - 0.4), then at 2.2; the top bracket
    # at 1.0 (bracket 3's chord extended) plus the jump, which adds nothing to MLD
    x = 0.25 * (2.2 - 1.0) / (2.2 - 0.4)
    mld = -(0.5 * np.log(0.4) + x * np.log(0.4) + (0.25 - x) * np.log(2.2) + 0.25 * np.log(1.0))
    assert got["mld"].value[0] == pytest.approx(mld, abs=1e-12)


def test_three_parameter_fits_need_four_brackets_and_auto_still_answers():
    """GQ and Beta have 3 parameters and need 3 interior points (common practice: no
    exactly determined or underdetermined least squares); auto then uses a 1-parameter fit."""
    P, L = lognormal_points(3)
    for method in ("gq", "beta"):
        fit = lorenz.fit_points(P, L, method)
        assert not fit.valid[0] and "at least 4 brackets" in fit.reason[0]
    auto = lorenz.fit_points(P, L, "auto")
    assert auto.used[0] == "lognormal" and auto.params[0, 0] == pytest.approx(SIGMA, abs=1e-9)


# ---------------------------------------------------------------- batched shortcuts


def _exact_lstsq(X, y):
    """Least squares in exact rational arithmetic (Python fractions, normal equations)."""
    from fractions import Fraction

    A = [[Fraction(v) for v in row] for row in X]
    b = [Fraction(v) for v in y]
    q = len(A[0])
    N = [[sum(r[i] * r[j] for r in A) for j in range(q)] for i in range(q)]
    v = [sum(r[i] * t for r, t in zip(A, b, strict=True)) for i in range(q)]
    for c in range(q):  # Gaussian elimination, exact
        for r in range(c + 1, q):
            f = N[r][c] / N[c][c]
            N[r] = [N[r][j] - f * N[c][j] for j in range(q)]
            v[r] -= f * v[c]
    x = [Fraction(0)] * q
    for r in range(q - 1, -1, -1):
        x[r] = (v[r] - sum(N[r][j] * x[j] for j in range(r + 1, q))) / N[r][r]
    return np.array([float(t) for t in x])


@pytest.mark.parametrize("shared", [False, True])
def test_batched_least_squares_equals_exact_rational_least_squares(shared):
    """The vectorised Gram–Schmidt solve against exact arithmetic (Python fractions), for
    row-specific design matrices and for one design shared by every row."""
    rng = np.random.default_rng(11)
    n, m = 12, 9
    X = rng.uniform(-1, 1, (n, m, 3))
    if shared:
        X[:] = X[:1]
    y = rng.normal(size=(n, m))
    cols = [np.ascontiguousarray(X[:, :, j].T) for j in range(3)]
    if shared:
        cols = [c[:, :1] for c in cols]
    got, ok = _lstsq_rows(cols, np.ascontiguousarray(y.T))
    assert ok.all()
    for row in range(n):
        np.testing.assert_allclose(got[row], _exact_lstsq(X[row], y[row]), rtol=1e-13, atol=1e-14)


def test_batched_least_squares_flags_a_rank_deficient_design():
    """Two equal columns leave the solution undefined: NaN and a flag (common practice)."""
    X = np.random.default_rng(2).uniform(size=(2, 6, 3))
    X[1, :, 2] = X[1, :, 1]
    cols = [np.ascontiguousarray(X[:, :, j].T) for j in range(3)]
    got, ok = _lstsq_rows(cols, np.ones((6, 2)))
    assert ok.tolist() == [True, False]
    assert np.isnan(got[1]).all() and np.isfinite(got[0]).all()


@pytest.mark.parametrize("a", [1e-7, 3e-4, 0.02, 0.3, 0.4999, 0.5, 0.77, 0.999, 1 - 2e-6])
def test_quadratic_integrals_equal_scipy_quad_of_the_linear_slope(a):
    """The quadratic curve's closed-form integrals against scipy.integrate.quad over p of
    f(1 - a + 2 a p), for small a (series) and large a (elementary forms) alike."""
    P = np.linspace(0, 1, 11)[None, :]
    L = (1 - a) * P + a * P * P
    keys = [*INTEGRAL_KEYS, "ge_3", "ge_-2", "atkinson_1.5"]
    got = lorenz.fit_points(P, L, "quadratic").indices(keys)
    a_fit = lorenz.fit_points(P, L, "quadratic").params[0, 0]

    def mean(f):
        return integrate.quad(lambda p: f(1 - a_fit + 2 * a_fit * p), 0, 1, epsabs=0, epsrel=1e-13)[
            0
        ]

    # deviations from the mean, so the references keep their relative accuracy at small a
    expected = {
        "theil_t": mean(lambda y: y * np.log(y) - (y - 1)),
        "mld": mean(lambda y: (y - 1) - np.log(y)),
        "cv": np.sqrt(mean(lambda y: (y - 1) ** 2)),
    }
    for key in keys:
        family, _, param = key.partition("_")
        if family == "ge" and key not in expected:
            alpha = float(param)
            dev = mean(lambda y, t=alpha: y**t - 1 - t * (y - 1))
            expected[key] = dev / (alpha * (alpha - 1))
        elif family == "atkinson":
            eps = float(param)
            if eps == 1:
                expected[key] = -np.expm1(-expected["mld"])
            else:
                t = 1 - eps
                moment = 1 + mean(lambda y, t=t: y**t - 1 - t * (y - 1))
                expected[key] = 1 - moment ** (1 / t)
    for key in keys:
        # the value's own rounding: a few units of 1e-16 on the node average near 1
        assert got[key].value[0] == pytest.approx(expected[key], rel=1e-11, abs=2e-15), key
