"""The Breakdown page's figures: the within/between split by year and the change split."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import altair as alt
import pandas as pd

from explorer.data.model import Panel
from explorer.figures.compute import Compute
from explorer.figures.tables import names, per_level, share_table
from explorer.present import charts, vocabulary
from explorer.views import ViewState

__all__ = [
    "CHANGE_INDICES",
    "BreakdownFigures",
    "ChangeFigures",
    "PovertySplit",
    "breakdown",
    "change",
    "poverty_split",
]

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


@dataclass(frozen=True)
class PovertySplit:
    """The province's poverty split additively over the groups of each level.

    ``table`` holds the view's year (``level, group, population_share, value,
    contribution, percent``, group names in words); ``notice`` says why there is none.
    """

    index: str
    table: pd.DataFrame | None
    chart: Any
    notice: str
    total: float = float("nan")


#: The poverty measure split when the view's own does not add up over groups.
_DEFAULT_POVERTY = "fgt_0"


def poverty_split(panel: Panel, view: ViewState, compute: Compute) -> PovertySplit | None:
    """Each county's and district's contribution to the province's poverty in the view's year
    (None for data that carry no poverty measure).

    FGT(α) and the Watts index of a population are population-weighted means of its parts'
    at one line, so the parts' contributions ``population share × measure`` add up to the
    province's exactly (Foster, Greer & Thorbecke 1984, *Econometrica* 52: 761–766).
    """
    from explorer.data.model import DataError
    from explorer.figures.series import POVERTY_FIGURES, figure_keys
    from explorer.stats import poverty_levels

    if panel.kind == "means":
        return PovertySplit(
            _DEFAULT_POVERTY,
            None,
            None,
            "Poverty cannot be measured from district means alone: how many people fall "
            "below a line depends on the spread of incomes inside each district, which "
            "means do not give. Load income shares or household records to measure it.",
        )
    if not set(POVERTY_FIGURES) & set(figure_keys(panel)):
        return None
    index = view.index if view.index in poverty_levels.DECOMPOSABLE else _DEFAULT_POVERTY
    table = compute.poverty(view.poverty_line, view.relative_to, view.method)
    try:
        split = poverty_levels.by_level(table, panel, index)
    except DataError as error:
        return PovertySplit(
            index, None, None, " ".join(f"{p.message}: {p.fix}." for p in error.problems)
        )
    rows = split[split["year"] == view.year]
    total = rows.loc[rows["level"] == "province", "value"]
    rows = rows[rows["level"] != "province"].copy()
    if rows.empty:
        return PovertySplit(index, None, None, f"No poverty figures for {view.year}.")
    words = {
        "district": "District",
        **{lv: vocabulary.groups_word(lv, plural=False).capitalize() for lv in panel.levels},
    }
    named = names(panel).set_index("region")["name"]
    districts = rows["level"] == "district"
    rows.loc[districts, "group"] = [
        f"{named.get(str(g), g)} ({g})" for g in rows.loc[districts, "group"]
    ]
    rows["level"] = rows["level"].map(lambda lv: words.get(lv, lv))
    # the outermost level first, then districts: a planner reads from the top down
    order = [words.get(lv, lv) for lv in (*panel.levels, "district")]
    rows["order"] = rows["level"].map({lv: i for i, lv in enumerate(order)})
    rows = rows.sort_values(["order", "contribution"], ascending=[True, False]).drop(
        columns="order"
    )
    top = rows[rows["level"] == order[0]]
    label = vocabulary.index_label(index)
    chart = (
        alt.Chart(top.assign(share=top["percent"] / 100.0))
        .mark_bar()
        .encode(
            y=alt.Y("group:N", sort="-x", title=order[0]),
            x=alt.X("share:Q", title=f"Share of the province's {label}", axis=alt.Axis(format="%")),
            tooltip=[
                alt.Tooltip("group:N", title=order[0]),
                alt.Tooltip("share:Q", title="Share of the province's poverty", format=".1%"),
                alt.Tooltip("population_share:Q", title="Share of the population", format=".1%"),
                alt.Tooltip("value:Q", title=label, format=".3f"),
            ],
        )
        .properties(
            title=alt.TitleParams(
                f"Where the province's {label[:1].lower() + label[1:]} lies, {view.year}",
                subtitle=vocabulary.wrap(
                    f"Line: {vocabulary.poverty_line_words(view)}. Each bar: population share × "
                    "the group's own measure, as a share of the province's; the bars add up to "
                    "100 %. A group with more than its population share of poverty is poorer "
                    "than the province.",
                    width=90,
                ),
            ),
            width=560,
        )
    )
    return PovertySplit(
        index,
        rows.reset_index(drop=True),
        chart,
        "",
        float(total.iloc[0]) if len(total) else float("nan"),
    )
