"""Breakdown: how much of the province's inequality lies within and between groups."""

import altair as alt
import pandas as pd
import streamlit as st

from explorer import ui
from explorer.present import charts
from explorer.ui import layout
from explorer.ui.state import DECOMPOSABLE

here = ui.here()
view, panel = here.view, here.panel
st.title("Breakdown")
st.caption(
    "The province's inequality split into differences between groups (their mean incomes) "
    "and inequality inside them, for every year."
)

left, right = st.columns(2)
with left:
    index = ui.control(
        layout.BREAKDOWN_FIELD,
        st.selectbox,
        "Index to split",
        list(DECOMPOSABLE),
        format_func=ui.index_label,
        help="Theil T, the mean log deviation and GE(2) split exactly into within and "
        "between parts; the Gini also has an overlap part (Dagum 1997).",
    )
levels = tuple(panel.levels)
with right:
    st.markdown(
        "**Groups:** "
        + (" → ".join([*levels, "district"]) if levels else "districts (no higher level found)")
    )
view = ui.current_view()
PART_WORDS = {
    "within": "Within groups",
    "between": "Between groups",
    "overlap": "Overlap of groups (Gini)",
}

parts = here.breakdown(levels, index)
by_level = layout.per_level(parts)
chart = charts.components(
    by_level,
    index=index,
    caption=layout.wrap(
        layout.caption(view, panel).replace(f", {view.year}", "")
        + " Bar height = the province's total. Within: inequality inside the groups; between: "
        "differences of the groups' mean incomes"
        + ("; overlap: incomes of groups that overlap." if index == "gini" else ".")
    ),
)
shown_chart = layout.relabel_chart(chart, "component", PART_WORDS)
shown_chart = layout.relabel_chart(
    shown_chart,
    "groups",
    {g: layout.groups_word(g).capitalize() for g in (*levels, "district", "districts")},
)
st.altair_chart(
    layout.fit_facets(shown_chart, panels=by_level["level"].nunique()), key="breakdown_chart"
)

shares = layout.share_table(by_level, view.year)
st.markdown(f"**{view.year}: share of the province's {ui.index_label(index)}**")
columns = st.columns(max(len(shares), 1))
for column, row in zip(columns, shares.itertuples(index=False), strict=False):
    column.metric(
        layout.part_label(row.component, row.level),
        f"{float(layout.tidy_zero(pd.Series([row.share])).iloc[0]):.1%}",
        help=f"{layout.figure(row.value, digits=4)} of the province's {ui.index_label(index)}",
    )
PART_TABLE = {
    "year": "Year",
    "level": "Groups",
    "group": "Group",
    "component": "Part",
    "value": "Value",
    "share": "Share of the total",
}
PART_TEXT = {
    "level": lambda row: layout.groups_word(row["level"]).capitalize(),
    "group": lambda row: "All" if row["group"] == "(all)" else row["group"],
    "component": lambda row: layout.part_label(row["component"], row["level"]),
}


def part_table(frame: pd.DataFrame, key: str) -> None:
    """A decomposition table with planner words (its data keep the keys)."""
    tidy = frame.assign(
        value=layout.tidy_zero(frame["value"]), share=layout.tidy_zero(frame["share"])
    )
    shown, options = layout.planner_table(
        tidy, PART_TABLE, words=PART_TEXT, formats={"share": "percent"}
    )
    ui.table(shown, key, **options)


part_table(by_level[by_level["year"] == view.year], "breakdown_table")
with st.expander("The full split, group by group"):
    part_table(parts[parts["year"] == view.year], "breakdown_detail")
ui.downloads(f"breakdown-{index}", key="breakdown", table=parts, chart=chart)

st.subheader("What changed between two years")
years = [int(y) for y in panel.years]
first, second = st.columns(2)
with first:
    ui.control("year_from", st.selectbox, "From", years)
with second:
    ui.control("year_to", st.selectbox, "To", years)
view = ui.current_view()
if view.year_from >= view.year_to:
    st.info("Choose a 'From' year before the 'To' year to see what drove the change.")
else:
    change_index = index if index in ("mld", "theil_t") else "mld"
    if change_index != index:
        st.caption("The change is split for the mean log deviation (Mookherjee & Shorrocks 1982).")
    terms = here.change(levels, change_index, view.year_from, view.year_to)
    inner = [lv for lv in dict.fromkeys(terms["level"]) if lv != "total"]
    # With one level of groups the total sits with its terms: one panel, not two.
    folded = terms.assign(level=inner[0]) if len(inner) == 1 else terms
    bars = charts.change_bars(folded)
    term_words = {
        key: layout.part_label(key, inner[0] if len(inner) == 1 else "")
        for key in dict.fromkeys(terms["component"])
    }
    term_words["total"] = "Total change"
    shown_bars = layout.relabel_chart(bars, "component", term_words)
    try:
        shown_bars.encoding.y.axis = alt.Axis(labelLimit=320)
    except AttributeError:
        pass
    st.altair_chart(shown_bars, key="change_chart")
    st.caption(
        "Terms of the change (Mookherjee & Shorrocks 1982): "
        + "; ".join(
            f"**{term_words[key]}**: {layout.CHANGE_TERM_HELP[key]}"
            for key in term_words
            if key in layout.CHANGE_TERM_HELP
        )
        + "."
    )
    shown_terms, options = layout.planner_table(
        terms.assign(
            value=layout.tidy_zero(terms["value"]), share=layout.tidy_zero(terms["share"])
        ),
        {**PART_TABLE, "year": "Years", "component": "Term", "share": "Share of the change"},
        words=PART_TEXT,
        formats={"share": "percent"},
    )
    ui.table(shown_terms, "change_table", **options)
    ui.downloads(
        f"change-{change_index}-{view.year_from}-{view.year_to}",
        key="change",
        table=terms,
        chart=bars,
    )
ui.cautions(panel, ranking=False)
