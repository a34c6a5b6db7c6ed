"""The Breakdown page's figures: the within/between split by year and the change split."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import pandas as pd

from explorer.data.model import Panel
from explorer.figures.compute import Compute
from explorer.figures.tables import per_level, share_table
from explorer.present import charts, vocabulary
from explorer.views import ViewState

__all__ = ["CHANGE_INDICES", "BreakdownFigures", "ChangeFigures", "breakdown", "change"]

#: Indices whose change between two years splits into terms (Mookherjee & Shorrocks 1982).
CHANGE_INDICES = ("mld", "theil_t")


@dataclass(frozen=True)
class BreakdownFigures:
    """The split of the province's index by level, for every year, and its chart."""

    index: str
    levels: tuple[str, ...]
    parts: pd.DataFrame
    by_level: pd.DataFrame
    shares: pd.DataFrame
    chart: Any
    note: str


@dataclass(frozen=True)
class ChangeFigures:
    """The change of an index between two years split into its terms."""

    index: str
    terms: pd.DataFrame
    chart: Any
    notice: str
    note: str


def breakdown(panel: Panel, view: ViewState, compute: Compute) -> BreakdownFigures:
    """The within/between split of the view's Breakdown index (Theil T if it cannot split)."""
    index = view.decomposition_index
    if index not in vocabulary.DECOMPOSABLE and not index.startswith("ge_"):
        index = "theil_t"
    levels = tuple(panel.levels)
    parts = compute.breakdown(levels, index, view.method)
    by_level = per_level(parts)
    chart = charts.components(
        by_level,
        index=index,
        caption=vocabulary.wrap(
            vocabulary.caption(view, panel, every_year=True)
            + " Bar height = the province's total. Within: inequality inside the groups; "
            "between: differences of the groups' mean incomes"
            + ("; overlap: incomes of groups that overlap." if index == "gini" else ".")
        ),
    )
    note = (
        f"Breakdown of {vocabulary.index_label(index)} over "
        + (" → ".join([*levels, "district"]) if levels else "districts")
        + (
            "; the Gini's overlap part after Dagum (1997)."
            if index == "gini"
            else "; exact additive split (Shorrocks 1980)."
        )
    )
    shares = share_table(by_level, view.year)
    return BreakdownFigures(index, levels, parts, by_level, shares, chart, note)


def change(panel: Panel, view: ViewState, compute: Compute, index: str) -> ChangeFigures | None:
    """The change split between the view's two years, or None if they do not run forward."""
    if view.year_from is None or view.year_to is None or view.year_from >= view.year_to:
        return None
    chosen = index if index in CHANGE_INDICES else "mld"
    notice = (
        ""
        if chosen == index
        else "The change is split for the mean log deviation (Mookherjee & Shorrocks 1982)."
    )
    levels = tuple(panel.levels)
    terms = compute.change(levels, chosen, view.year_from, view.year_to)
    inner = [lv for lv in dict.fromkeys(terms["level"]) if lv != "total"]
    # With one level of groups the total sits with its terms: one panel, not two.
    folded = terms.assign(level=inner[0]) if len(inner) == 1 else terms
    note = (
        f"Change of {vocabulary.index_label(chosen)} split after Mookherjee & Shorrocks "
        "(1982); the residual is the part the approximation leaves."
    )
    return ChangeFigures(chosen, terms, charts.change_bars(folded), notice, note)
