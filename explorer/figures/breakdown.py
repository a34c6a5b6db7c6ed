"""The Breakdown page's figures: the within/between split by year and the change split."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import altair as alt
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
    #: The chart as the page shows it: parts and groups in planner words, panels fitted.
    shown_chart: Any = None
    #: Why the split index is not the view's own (empty when it is).
    instead: str = ""

    def share_metrics(self) -> tuple[tuple[str, str, str], ...]:
        """(part, share of the total, help) of each part in the view's year, as metrics."""
        label = vocabulary.index_label(self.index)
        rows = self.shares.assign(share=vocabulary.tidy_zero(self.shares["share"]))
        return tuple(
            (
                vocabulary.part_label(row.component, row.level),
                f"{float(row.share):.1%}",
                f"{vocabulary.figure(row.value, digits=4)} of the province's {label}",
            )
            for row in rows.itertuples(index=False)
        )


@dataclass(frozen=True)
class ChangeFigures:
    """The change of an index between two years split into its terms."""

    index: str
    terms: pd.DataFrame
    chart: Any
    notice: str
    note: str
    #: Term key -> planner words, naming the groups when there is one level of them.
    term_words: dict[str, str]
    shown_chart: Any = None

    def term_help(self) -> str:
        """The sentence under the change chart: what each term means."""
        return (
            "Terms of the change (Mookherjee & Shorrocks 1982): "
            + "; ".join(
                f"**{words}**: {vocabulary.CHANGE_TERM_HELP[key]}"
                for key, words in self.term_words.items()
                if key in vocabulary.CHANGE_TERM_HELP
            )
            + "."
        )


def _splits(index: str) -> bool:
    return index in vocabulary.DECOMPOSABLE or index.startswith("ge_")


def split_index(view: ViewState) -> tuple[str, str]:
    """The index the Breakdown splits, and a sentence when it is not the view's own.

    The view's index is split when it decomposes exactly (the generalised entropy family,
    Shorrocks 1980; the Gini with its overlap, Dagum 1997); otherwise the view's
    ``decomposition_index`` (Theil T if that cannot split either), and the sentence says so.
    """
    if _splits(view.index):
        return view.index, ""
    used = view.decomposition_index if _splits(view.decomposition_index) else "theil_t"
    return used, (
        f"{vocabulary.index_label(view.index)} does not split exactly into parts within "
        f"and between groups, so this page splits {vocabulary.index_label(used)} instead."
    )


def breakdown(panel: Panel, view: ViewState, compute: Compute) -> BreakdownFigures:
    """The within/between split of the view's index (see :func:`split_index`)."""
    index, instead = split_index(view)
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
        + (
            " → ".join(vocabulary.groups_word(g) for g in [*levels, "region"])
            if levels
            else "districts"
        )
        + (
            "; the Gini's overlap part after Dagum (1997)."
            if index == "gini"
            else "; exact additive split (Shorrocks 1980)."
        )
    )
    shares = share_table(by_level, view.year)
    shown = charts.relabel_chart(chart, "component", vocabulary.PART_WORDS)
    shown = charts.relabel_chart(
        shown,
        "groups",
        {g: vocabulary.groups_word(g).capitalize() for g in (*levels, "district", "districts")},
    )
    shown = charts.fit_facets(shown, panels=by_level["level"].nunique())
    return BreakdownFigures(index, levels, parts, by_level, shares, chart, note, shown, instead)


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
    term_words = {
        key: vocabulary.part_label(key, inner[0] if len(inner) == 1 else "")
        for key in dict.fromkeys(terms["component"])
    }
    term_words["total"] = "Total change"
    bars = charts.change_bars(folded)
    shown = charts.relabel_chart(bars, "component", term_words)
    try:
        shown.encoding.y.axis = alt.Axis(labelLimit=320)
    except AttributeError:
        pass
    return ChangeFigures(chosen, terms, bars, notice, note, term_words, shown)
