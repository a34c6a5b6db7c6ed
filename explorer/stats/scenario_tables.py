"""A scenario applied to one year of a panel: the before and after tables.

Unit records are used as they are (incomes and weights). Grouped shares go through each
district's quantile grid rebuilt from its Lorenz fit, the same pseudo-units the pooled
decompositions use (:mod:`explorer.stats.decomposition.pseudo_units`); both sides of every
comparison are then computed on those pseudo-units, and the result says so.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import DataError, Panel, fail
from explorer.stats import decompose, growth, indices, measures, poverty, poverty_lines, welfare
from explorer.stats.decomposition.checks import _check_arrays, parse_ge_alpha
from explorer.stats.decomposition.ge import _ge_tree
from explorer.stats.decomposition.panel_units import _level_labels, _panel_units
from explorer.stats.scenario import TABLES, Scenario
from explorer.stats.scenario_steps import Budget, Units, income_order, run, sorted_units

__all__ = ["GRID_NOTE", "TABLES", "ScenarioResult", "apply"]

PROVINCE = indices.ALL_DISTRICTS
DECOMPOSED = ("theil_t", "mld")
PERCENTILES = np.arange(1, 100) / 100.0

GRID_NOTE = (
    "grouped shares: each district is rebuilt from its Lorenz fit as pseudo-units on a "
    "quantile grid (percentiles, the top one cut in ten); before and after are both computed "
    "on them. A pseudo-unit counts whole on the side of a threshold or decile cut its mean "
    "income falls on, so the people reached in a district are known to about one grid cell "
    "(1 % of its people, 0.1 % at the top); inequality inside a cell is lost, so indices come "
    "out slightly low (within about 0.2 % for the Gini and the Theil from decile shares)."
)
CAUTION = (
    "A scenario is an arithmetic of incomes, not a prediction: no behavioural responses, no "
    "take-up rates, no price effects. Local rules and the office's own models decide policy."
)


@dataclass(frozen=True, eq=False)
class ScenarioResult:
    """Before and after tables of one scenario in one year.

    Attributes
    ----------
    indices : DataFrame
        ``region, index, before, after, change, note``; ``region = "(all)"`` is the province.
    poverty : DataFrame
        ``region, index, line, before, after, change, note`` at a line fixed before the
        scenario (a relative line is resolved on the incomes before).
    decomposition : DataFrame
        ``index, level, group, component, before, after, change, share_before, share_after``
        (the GE split of :func:`explorer.stats.decompose.table`).
    budget : DataFrame
        ``step, kind, region, people, money, rate, threshold``: the cost of each transfer
        and the revenue of each levy, per district and for the province (``"(all)"``).
    gain : DataFrame
        ``percentile, before, after, change, growth``: the income at each percentile of the
        province before and after (an anonymous, growth-incidence-style comparison).
    notes : tuple of str
        The approximation (grouped data), the line, districts left out, the caution.
    """

    scenario: Scenario
    year: int
    indices: pd.DataFrame
    poverty: pd.DataFrame
    decomposition: pd.DataFrame
    budget: pd.DataFrame
    gain: pd.DataFrame
    notes: tuple[str, ...]
    approximation: str

    def tables(self) -> dict[str, pd.DataFrame]:
        """Every table by name (:data:`TABLES`), each with the year as its first column."""
        return {
            name: getattr(self, name).assign(year=self.year)[["year", *getattr(self, name).columns]]
            for name in TABLES
        }


# ----------------------------------------------------------------------------- units in


def _year(panel: Panel, year: int | None) -> int:
    years = panel.years
    if not years:
        raise fail("the panel has no district-years.", "Load a panel with data.")
    if year is None:
        return int(years[-1])
    if int(year) not in years:
        raise fail(
            f"the panel has no year {year}.",
            f"Choose one of {', '.join(map(str, years))}.",
            column="year",
        )
    return int(year)


def _units(panel: Panel, year: int, method: str) -> tuple[Units, str, pd.DataFrame]:
    if panel.kind not in ("units", "brackets"):
        raise fail(
            f"a scenario changes the incomes of people, and a panel of {panel.kind} has no "
            "distribution inside its districts.",
            "Load bracket income shares or unit records.",
        )
    one = replace(panel, data=panel.data[panel.data["year"] == year].reset_index(drop=True))
    approximation = ""
    if panel.kind == "brackets":
        population = one.data["population"].to_numpy(dtype=float)
        if not np.all(np.isfinite(population) & (population > 0)):
            missing = one.data.loc[~np.isfinite(population), "region"].unique()
            raise fail(
                f"a scenario on grouped data needs every district's population; {year} has "
                f"none for {', '.join(map(str, missing[:8]))}.",
                "Add a population column (one value per district and year), so costs and "
                "revenues are in money and districts weigh by their people.",
                column="population",
            )
        if not np.isfinite(one.data["mean_income"].to_numpy(dtype=float)).any():
            raise fail(
                f"a scenario on grouped data needs each district's mean income; {year} has "
                "none, so the shares cannot be turned into money.",
                "Add a mean_income column (one value per district and year).",
                column="mean_income",
            )
        approximation = GRID_NOTE
    raw = _panel_units(one, method)
    if raw.income.size == 0:
        reasons = "; ".join(f"{r.region}: {r.reason}" for r in raw.dropped.head(8).itertuples())
        raise fail(
            f"no district of {year} could be rebuilt from its shares ({reasons}).",
            "Choose another Lorenz method or year, or check the shares.",
        )
    code, regions = pd.factorize(raw.region, sort=True)
    regions = np.asarray(regions, dtype=str).astype(object)
    units = Units(regions, code.astype(np.int64), raw.income.copy(), raw.weight)
    if not np.all(np.isfinite(units.income)):
        raise fail("some incomes are not finite.", "Check the panel's incomes.", column="income")
    return units, approximation, raw.dropped


# ----------------------------------------------------------------------------- tables


@dataclass(frozen=True, eq=False)
class _Sorted:
    """One state's units sorted twice, shared by every table: by district, and pooled."""

    units: Units
    by_district: measures.SortedUnits
    whole: measures.SortedUnits

    @classmethod
    def of(cls, units: Units) -> _Sorted:
        pooled, by_district = income_order(units)
        return cls(
            units, sorted_units(units, by_district, True), sorted_units(units, pooled, False)
        )

    @property
    def regions(self) -> np.ndarray:
        """District id of each group of ``by_district``, in its order."""
        return self.units.regions[np.asarray(self.by_district.labels, dtype=np.int64)]


def _index_table(state: _Sorted, keys) -> pd.DataFrame:
    """Every index of every district and of the province, the engine of unit records."""
    frames = []
    for group, region in ((state.by_district, state.regions), (state.whole, [PROVINCE])):
        got = measures.compute(group, keys)
        frames += [
            pd.DataFrame(
                {"region": region, "index": key, "value": got[key].value, "note": got[key].note}
            )
            for key in keys
        ]
    return pd.concat(frames, ignore_index=True)


def _joined(before: pd.DataFrame, after: pd.DataFrame, on: list[str]) -> pd.DataFrame:
    both = before.merge(after, on=on, suffixes=("_before", "_after"), how="outer", sort=False)
    out = both[on].copy()
    out["before"] = both["value_before"]
    out["after"] = both["value_after"]
    out["change"] = out["after"] - out["before"]
    if "note_before" in both:
        notes = zip(both["note_before"].fillna(""), both["note_after"].fillna(""), strict=True)
        out["note"] = [
            "; ".join(t for t in (f"before: {a}" if a else "", f"after: {b}" if b else "") if t)
            for a, b in notes
        ]
    return out


def _line_amounts(line, state: _Sorted) -> tuple[np.ndarray, float]:
    """One line per district (in ``by_district`` order), fixed on the incomes before, and
    the province's line (NaN when each district has its own)."""
    n = state.by_district.n_groups
    if not line.relative:
        return poverty_lines.resolve(line, n=n), float(line.amount)
    if line.base == "median":
        district = welfare.weighted_median(state.by_district)
        whole = welfare.weighted_median(state.whole)
    else:
        w, y = state.by_district.weights, state.by_district.values
        starts = state.by_district.starts
        district = np.add.reduceat(w * y, starts) / np.add.reduceat(w, starts)
        whole = np.array([np.dot(w, y) / w.sum()])
    z = poverty_lines.resolve(line, district_base=district, province_base=np.repeat(whole, n))
    return z, (float(line.fraction * whole[0]) if line.scope == "province" else np.nan)


def _poverty_table(state: _Sorted, z: np.ndarray, z_province: float) -> pd.DataFrame:
    got = poverty.measure_units(state.by_district, z)
    rows = [
        pd.DataFrame({"region": state.regions, "index": key, "line": z, "value": got[key][0]})
        for key in poverty.POVERTY_INDICES
    ]
    if np.isfinite(z_province):
        total = poverty.measure_units(state.whole, np.array([z_province]))
        rows.append(
            pd.DataFrame(
                {
                    "region": PROVINCE,
                    "index": list(poverty.POVERTY_INDICES),
                    "line": z_province,
                    "value": [total[k][0, 0] for k in poverty.POVERTY_INDICES],
                }
            )
        )
    out = pd.concat(rows, ignore_index=True)
    out["note"] = ""
    return out


def _poverty(before: _Sorted, after: _Sorted, z: np.ndarray, z_province: float) -> pd.DataFrame:
    first = _poverty_table(before, z, z_province)
    out = _joined(first, _poverty_table(after, z, z_province), ["region", "index"])
    out.insert(2, "line", first["line"].to_numpy())
    return out


def _split_rows(tree, names: list[str], labels: list[np.ndarray]) -> pd.DataFrame:
    """A GE split as the rows of :func:`explorer.stats.decompose.table` (one year)."""
    total = float(tree.total[0])
    rows = [("total", decompose.ALL, "total", total)]
    for k, name in enumerate(names):
        rows.append((name, decompose.ALL, "between", float(tree.components[k, 0])))
        own = labels[k][tree.node_codes[k][:, -1]]
        rows += [(name, g, "between", v) for g, v in zip(own, tree.between_nodes[k], strict=True)]
    finest = labels[-1][tree.node_codes[-1][:, -1]]
    rows.append((names[-1], decompose.ALL, "within", float(tree.components[-1, 0])))
    rows += [(names[-1], g, "within", v) for g, v in zip(finest, tree.within_nodes, strict=True)]
    out = pd.DataFrame(rows, columns=["level", "group", "component", "value"])
    out["share"] = out["value"] / total if total else np.nan
    return out


def _decomposition(panel: Panel, units: Units, keys) -> pd.DataFrame:
    """The GE splits by level through the decompositions' own tree (Shorrocks 1980), from
    integer codes 0..k-1 of every level, so no label is built or hashed per unit."""
    by = tuple(panel.levels)
    per_district = _level_labels(panel, by, units.regions.astype(str))
    level_codes, labels = [], []
    for names in [*per_district, units.regions.astype(str)]:
        codes, uniques = pd.factorize(names, sort=True)
        level_codes.append(codes[units.code])
        labels.append(np.asarray(uniques, dtype=object))
    root = np.zeros(units.code.size, dtype=np.int64)
    frames = []
    for key in keys:
        alpha = parse_ge_alpha(key)
        _check_arrays(units.income, units.weight, alpha)
        tree = _ge_tree(units.income, units.weight, root, level_codes, alpha)
        frames.append(_split_rows(tree, [*by, "region"], labels).assign(index=key))
    return pd.concat(frames, ignore_index=True)


def _decomposition_table(panel, before, after, keys) -> tuple[pd.DataFrame, list[str]]:
    try:
        a = _decomposition(panel, before, keys)
        b = _decomposition(panel, after, keys)
    except DataError as error:
        reason = "; ".join(p.message for p in error.problems)
        return pd.DataFrame(
            columns=["index", "level", "group", "component", "before", "after", "change"]
        ), [f"no decomposition: {reason}"]
    on = ["index", "level", "group", "component"]
    out = _joined(a.drop(columns="share"), b.drop(columns="share"), on)
    where = pd.MultiIndex.from_frame(out[on])
    out["share_before"] = a.set_index(on)["share"].reindex(where).to_numpy()
    out["share_after"] = b.set_index(on)["share"].reindex(where).to_numpy()
    return out, []


def _budget_table(budgets: list[Budget], regions: np.ndarray) -> pd.DataFrame:
    columns = ["step", "kind", "region", "people", "money", "rate", "threshold"]
    frames = []
    for b in budgets:
        frame = pd.DataFrame(
            {
                "step": b.step + 1,
                "kind": b.kind,
                "region": [*regions.tolist(), PROVINCE],
                "people": [*b.people.tolist(), float(b.people.sum())],
                "money": [*b.money.tolist(), float(b.money.sum())],
                "rate": b.rate,
                "threshold": b.threshold,
            }
        )
        frames.append(frame)
    if not frames:
        return pd.DataFrame(columns=columns)
    return pd.concat(frames, ignore_index=True)[columns]


def _gain_table(before: _Sorted, after: _Sorted) -> pd.DataFrame:
    q = [growth.weighted_quantiles(s.whole, PERCENTILES)[0] for s in (before, after)]
    with np.errstate(divide="ignore", invalid="ignore"):
        rate = np.where(q[0] > 0, q[1] / q[0] - 1.0, np.nan)
    return pd.DataFrame(
        {
            "percentile": np.round(PERCENTILES * 100).astype(int),
            "before": q[0],
            "after": q[1],
            "change": q[1] - q[0],
            "growth": rate,
        }
    )


# ----------------------------------------------------------------------------- public


def apply(
    panel: Panel,
    scenario: Scenario,
    year: int | None = None,
    line: Any = "60%median",
    method: str = "auto",
    index_keys=indices.DEFAULT_INDICES,
    decomposed=DECOMPOSED,
) -> ScenarioResult:
    """Apply a scenario to one year of a panel and tabulate every figure before and after.

    Parameters
    ----------
    panel : Panel
        Unit records (used directly) or bracket shares with populations and means (rebuilt
        as pseudo-units from the Lorenz fit ``method``). Means and published figures are
        refused: they carry no distribution inside districts.
    scenario : Scenario
    year : int, optional
        The year changed; the latest by default.
    line : str, float or PovertyLine
        The poverty line (``12000``, ``60%median``); a relative line is resolved on the
        incomes before the scenario and then held fixed, so poverty changes are the
        scenario's, not the line's.
    method : str
        Lorenz method for grouped shares.
    index_keys : sequence of str
        Indices of the before and after tables (every default index).
    decomposed : sequence of str
        GE indices split by level (Theil T and the MLD).

    Returns
    -------
    ScenarioResult

    Raises
    ------
    explorer.data.model.DataError
        For a panel without distributions, a missing year, a grouped panel without
        populations, districts a step names that the year does not have, or a balanced
        levy that cannot pay for the transfers.

    References
    ----------
    Shorrocks, A. F. (1980). The class of additively decomposable inequality measures.
    *Econometrica* 48: 613-625 (the decomposition).
    Ravallion, M. and Chen, S. (2003). Measuring pro-poor growth. *Economics Letters* 78:
    93-99 (the gain by percentile, after the growth incidence curve).
    """
    if not isinstance(scenario, Scenario):
        raise fail("apply needs a Scenario.", "Read one with Scenario.from_dict.")
    year = _year(panel, year)
    line = line if isinstance(line, poverty_lines.PovertyLine) else poverty_lines.parse_line(line)
    keys = tuple(index_keys)
    units, approximation, dropped = _units(panel, year, method)
    changed, budgets = run(units, scenario.steps)
    before, after = _Sorted.of(units), _Sorted.of(changed)
    z, z_province = _line_amounts(line, before)
    decomposition, problems = _decomposition_table(panel, units, changed, tuple(decomposed))
    notes = [n for n in (approximation,) if n]
    notes.append(f"poverty line {line.label()}, resolved on the incomes before and held fixed")
    notes += problems
    if panel.kind == "units" and np.all(units.weight == 1.0):
        notes.append("the records carry no weights: people and money count records, not people")
    notes += [f"left out: district {r.region}: {r.reason}" for r in dropped.itertuples()]
    notes.append(CAUTION)
    return ScenarioResult(
        scenario=scenario,
        year=year,
        indices=_joined(_index_table(before, keys), _index_table(after, keys), ["region", "index"]),
        poverty=_poverty(before, after, z, z_province),
        decomposition=decomposition,
        budget=_budget_table(budgets, units.regions),
        gain=_gain_table(before, after),
        notes=tuple(notes),
        approximation=approximation,
    )
