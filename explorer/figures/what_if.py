"""The What-if page's figures: a scenario of the view applied to its year, before and after.

The page builds a scenario of two steps a planner drafting a proposal tries first: a
transfer (a flat amount per person, or a top-up to a line) to the bottom deciles or to the
people below a share of the province median, in chosen districts or everywhere; and,
optionally, a levy on the top decile that pays for it exactly (balanced budget). Any
scenario a view file carries (growth, population moves, several steps) is shown as well;
the page's controls then rewrite only the first transfer and the levy.

References
----------
Pigou, A. C. (1912) and Dalton, H. (1920): a transfer from richer to poorer lowers every
Lorenz-consistent index (the principle of transfers; Atkinson 1970).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from explorer.data.model import DataError, Panel
from explorer.figures.compute import Compute
from explorer.figures.tables import names
from explorer.present import charts, vocabulary
from explorer.views import ViewState, canonical_scenario

__all__ = ["DEFAULT_SCENARIO", "Draft", "WhatIfFigures", "draft_of", "scenario_of", "what_if"]

#: The scenario the page starts from: 500 a year to each person of the bottom two deciles,
#: paid for by a levy on the top decile.
DEFAULT_SCENARIO = {
    "rift_scenario": 1,
    "name": "",
    "steps": [
        {"kind": "transfer", "bottom_deciles": 2, "amount": 500.0, "districts": []},
        {"kind": "levy", "top_deciles": 1, "balance": True, "districts": []},
    ],
}
#: Indices the page sets side by side (the full table is in the download).
SHOWN_INDICES = ("gini", "theil_t", "mld", "palma", "top10_share", "bottom40_share")


@dataclass(frozen=True)
class Draft:
    """The page's controls as values: who receives, how much, where, and the levy."""

    to: str = "deciles"  # "deciles" or "median"
    deciles: int = 2
    share: float = 0.6
    amount: float = 500.0
    top_up: bool = False
    districts: tuple[str, ...] = ()
    levy: bool = True


def draft_of(text: str) -> Draft:
    """The controls' values read from a view's scenario (the defaults where it has none)."""
    from explorer.stats.scenario import Levy, Scenario, Transfer

    if not text:
        return Draft()
    found = Scenario.from_json(text)
    transfer = next((s for s in found.steps if isinstance(s, Transfer)), None)
    levy = next((s for s in found.steps if isinstance(s, Levy)), None)
    if transfer is None:
        return Draft(levy=levy is not None)
    body = transfer.to_dict()
    return Draft(
        to="median" if body.get("below_median_share") is not None else "deciles",
        deciles=int(body.get("bottom_deciles") or 2),
        share=float(body.get("below_median_share") or 0.6),
        amount=float(body.get("amount") or Draft.amount),
        top_up=bool(body.get("top_up", False)),
        districts=tuple(body.get("districts") or ()),
        levy=levy is not None and bool(levy.to_dict().get("balance", False)),
    )


def scenario_of(draft: Draft) -> str:
    """The compact scenario text of a draft (what the view and the link carry)."""
    from explorer.stats.scenario import Scenario

    transfer: dict[str, Any] = {"kind": "transfer", "districts": list(draft.districts)}
    if draft.to == "median":
        transfer["below_median_share"] = float(draft.share)
    else:
        transfer["bottom_deciles"] = int(draft.deciles)
    if draft.top_up and draft.to == "median":
        transfer["top_up"] = True
    else:
        transfer["amount"] = float(draft.amount)
    steps = [transfer]
    if draft.levy:
        steps.append({"kind": "levy", "top_deciles": 1, "balance": True, "districts": []})
    return canonical_scenario(Scenario.from_dict({"rift_scenario": 1, "steps": steps}))


@dataclass(frozen=True)
class WhatIfFigures:
    """Everything the What-if page shows (``notice`` says why there is nothing)."""

    notice: str = ""
    indices: pd.DataFrame | None = None
    poverty: pd.DataFrame | None = None
    shares: pd.DataFrame | None = None
    budget: tuple[tuple[str, str], ...] = ()
    gain_chart: Any = None
    change_map: Any = None
    notes: tuple[str, ...] = ()
    result: Any = None


def _side(table: pd.DataFrame, keys, label) -> pd.DataFrame:
    rows = table[(table["region"] == "(all)") & table["index"].isin(keys)].copy()
    rows["figure"] = [label(k) for k in rows["index"]]
    rows["order"] = rows["index"].map({k: i for i, k in enumerate(keys)})
    return rows.sort_values("order")[["index", "figure", "before", "after", "change"]]


def what_if(panel: Panel, view: ViewState, compute: Compute) -> WhatIfFigures:
    """The view's scenario applied to its year (see the module docstring)."""
    if panel.kind not in ("brackets", "units"):
        return WhatIfFigures(
            notice="A scenario changes incomes inside districts: it needs income shares with "
            "district means and populations, or household records. District means and "
            "published figures do not carry the distribution it works on."
        )
    text, left_out = _in_year(
        panel, int(view.year), view.scenario or canonical_scenario(_default())
    )
    if text is None:
        return WhatIfFigures(notice=left_out)
    try:
        result = compute.scenario(text, int(view.year), view.poverty_line, view.method)
    except DataError as error:
        return WhatIfFigures(
            notice=" ".join(f"{p.message} {p.fix}".strip() for p in error.problems)
        )
    indices = _side(result.indices, SHOWN_INDICES, vocabulary.index_label)
    poverty = _side(result.poverty, ("fgt_0", "fgt_1", "fgt_2", "watts"), vocabulary.index_label)
    shares = result.decomposition
    shares = shares[(shares["group"] == "(all)") & shares["component"].isin(("within", "between"))]
    total = result.budget[result.budget["region"] == "(all)"]
    budget = []
    # steps numbered as the planner counts them, first step 1
    number = {v: i + 1 for i, v in enumerate(sorted(total["step"].unique()))}
    total = total.assign(step=total["step"].map(number))
    for row in total.itertuples(index=False):
        what = "Cost of the transfer" if row.kind == "transfer" else "Revenue of the levy"
        text_rate = (
            f" (rate {100 * row.rate:.2f} %)"
            if row.kind == "levy" and np.isfinite(row.rate)
            else ""
        )
        budget.append(
            (
                f"{what}, step {int(row.step) + 1}{text_rate}",
                vocabulary.figure(row.money, money=True),
            )
        )
        budget.append(
            (f"People reached, step {int(row.step) + 1}", vocabulary.figure(row.people, money=True))
        )
    gain = result.gain.assign(
        p=result.gain["percentile"] / 100.0, rate=100.0 * result.gain["growth"]
    )
    gain_chart = charts.growth_incidence(
        gain[["p", "rate"]],
        mean_growth=float(100.0 * _mean_growth(result)),
        title=f"Who gains: change of income at each percentile of the province, {view.year}",
        caption=vocabulary.wrap(
            "Percent change of the income at each percentile of the province before and after "
            "the scenario (people are compared by rank, not followed). Dashed: change of the "
            "mean income. " + vocabulary.caption(view, panel),
            width=90,
        ),
    )
    return WhatIfFigures(
        indices=indices,
        poverty=poverty,
        shares=shares,
        budget=tuple(budget),
        gain_chart=gain_chart,
        change_map=_change_map(panel, view, compute, result),
        notes=tuple(n for n in (left_out, *result.notes) if n),
        result=result,
    )


def _in_year(panel: Panel, year: int, text: str) -> tuple[str | None, str]:
    """The scenario with the districts the year lacks taken out of its steps, and what was
    taken out (a step left with none of its districts reaches nobody and is dropped)."""
    import json

    from explorer.stats.scenario import Scenario

    present = set(panel.data.loc[panel.data["year"] == year, "region"].astype(str))
    body = json.loads(text)
    steps, gone = [], set()
    for step in body.get("steps", []):
        chosen = list(step.get("districts") or [])
        kept = [d for d in chosen if d in present]
        gone |= set(chosen) - set(kept)
        if chosen and not kept:
            continue
        steps.append({**step, "districts": kept} if "districts" in step else step)
    said = (
        f"Left out of the scenario in {year}: {', '.join(sorted(gone))} (no figures that year)."
        if gone
        else ""
    )
    if not steps:
        return None, said + " No step is left to apply; choose other districts."
    return canonical_scenario(Scenario.from_dict({**body, "steps": steps})), said


def _default():
    from explorer.stats.scenario import Scenario

    return Scenario.from_dict(DEFAULT_SCENARIO)


def _mean_growth(result) -> float:
    gain = result.gain
    before, after = gain["before"].to_numpy(float), gain["after"].to_numpy(float)
    return float(after.mean() / before.mean() - 1.0) if before.mean() > 0 else float("nan")


def _change_map(panel, view, compute, result):
    """The change of each district's Gini, mapped (None without boundaries)."""
    if panel.boundaries is None:
        return None
    rows = result.indices[
        (result.indices["index"] == "gini") & (result.indices["region"] != "(all)")
    ]
    if rows.empty:
        return None
    values = pd.DataFrame(
        {
            "region": rows["region"].astype(str).to_numpy(),
            "value": rows["change"].to_numpy(float),
            "lower": np.nan,
            "upper": np.nan,
            "wide": False,
        }
    )
    classes = charts.classify(values["value"], "quantiles", 5)
    values = values.assign(klass=classes.assign(values["value"]))
    named = names(panel).set_index("region")["name"]
    values = values.assign(name=values["region"].map(named))
    return compute.choropleth(
        values[["region", "value", "lower", "upper", "klass", "wide"]],
        value_label="Change of the Gini (after − before)",
        classes=list(classes.labels),
        title=f"Change of each district's Gini under the scenario, {view.year}",
        caption=vocabulary.wrap(
            "Negative: the district becomes more equal. " + vocabulary.caption(view, panel)
        ),
        selected=(),
    )
