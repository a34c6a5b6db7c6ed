"""Map: the districts coloured by the chosen index, year and Lorenz method."""

import pandas as pd
import streamlit as st

from explorer import figures, ui
from explorer.figures.atlas import RANK_COLUMNS
from explorer.figures.series import GROWTH_FIGURES
from explorer.present import vocabulary

opened = ui.open_view()
view, panel = opened.view, opened.panel
st.title(vocabulary.PAGES["map"].title)
ui.caption(vocabulary.describe_view(view, panel))

if panel.kind in vocabulary.KIND_NOTES:
    st.info(vocabulary.KIND_NOTES[panel.kind])

left, middle, right = st.columns([2, 1, 1])
with left:
    ui.control(
        "layer",
        st.segmented_control,
        "Map layer",
        list(vocabulary.LAYER_LABELS),
        format_func=vocabulary.LAYER_LABELS.get,
        # Clicking the chosen segment again clears it: that keeps the index layer.
        to_view=lambda chosen: chosen or "index",
        help=vocabulary.LAYER_HELP,
    )
# Colour classes apply to the index layer only; the clusters have their own four colours.
on_index = ui.current_view().layer == "index"
with middle:
    if on_index:
        ui.control(
            "classes",
            st.selectbox,
            "Colour classes",
            list(vocabulary.CLASS_LABELS),
            format_func=vocabulary.CLASS_LABELS.get,
            help=vocabulary.CLASS_HELP,
        )
with right:
    if on_index:
        ui.control("k", st.slider, "Number of classes", min_value=3, max_value=9)
bounded = panel.kind in ("brackets", "units")
if ui.current_view().index in ("mean_growth", *GROWTH_FIGURES) and len(panel.years) > 1:
    ui.control(
        "year_from",
        st.selectbox,
        "Growth since",
        [int(y) for y in panel.years[:-1]],
        help="The first year of the average yearly growth (also where Timelines starts).",
    )
if bounded and on_index:
    ui.control(
        "clear_ranks",
        st.toggle,
        "Only clear ranks",
        help="Show only the districts whose bounds allow one rank only; the others are "
        "greyed out. A rank is a position, not a measure of need.",
    )
view = ui.current_view()

shown = ui.page_figure(figures.atlas, panel, view, opened.compute)
# Means and published figures have no bounds, the clusters layer draws no outline, and an
# index without finite bounds (Theil T's upper) would be outlined everywhere.
if bounded and on_index and shown.finite_bounds:
    ui.control(
        vocabulary.INTERVAL_FIELD,
        st.toggle,
        "Mark districts whose bounds are wide",
        help="Dashed outline where the range between lower and upper bound is more than "
        f"{vocabulary.WIDE_SHARE:.0%} of the value: the figure is uncertain there.",
    )
elif bounded and on_index and panel.kind == "brackets":
    st.caption(
        "This index has no finite upper bound from the shares, so no district is outlined "
        "as uncertain: read it beside the Gini or the income shares, whose bounds are finite."
    )
if shown.empty:
    ui.notice(shown.notices[0], "warning")
    st.stop()
for notice in shown.notices:
    ui.notice(notice, "warning")
if shown.remark:
    ui.notice(shown.remark)

if shown.clusters is not None and shown.clusters.overall is not None:
    ui.moran_summary(shown.clusters.overall)

if shown.chart is not None:
    # the live spec stays the same between views: the browser swaps the map's data only
    event = ui.chart(shown.chart, on_select="rerun", key="atlas_map")
    clicked = ui.picked_region(event)
    if clicked:
        ui.update(districts=(clicked,), page="district")
        st.switch_page(ui.page_path("district"))
    st.caption("Click a district to open its District sheet.")

for column, (label, value) in zip(st.columns(3), shown.headline, strict=False):
    ui.metric(column, label, value)

ui.cautions(panel, ranking=True, wide_intervals=shown.wide_count)

with st.expander(shown.ranking_title, expanded=False):
    ui.caption(shown.ranking_caution)
    labels = dict(vocabulary.COLUMN_LABELS)
    if shown.moved_since is not None:
        labels |= {
            "rank_then": f"Rank in {shown.moved_since}",
            "move": f"Move since {shown.moved_since}",
        }
    ranked_rows = shown.ranking[RANK_COLUMNS].rename(columns=labels)
    value_format = vocabulary.table_format(panel, view.index)
    shown_ranked, options = ui.planner_table(
        ranked_rows,
        {**{label: label for label in ranked_rows.columns}, "Value": shown.value_label},
        formats={
            "Value": value_format,
            "Lower bound": value_format,
            "Upper bound": value_format,
            labels["rank_then"]: "%d",
        },
    )
    if not bounded or not shown.ranking["rank_range"].astype(bool).any():
        hidden = ("Lower bound", "Upper bound", "Possible ranks")
        options["column_order"] = [c for c in options["column_order"] if c not in hidden]
    if shown.moved_since is None:  # no earlier year to compare the ranks with
        hidden = (labels["rank_then"], labels["move"])
        options["column_order"] = [c for c in options["column_order"] if c not in hidden]
    ui.table(shown_ranked, "atlas_ranking", **options)
ui.downloads(
    f"atlas-{view.index.replace('_', '-')}-{view.year}",
    key="atlas",
    table=pd.DataFrame(shown.ranking),
    chart=shown.chart,
    features=shown.features,
)
