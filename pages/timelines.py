"""Timelines: each district's index over the years, the province line, convergence."""

import streamlit as st

from explorer import ui
from explorer.present import charts
from explorer.ui import layout, trends

here = ui.here()
view, panel = here.view, here.panel
st.title("Timelines")
st.caption(layout.describe_view(view, panel).rsplit(" · ", 1)[0] + " · every year")

district_names = layout.names(panel)
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
    )
with right:
    by_county = st.toggle(
        "One panel per county",
        key="timelines_by_county",
        disabled=layout.county_level(panel) is None,
    )
view = ui.current_view()

if panel.kind == "means":
    st.info(
        "District means only: there is no inequality inside districts to follow. Below: "
        "whether the district means draw together over time."
    )
else:
    series = trends.district_series(here, view.index)
    province = trends.province_series(here, view.index)
    chart = charts.trajectories(
        series,
        index=view.index,
        highlight=view.districts,
        province=province,
        by_county=by_county,
        title=f"{layout.value_label(view, panel)} by district over time",
        caption=layout.wrap(
            layout.caption(view, panel).replace(f", {view.year}", "")
            + (" Dashed black: the whole province." if province is not None else "")
        ),
    )
    st.altair_chart(chart, key="timelines_chart")
    if view.districts:
        shown = series[series["region"].isin(view.districts)]
        ui.table(
            shown.pivot_table(index="year", columns="name", values="value").round(4),
            "timelines_table",
            hide_index=False,
        )
    ui.downloads(f"timelines-{view.index}", key="timelines", table=series, chart=chart)
    if province is None:
        st.caption("No province line for this index: it is not computed for the pooled province.")

st.subheader("Are the districts drawing together?")
sigma, beta = trends.convergence(panel)
chart = charts.convergence(sigma, beta.as_chart())
st.altair_chart(chart, key="convergence_chart")
st.markdown(beta.sentence())
ui.downloads("convergence", key="convergence", table=sigma, chart=chart)
ui.cautions(panel, ranking=False)
