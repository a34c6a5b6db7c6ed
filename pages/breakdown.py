"""Breakdown: how much of the province's inequality lies within and between groups."""

import streamlit as st

from explorer import charts, ui
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

parts = here.breakdown(levels, index)
by_level = layout.per_level(parts)
chart = charts.components(
    by_level,
    index=index,
    caption=layout.caption(view, panel).replace(f", {view.year}", "")
    + " Bar height = the province's total.",
)
st.altair_chart(layout.fit_facets(chart, panels=by_level["level"].nunique()), key="breakdown_chart")

shares = layout.share_table(by_level, view.year)
st.markdown(f"**{view.year}: share of the province's {ui.index_label(index)}**")
columns = st.columns(max(len(shares), 1))
for column, row in zip(columns, shares.itertuples(index=False), strict=False):
    column.metric(
        f"{row.component} ({row.level})",
        f"{row.share:.1%}",
        help=f"{row.value:.4f} of the province's {ui.index_label(index)}",
    )
ui.table(by_level[by_level["year"] == view.year], "breakdown_table")
with st.expander("The full split, group by group"):
    ui.table(parts[parts["year"] == view.year], "breakdown_detail")
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
    bars = charts.change_bars(terms)
    st.altair_chart(bars, key="change_chart")
    ui.table(terms, "change_table")
    ui.downloads(
        f"change-{change_index}-{view.year_from}-{view.year_to}",
        key="change",
        table=terms,
        chart=bars,
    )
ui.cautions(panel, ranking=False)
