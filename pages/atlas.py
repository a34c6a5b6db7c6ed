"""Atlas: the districts coloured by the chosen index, year and Lorenz method."""

import dataclasses

import pandas as pd
import streamlit as st

from explorer import ui
from explorer.present import charts
from explorer.ui import layout

here = ui.here()
view, panel = here.view, here.panel
st.title("Atlas")
st.caption(layout.describe_view(view, panel))

if panel.kind == "means":
    st.info(
        "This dataset has one mean income per district, so there is no inequality inside "
        "districts to map. The map shows district mean incomes; the Breakdown page splits "
        "the inequality between districts into counties."
    )

left, middle, right = st.columns([2, 1, 1])
with left:
    layer = st.segmented_control(
        "Map layer",
        ["Index", "Local clusters"],
        default="Index",
        key="atlas_layer",
        help="Local clusters: districts that resemble their neighbours (local Moran).",
    )
with middle:
    ui.control(
        "classes",
        st.selectbox,
        "Colour classes",
        list(layout.CLASS_LABELS),
        format_func=layout.CLASS_LABELS.get,
    )
with right:
    ui.control("k", st.slider, "Number of classes", min_value=3, max_value=9)
means_only = panel.kind == "means"
mark_wide = ui.control(
    layout.INTERVAL_FIELD,
    st.toggle,
    "Mark districts whose bounds are wide",
    help="Dashed outline where the range between lower and upper bound is more than "
    f"{layout.WIDE_SHARE:.0%} of the value: the figure is uncertain there."
    + (" District means have no bounds, so there is nothing to mark." if means_only else ""),
    disabled=means_only,
)
view = ui.current_view()

layer_table = layout.map_values(here, view)
if layer_table.empty:
    st.warning("No figures for this year and index. Choose another year or index.")
    st.stop()
missing = layout.why_missing(layer_table)
if missing:
    st.warning(missing)

classification = charts.classify(layer_table["value"], view.classes, view.k)
if means_only:
    # Incomes read best in whole currency units with thousands separators.
    edges = classification.edges
    money = tuple(f"{lo:,.0f} – {hi:,.0f}" for lo, hi in zip(edges[:-1], edges[1:], strict=True))
    if len(set(money)) == len(money) == classification.k:
        classification = dataclasses.replace(classification, labels=money)
layer_table["klass"] = classification.assign(layer_table["value"])
if not mark_wide:
    layer_table["wide"] = False
value_label = layout.value_label(view, panel)

if panel.boundaries is None:
    st.info("This dataset has no boundary file, so the districts are listed instead of mapped.")
    features = None
else:
    features = here.map_features(
        layer_table[["region", "value", "lower", "upper", "klass", "wide"]]
    )

if features is not None and layer == "Local clusters":
    series = layer_table.set_index("region")["value"]
    with st.spinner("Testing for clusters with 499 random permutations…"):
        local, overall = here.clusters(series)
    layout.moran_summary(overall)
    chart = charts.clusters_map(
        layout.with_property(features, local, "cluster"),
        title=f"Local clusters of {value_label}, {view.year}",
        caption=layout.wrap(
            layout.caption(view, panel)
            + " Local Moran (Anselin 1995), queen contiguity, 499 permutations, 5 % level."
            " High-high: a high value among high neighbours; low-low: low among low; "
            "high-low and low-high: a district unlike its neighbours."
        ),
        selected=view.districts,
    )
elif features is not None:
    chart = here.choropleth(
        layer_table[["region", "value", "lower", "upper", "klass", "wide"]],
        value_label=value_label,
        classes=classification.labels,
        title=f"{value_label}, {view.year}",
        caption=layout.wrap(
            layout.caption(view, panel)
            + (
                " Dashed outline: bounds wider than "
                f"{layout.WIDE_SHARE:.0%} of the value (the figure is uncertain there)."
                if mark_wide and not means_only
                else ""
            )
        ),
        selected=view.districts,
    )
else:
    chart = None

if chart is not None:
    event = st.vega_lite_chart(chart.to_dict(), on_select="rerun", key="atlas_map")
    clicked = layout.picked_region(event)
    if clicked:
        ui.update(districts=(clicked,), page="district")
        st.switch_page(layout.page_path("district"))
    st.caption("Click a district to open its District sheet.")

ranked = layout.ranking(layer_table)
if len(ranked):
    top, bottom, middle_value = st.columns(3)
    top.metric(
        f"Highest: {ranked['name'].iloc[0]}",
        layout.figure(ranked["value"].iloc[0], money=means_only),
    )
    bottom.metric(
        f"Lowest: {ranked['name'].iloc[-1]}",
        layout.figure(ranked["value"].iloc[-1], money=means_only),
    )
    middle_value.metric(
        "Median of districts", layout.figure(ranked["value"].median(), money=means_only)
    )

wide_count = int(layer_table["wide"].sum()) if mark_wide else int(layout.wide(layer_table).sum())
ui.cautions(panel, ranking=True, wide_intervals=wide_count)

ranking_title = (
    "Districts ranked (1 = highest mean income)"
    if means_only
    else "Districts ranked (1 = most unequal)"
)
with st.expander(ranking_title, expanded=False):
    st.caption(
        "Neighbouring ranks often differ by little: read a rank with the figures beside it, "
        "not as a verdict."
        if means_only
        else "Neighbouring ranks often differ by less than the bounds: read a rank with its "
        "bounds, not as a verdict."
    )
    ranked_rows = ranked[
        ["rank", "name", "region", "county", "value", "lower", "upper", "klass"]
    ].rename(columns=layout.COLUMN_LABELS)
    value_format = "%,.0f" if means_only else "%.4f"
    shown_ranked, options = layout.planner_table(
        ranked_rows,
        {
            **{label: label for label in ranked_rows.columns},
            "Value": "Mean income" if means_only else value_label,
        },
        formats={"Value": value_format, "Lower bound": value_format, "Upper bound": value_format},
    )
    if means_only:
        options["column_order"] = [
            c for c in options["column_order"] if c not in ("Lower bound", "Upper bound")
        ]
    ui.table(shown_ranked, "atlas_ranking", **options)
ui.downloads(
    f"atlas-{'mean-income' if means_only else view.index}-{view.year}",
    key="atlas",
    table=pd.DataFrame(ranked),
    chart=chart,
    features=features,
)
