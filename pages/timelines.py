"""Timelines: each district's index over the years, the province line, convergence."""

import streamlit as st

from explorer import figures, ui
from explorer.figures.tables import county_level, names
from explorer.present import vocabulary

opened = ui.open_view()
view, panel = opened.view, opened.panel
st.title("Timelines")
ui.caption(vocabulary.describe_view(view, panel).rsplit(" · ", 1)[0] + " · every year")

district_names = names(panel)
labels = dict(zip(district_names["region"], district_names["name"], strict=True))
left, right = st.columns([3, 1])
with left:
    ui.control(
        "districts",
        st.multiselect,
        "Districts to highlight",
        list(labels),
        format_func=lambda region: f"{labels.get(region, region)} ({region})",
        to_view=tuple,
        from_view=list,
        max_selections=8,
        placeholder="Choose up to 8 districts",
        help=vocabulary.FIND_HELP,
    )
if county_level(panel) is not None:  # no counties in the data: no control
    with right:
        ui.control("by_county", st.toggle, "One panel per county")
view = ui.current_view()

shown = ui.page_figure(figures.timelines, panel, view, opened.compute)
ui.chart(shown.chart, theme=None, width="content", key="timelines_chart")
if shown.highlighted is not None:
    ui.table(shown.highlighted, "timelines_table", hide_index=False)
ui.downloads(f"timelines-{view.index}", key="timelines", table=shown.series, chart=shown.chart)
for notice in shown.notices:
    ui.caption(notice)

st.subheader("Are the districts drawing together?")
trend = shown.convergence
if trend is None:
    st.caption(
        "Convergence compares district mean incomes over time; published figures carry "
        "none, so it is not shown."
    )
else:
    ui.chart(trend.chart, key="convergence_chart")
    st.markdown(trend.sentence)
    ui.downloads("convergence", key="convergence", table=trend.sigma, chart=trend.chart)
ui.cautions(panel, ranking=False)
