"""σ- and β-convergence of district mean incomes.

σ-convergence asks whether the spread of district means narrows over time; β-convergence
asks whether poorer districts grow faster than richer ones. Both take a long table with
columns ``region, year, mean_income`` and optionally ``population`` (the ``means`` panel's
``data``, or one row per district-year from any panel).

References
----------
Barro, R. J. and Sala-i-Martin, X. (1992). Convergence. *Journal of Political Economy*
100(2): 223-251.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

from explorer.data.model import DataError, Problem

__all__ = ["BetaConvergence", "beta", "sigma", "SIGMA_MEASURES"]

#: Measures in :func:`sigma`'s table, in the order they appear for each year.
SIGMA_MEASURES = ("sd_log", "sd_log_weighted", "cv", "cv_weighted")

_REQUIRED = ("region", "year", "mean_income")


def _district_years(data: pd.DataFrame) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Checked arrays region, year, mean_income, population (NaN when not given).

    Raises DataError naming every problem: missing columns, duplicate district-years,
    means that are missing or not positive (their logarithm is undefined), negative
    populations.
    """
    missing = [c for c in _REQUIRED if c not in data.columns]
    if missing:
        raise DataError(
            [
                Problem(
                    f"The table has no '{c}' column; convergence needs region, year and "
                    "mean_income per district-year.",
                    f"Add a '{c}' column or map an existing column to it.",
                    column=c,
                )
                for c in missing
            ]
        )
    problems = []
    region = data["region"].astype(str).to_numpy()
    year = pd.to_numeric(data["year"], errors="coerce").to_numpy(dtype=float)
    _flag(
        problems,
        ~np.isfinite(year) | (year != np.round(year)),
        "year",
        lambda count, first: (
            f"{count} row(s) have a year that is not a whole number, "
            f"first for district '{region[first]}' ({data['year'].iloc[first]!r})."
        ),
        "Give each year as a whole number such as 2015.",
    )
    mean = pd.to_numeric(data["mean_income"], errors="coerce").to_numpy(dtype=float)
    _flag(
        problems,
        ~np.isfinite(mean) | (mean <= 0),
        "mean_income",
        lambda count, first: (
            f"{count} district-year(s) have a mean income that is missing, "
            f"zero or negative, first '{region[first]}' in {data['year'].iloc[first]} "
            f"({data['mean_income'].iloc[first]!r}); its logarithm is undefined."
        ),
        "Give a positive mean income for every district-year, or leave those rows out.",
    )
    if "population" in data.columns:
        population = pd.to_numeric(data["population"], errors="coerce").to_numpy(dtype=float)
        _flag(
            problems,
            population < 0,
            "population",
            lambda count, first: (
                f"{count} district-year(s) have a negative population, "
                f"first '{region[first]}' in {data['year'].iloc[first]}."
            ),
            "Populations are head counts: give zero or more, or leave them empty.",
        )
    else:
        population = np.full(len(data), np.nan)
    if not problems:
        keys = pd.DataFrame({"region": region, "year": year})
        dup = keys.duplicated(keep=False).to_numpy()
        if dup.any():
            first = int(np.flatnonzero(dup)[0])
            problems.append(
                Problem(
                    f"District '{region[first]}' appears more than once in "
                    f"{int(year[first])}; convergence needs one mean per district-year.",
                    "Keep one row per district and year (for bracket tables, one row of "
                    "each district-year's mean income).",
                    column="region",
                )
            )
    if problems:
        raise DataError(problems)
    return region, year.astype(np.int64), mean, population


def _spread(x: np.ndarray, w: np.ndarray, group: np.ndarray, k: int) -> tuple[np.ndarray, ...]:
    """Weighted mean and standard deviation (population convention) per group, two passes."""
    total = np.bincount(group, weights=w, minlength=k)
    centre = np.bincount(group, weights=w * x, minlength=k) / total
    dev = x - centre[group]
    var = np.bincount(group, weights=w * dev * dev, minlength=k) / total
    return centre, np.sqrt(var)


def sigma(data: pd.DataFrame) -> pd.DataFrame:
    """σ-convergence: the spread of district mean incomes in every year.

    Parameters
    ----------
    data : DataFrame
        ``region, year, mean_income`` (positive), optionally ``population``; one row per
        district-year.

    Returns
    -------
    DataFrame
        Tidy: ``year, measure, value, districts``, sorted by year then measure in the order
        of ``SIGMA_MEASURES``:

        - ``sd_log``: standard deviation of log district means, each district counted once
          (Barro & Sala-i-Martin's σ);
        - ``sd_log_weighted``: the same with districts weighted by population;
        - ``cv``: coefficient of variation of district means (standard deviation over the
          mean), each district counted once;
        - ``cv_weighted``: the population-weighted coefficient of variation (Williamson's
          index).

        Standard deviations use the population convention (divide by the number of
        districts, or by total population). The weighted measures appear only when the
        table has populations; in a year where any district's population is missing or
        the total is zero their value is NaN. ``districts`` is the number of districts in
        that year. A falling ``sd_log`` is σ-convergence.

    Raises
    ------
    DataError
        Missing columns, means that are not positive, negative populations, or a district
        listed twice in a year.

    References
    ----------
    Barro, R. J. and Sala-i-Martin, X. (1992). Convergence. *Journal of Political Economy*
    100(2): 223-251.

    Williamson, J. G. (1965). Regional inequality and the process of national
    development: a description of the patterns. *Economic Development and Cultural Change*
    13(4): 1-84.
    """
    _, year, mean, population = _district_years(data)
    years, group = np.unique(year, return_inverse=True)
    k = len(years)
    ones = np.ones_like(mean)
    count = np.bincount(group, minlength=k)
    _, sd_log = _spread(np.log(mean), ones, group, k)
    level, sd_level = _spread(mean, ones, group, k)
    columns = {"sd_log": sd_log, "cv": sd_level / level}

    if np.isfinite(population).any():
        incomplete = (
            np.bincount(group, weights=(~np.isfinite(population)).astype(float), minlength=k) > 0
        )
        w = np.nan_to_num(population, nan=0.0)
        usable = ~incomplete & (np.bincount(group, weights=w, minlength=k) > 0)
        with np.errstate(invalid="ignore", divide="ignore"):
            _, sd_log_w = _spread(np.log(mean), w, group, k)
            level_w, sd_level_w = _spread(mean, w, group, k)
        columns["sd_log_weighted"] = np.where(usable, sd_log_w, np.nan)
        columns["cv_weighted"] = np.where(usable, sd_level_w / level_w, np.nan)

    measures = [m for m in SIGMA_MEASURES if m in columns]
    values = np.column_stack([columns[m] for m in measures])  # (years, measures)
    return pd.DataFrame(
        {
            "year": np.repeat(years, len(measures)),
            "measure": np.tile(np.array(measures, dtype=object), k),
            "value": values.ravel(),
            "districts": np.repeat(count, len(measures)),
        }
    )


@dataclass(frozen=True)
class BetaConvergence:
    """Result of a β-convergence regression between two years.

    Attributes
    ----------
    beta : float
        Slope of the yearly growth rate (ln y_T - ln y_0) / T on ln y_0. Negative: poorer
        districts grew faster.
    se : float
        Its OLS standard error (n - 2 degrees of freedom).
    lower, upper : float
        Confidence interval for ``beta`` at ``level`` from Student's t distribution.
    level : float
    intercept : float
    r_squared : float
    n : int
        Districts with a mean income in both years.
    year_from, year_to : int
    speed : float
        Implied speed of convergence λ = -ln(1 + βT) / T per year; NaN when β ≥ 0
        (divergence) or when 1 + βT ≤ 0.
    half_life : float
        Years for half of a district's gap to close, ln 2 / λ; NaN with ``speed``.
    reason : str
        Why ``speed``/``half_life`` (or everything) is NaN; empty otherwise.
    """

    beta: float
    se: float
    lower: float
    upper: float
    level: float
    intercept: float
    r_squared: float
    n: int
    year_from: int
    year_to: int
    speed: float
    half_life: float
    reason: str = ""

    @property
    def converging(self) -> bool:
        """True when the estimated β is negative (whatever its interval)."""
        return bool(np.isfinite(self.beta) and self.beta < 0)


def _not_estimable(n: int, year_from: int, year_to: int, level: float, reason: str):
    nan = float("nan")
    return BetaConvergence(
        nan, nan, nan, nan, level, nan, nan, n, year_from, year_to, nan, nan, reason
    )


def beta(
    data: pd.DataFrame,
    year_from: int | None = None,
    year_to: int | None = None,
    *,
    level: float = 0.95,
) -> BetaConvergence:
    """β-convergence: regress districts' yearly growth on their starting log mean.

    Fits g_i = a + β ln y_i0 by ordinary least squares, with g_i = (ln y_iT - ln y_i0) / T
    and T = ``year_to - year_from``, over the districts that have a mean in both years.
    In the Barro & Sala-i-Martin model β = -(1 - exp(-λT)) / T, so the speed of
    convergence is λ = -ln(1 + βT) / T and a gap halves in ln 2 / λ years.

    Parameters
    ----------
    data : DataFrame
        ``region, year, mean_income`` (positive); other columns are ignored.
    year_from, year_to : int, optional
        Start and end years; default the first and last years in ``data``.
    level : float
        Confidence level of the interval for β, in (0, 1).

    Returns
    -------
    BetaConvergence
        When fewer than three districts have both years, or their starting means are all
        equal, every number is NaN and ``reason`` says why. When β ≥ 0 (divergence) or
        1 + βT ≤ 0 the speed and half-life are NaN with a reason.

    Raises
    ------
    DataError
        Bad table (see :func:`sigma`), a year not in the table, ``year_to`` not after
        ``year_from``, or ``level`` outside (0, 1).

    References
    ----------
    Barro, R. J. and Sala-i-Martin, X. (1992). Convergence. *Journal of Political Economy*
    100(2): 223-251.
    """
    region, year, mean, _ = _district_years(data)
    if not 0 < level < 1:
        raise DataError(
            Problem(f"Confidence level {level!r} is not between 0 and 1.", "Use e.g. 0.95.")
        )
    start, end = _year_span(year, year_from, year_to)
    if start == end:
        return _not_estimable(0, start, end, level, "The table has only one year.")

    x, x_end = _paired_logs(region, year, mean, start, end)
    n = x.size
    if n < 3:
        few = f"Only {n} district(s) have means in both {start} and {end}; "
        return _not_estimable(
            n, start, end, level, few + "a slope with a standard error needs at least 3."
        )
    span = end - start
    g = (x_end - x) / span
    fit = _least_squares(x, g, level)
    if fit is None:
        return _not_estimable(
            n, start, end, level, f"All districts had the same mean income in {start}."
        )
    slope, se, half_width, intercept, r_squared = fit
    speed, half_life, reason = _speed(slope, span)
    return BetaConvergence(
        beta=slope,
        se=se,
        lower=slope - half_width,
        upper=slope + half_width,
        level=level,
        intercept=intercept,
        r_squared=r_squared,
        n=n,
        year_from=start,
        year_to=end,
        speed=float(speed),
        half_life=half_life,
        reason=reason,
    )


def _year_span(year: np.ndarray, year_from: int | None, year_to: int | None) -> tuple[int, int]:
    """Start and end years, the table's first and last by default; equal only by default."""
    present = np.unique(year)
    if present.size == 0:
        raise DataError(Problem("The table has no rows.", "Give at least two years of means."))
    start = int(present[0]) if year_from is None else int(year_from)
    end = int(present[-1]) if year_to is None else int(year_to)
    absent = [y for y in (start, end) if y not in set(present.tolist())]
    if absent:
        raise DataError(
            Problem(
                f"Year {absent[0]} is not in the table (it has {present[0]}-{present[-1]}).",
                "Choose years that the table covers.",
                column="year",
            )
        )
    one_year = start == end and year_from is None and year_to is None
    if end <= start and not one_year:
        raise DataError(
            Problem(
                f"The end year {end} is not after the start year {start}.",
                "Choose a start year before the end year.",
                column="year",
            )
        )
    return start, end


def _speed(slope: float, span: int) -> tuple[float, float, str]:
    """Speed of convergence and half-life from β, or NaN and the reason they do not exist."""
    nan = float("nan")
    if slope >= 0:
        reason = (
            f"β = {slope:.4g} ≥ 0: richer districts grew as fast as poorer ones or faster "
            f"(divergence), so there is no speed of convergence or half-life."
        )
        return nan, nan, reason
    if 1 + slope * span <= 0:
        reason = (
            f"1 + βT = {1 + slope * span:.3g} ≤ 0: poorer districts overtook richer ones, "
            "which the convergence model's speed cannot describe."
        )
        return nan, nan, reason
    speed = -np.log1p(slope * span) / span
    return float(speed), float(np.log(2) / speed), ""


def _least_squares(
    x: np.ndarray, g: np.ndarray, level: float
) -> tuple[float, float, float, float, float] | None:
    """OLS of g on x: slope, its standard error and interval half-width, intercept, R².

    None when every x is the same (no slope can be fitted).
    """
    n = x.size
    xc = x - x.mean()
    sxx = xc @ xc
    if sxx <= 1e-24 * max(1.0, float(x @ x)):
        return None
    slope = float(xc @ (g - g.mean()) / sxx)
    intercept = float(g.mean() - slope * x.mean())
    resid = g - intercept - slope * x
    ssr, sst = float(resid @ resid), float(((g - g.mean()) ** 2).sum())
    se = float(np.sqrt(ssr / (n - 2) / sxx))
    half_width = float(stats.t.ppf(0.5 + level / 2, n - 2)) * se
    r_squared = 1.0 - ssr / sst if sst > 0 else float("nan")
    return slope, se, half_width, intercept, r_squared


def _paired_logs(
    region: np.ndarray, year: np.ndarray, mean: np.ndarray, start: int, end: int
) -> tuple[np.ndarray, np.ndarray]:
    """Log mean incomes in ``start`` and in ``end`` of the districts present in both."""
    first = pd.Series(np.log(mean[year == start]), index=region[year == start])
    last = pd.Series(np.log(mean[year == end]), index=region[year == end])
    both = first.index.intersection(last.index)
    return first[both].to_numpy(), last[both].to_numpy()


def _flag(
    problems: list[Problem],
    bad: np.ndarray,
    column: str,
    message: Callable[[int, int], str],
    fix: str,
) -> None:
    """Add one problem for the rows marked ``bad``, worded by ``message(count, first row)``."""
    if bad.any():
        first = int(np.flatnonzero(bad)[0])
        problems.append(Problem(message(int(bad.sum()), first), fix, column=column))
