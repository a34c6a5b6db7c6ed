"""Atlas: the districts coloured by the chosen index, year and Lorenz method."""

import pandas as pd
import streamlit as st

from explorer import charts, ui
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
mark_wide = ui.control(
    layout.INTERVAL_FIELD,
    st.toggle,
    "Mark districts whose bounds are wide",
    help="Dashed outline where the range between lower and upper bound is more than "
    f"{layout.WIDE_SHARE:.0%} of the value: the figure is uncertain there.",
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
        caption=layout.caption(view, panel)
        + " Local Moran (Anselin 1995), queen contiguity, 499 permutations, 5 % level.",
        selected=view.districts,
    )
elif features is not None:
    chart = here.choropleth(
        layer_table[["region", "value", "lower", "upper", "klass", "wide"]],
        value_label=value_label,
        classes=classification.labels,
        title=f"{value_label}, {view.year}",
        caption=layout.caption(view, panel),
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
    top.metric(f"Highest: {ranked['name'].iloc[0]}", f"{ranked['value'].iloc[0]:.3f}")
    bottom.metric(f"Lowest: {ranked['name'].iloc[-1]}", f"{ranked['value'].iloc[-1]:.3f}")
    middle_value.metric("Median of districts", f"{ranked['value'].median():.3f}")

wide_count = int(layer_table["wide"].sum()) if mark_wide else int(layout.wide(layer_table).sum())
ui.cautions(panel, ranking=True, wide_intervals=wide_count)

with st.expander("Districts ranked (1 = most unequal)", expanded=False):
    ui.table(
        ranked[["rank", "name", "region", "county", "value", "lower", "upper", "klass"]].rename(
            columns=layout.COLUMN_LABELS
        ),
        "atlas_ranking",
    )
ui.downloads(
    f"atlas-{view.index}-{view.year}",
    key="atlas",
    table=pd.DataFrame(ranked),
    chart=chart,
    features=features,
)
