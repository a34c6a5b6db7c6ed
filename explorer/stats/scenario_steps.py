"""The arithmetic of a scenario's steps on weighted units, vectorised across districts.

Units are three arrays: a district code per unit, incomes and weights (people represented).
Each step returns new incomes or weights and, for transfers and levies, the money moved per
district. Ranks are taken when a step runs, over the whole province: a unit's share is the
midpoint of its stretch of the cumulative weight (common practice), and a unit counts whole
on the side of a decile cut its midpoint falls on.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from explorer.data.model import fail
from explorer.stats import measures, welfare
from explorer.stats.scenario import DECILES, Growth, Levy, Move, Transfer

__all__ = ["Budget", "Units", "income_order", "province_median", "run", "sorted_units"]


@dataclass(frozen=True)
class Units:
    """Weighted units of one year: ``code`` indexes ``regions``."""

    regions: np.ndarray
    code: np.ndarray
    income: np.ndarray
    weight: np.ndarray

    def replace(self, income=None, weight=None) -> Units:
        return Units(
            self.regions,
            self.code,
            self.income if income is None else income,
            self.weight if weight is None else weight,
        )


@dataclass(frozen=True)
class Budget:
    """Money one step moved: per district, people reached and the amount."""

    step: int
    kind: str
    people: np.ndarray  # weight of recipients or payers, per district
    money: np.ndarray  # cost of a transfer or revenue of a levy, per district
    rate: float = np.nan  # the levy's rate (solved when balanced)
    threshold: float = np.nan  # the transfer's threshold in money, when it has one


def _sums(units: Units, values: np.ndarray) -> np.ndarray:
    return np.bincount(units.code, weights=values, minlength=len(units.regions))


def income_order(units: Units) -> tuple[np.ndarray, np.ndarray]:
    """Positions by income in the province, and by (district, income).

    One float sort; the district order is a stable sort of the small integer codes in
    that order (a radix sort in NumPy), so it is the order ``np.lexsort`` would give.
    """
    pooled = np.argsort(units.income, kind="stable")
    key = units.code.astype(np.min_scalar_type(max(len(units.regions) - 1, 0)))
    return pooled, pooled[np.argsort(key[pooled], kind="stable")]


def sorted_units(units: Units, order: np.ndarray, by_district: bool) -> measures.SortedUnits:
    """The units in ``order`` as the measures engine takes them (incomes already checked)."""
    if by_district:
        sizes = np.bincount(units.code, minlength=len(units.regions))
        codes = np.repeat(np.arange(sizes.size, dtype=np.int64), sizes)
        starts = (np.cumsum(sizes) - sizes).astype(np.int64)
        labels = np.arange(sizes.size, dtype=np.int64)
    else:
        codes = np.zeros(order.size, dtype=np.int64)
        starts = np.zeros(1, dtype=np.int64)
        labels = np.array(["(all)"], dtype=object)
    arrays = (units.income[order], units.weight[order], codes, starts, order)
    for array in arrays:
        array.setflags(write=False)
    return measures.SortedUnits(*arrays[:4], labels=labels, order=arrays[4])


def _province_share(units: Units) -> np.ndarray:
    """Each unit's midpoint cumulative population share in the province."""
    order = np.argsort(units.income, kind="stable")
    w = units.weight[order]
    cum = np.cumsum(w)
    share = np.empty_like(units.income)
    share[order] = (cum - 0.5 * w) / cum[-1]
    return share


def _district_share(units: Units) -> np.ndarray:
    """Each unit's midpoint cumulative population share inside its own district."""
    order = income_order(units)[1]
    w = units.weight[order]
    code = units.code[order]
    cum = np.cumsum(w)
    total = _sums(units, units.weight)
    start = np.concatenate([[0.0], np.cumsum(total)[:-1]])
    share = np.empty_like(units.income)
    with np.errstate(invalid="ignore", divide="ignore"):
        share[order] = (cum - start[code] - 0.5 * w) / total[code]
    return share


def province_median(units: Units) -> float:
    """The weighted median of the province, as the relative poverty lines take it."""
    pooled = np.argsort(units.income, kind="stable")
    return float(welfare.weighted_median(sorted_units(units, pooled, False))[0])


def _chosen(units: Units, districts: tuple[str, ...], step: int, kind: str) -> np.ndarray:
    """Units in the chosen districts (all when none are named); unknown ids refused."""
    if not districts:
        return np.ones(units.income.size, dtype=bool)
    known = set(units.regions.tolist())
    unknown = [d for d in districts if d not in known]
    if unknown:
        raise fail(
            f"step {step + 1} ({kind}) names district(s) {', '.join(unknown)}, which are not "
            "in this year of the panel.",
            f"Use ids such as {', '.join(units.regions[:3].tolist())}.",
            column=f"steps[{step}].districts",
        )
    return np.isin(units.code, np.flatnonzero(np.isin(units.regions, districts)))


def _transfer(units: Units, step: Transfer, i: int) -> tuple[Units, Budget]:
    chosen = _chosen(units, step.districts, i, step.kind)
    threshold = np.nan
    if step.bottom_deciles is not None:
        target = _province_share(units) < step.bottom_deciles / DECILES
    else:
        threshold = (
            float(step.below)
            if step.below is not None
            else float(step.below_median_share) * province_median(units)
        )
        target = units.income < threshold
    reached = chosen & target
    if step.top_up:
        add = np.where(reached, threshold - units.income, 0.0)
    else:
        add = np.where(reached, float(step.amount), 0.0)
    budget = Budget(
        i,
        step.kind,
        _sums(units, units.weight * reached),
        _sums(units, units.weight * add),
        threshold=threshold,
    )
    return units.replace(income=units.income + add), budget


def _levy(units: Units, step: Levy, i: int, owed: float) -> tuple[Units, Budget]:
    chosen = _chosen(units, step.districts, i, step.kind)
    payers = chosen & (_province_share(units) >= 1 - step.top_deciles / DECILES)
    base = np.where(payers, np.maximum(units.income, 0.0), 0.0)
    total_base = float(np.sum(units.weight * base))
    if step.balance:
        if total_base <= 0:
            raise fail(
                f"step {i + 1} (levy): the top {step.top_deciles} decile(s) of the chosen "
                "districts have no income to levy.",
                "Widen the levy to more deciles or districts.",
                column=f"steps[{i}].top_deciles",
            )
        rate = owed / total_base
        if rate >= 1:
            raise fail(
                f"step {i + 1} (levy): paying for the transfers would take {100 * rate:.0f} % "
                f"of the incomes of the top {step.top_deciles} decile(s).",
                "Widen the levy to more deciles or districts, or make the transfers smaller.",
                column=f"steps[{i}].balance",
            )
    else:
        rate = float(step.rate)
    take = rate * base
    budget = Budget(
        i, step.kind, _sums(units, units.weight * payers), _sums(units, units.weight * take), rate
    )
    return units.replace(income=units.income - take), budget


def _growth(units: Units, step: Growth, i: int) -> Units:
    chosen = _chosen(units, step.districts, i, step.kind)
    if step.rate is not None:
        factor = np.full(units.income.size, (1.0 + step.rate) ** step.years)
    else:
        decile = np.clip(np.floor(_district_share(units) * DECILES), 0, DECILES - 1).astype(int)
        factor = (1.0 + np.asarray(step.decile_rates))[decile] ** step.years
    return units.replace(income=np.where(chosen, units.income * factor, units.income))


def _move(units: Units, step: Move, i: int) -> Units:
    pairs = step.scale or step.share
    names = tuple(d for d, _ in pairs)
    _chosen(units, names, i, step.kind)  # refuses unknown districts
    position = {r: k for k, r in enumerate(units.regions.tolist())}
    idx = np.array([position[d] for d in names], dtype=np.int64)
    given = np.array([v for _, v in pairs])
    factor = np.ones(len(units.regions))
    if step.scale:
        factor[idx] = given
    else:
        total = _sums(units, units.weight)
        province = total.sum()
        factor[idx] = given * province / total[idx]
        rest = np.ones(len(units.regions), dtype=bool)
        rest[idx] = False
        if rest.any():
            factor[rest] = (1.0 - given.sum()) * province / total[rest].sum()
        elif abs(given.sum() - 1.0) > 1e-9:
            raise fail(
                f"step {i + 1} (move): every district is given a share, and the shares add up "
                f"to {given.sum():g}, not 1.",
                "Make the shares add up to 1, or leave some districts out.",
                column=f"steps[{i}].share",
            )
    return units.replace(weight=units.weight * factor[units.code])


def run(units: Units, steps) -> tuple[Units, list[Budget]]:
    """Every step in order; the units after and the money of each transfer and levy."""
    budgets: list[Budget] = []
    for i, step in enumerate(steps):
        if isinstance(step, Transfer):
            units, budget = _transfer(units, step, i)
            budgets.append(budget)
        elif isinstance(step, Levy):
            owed = sum(float(b.money.sum()) for b in budgets if b.kind == "transfer")
            owed -= sum(float(b.money.sum()) for b in budgets if b.kind == "levy")
            units, budget = _levy(units, step, i, max(owed, 0.0))
            budgets.append(budget)
        elif isinstance(step, Growth):
            units = _growth(units, step, i)
        else:
            units = _move(units, step, i)
    return units, budgets
