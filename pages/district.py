"""District sheet: one district's Lorenz curve, every index with its bounds, its rank."""

import streamlit as st

from explorer import charts, ui
from explorer.ui import layout
from explorer.ui.state import METHOD_LABELS

here = ui.here()
view, panel = here.view, here.panel
st.title("District sheet")

district_names = layout.names(panel)
labels = dict(zip(district_names["region"], district_names["name"], strict=True))
regions = list(labels)
if not view.districts:
    view = ui.update(districts=(regions[0],))
ui.control(
    "districts",
    st.selectbox,
    "District",
    regions,
    format_func=lambda region: f"{labels.get(region, region)} ({region})",
    to_view=lambda region: (region,),
    from_view=lambda chosen: chosen[0] if chosen else regions[0],
)
view = ui.current_view()
region = view.districts[0]
info = district_names[district_names["region"] == region].iloc[0]
st.markdown(
    f"**{info['name']}** ({region})"
    + (f" · {layout.county_level(panel).title()}: {info['county']}" if info["county"] else "")
    + f" · {view.year}"
)

if panel.kind == "means":
    st.info("District means only: no Lorenz curve or inequality inside the district.")
    means = ui.district_means(panel)
    own = means[means["region"].astype(str) == region]
    st.line_chart(own, x="year", y="mean_income", x_label="Year", y_label="Mean income")
    ui.table(own, "district_means")
else:
    table = here.indices()
    own = table[(table["region"].astype(str) == region) & (table["year"] == view.year)]
    left, right = st.columns(2)
    with left:
        points = layout.lorenz_points(panel, region, view.year)
        if panel.kind == "brackets":
            methods = [m for m in METHOD_LABELS if m != "auto"]
            curves = here.lorenz_curves(region, view.year, methods)
            band = layout.lorenz_band(curves)
            shown = curves[~curves["method"].isin(("linear", "upper"))]
        else:
            curves, band, shown = None, None, None
        profile = charts.lorenz_profile(
            points,
            shown,
            band,
            title=f"Lorenz curve, {info['name']}, {view.year}",
            caption=layout.caption(view, panel),
        )
        st.altair_chart(profile, key="district_lorenz")
    with right:
        strip = charts.interval_strip(own, region=region, year=view.year)
        st.altair_chart(layout.fit_facets(strip, panels=1, room=300), key="district_strip")

    gini = own[own["index"] == view.index]
    if len(gini):
        row = gini.iloc[0]
        metric_cols = st.columns(3)
        metric_cols[0].metric(ui.index_label(view.index), f"{row['value']:.3f}")
        metric_cols[1].metric("Lower bound", f"{row['lower']:.3f}")
        metric_cols[2].metric("Upper bound", f"{row['upper']:.3f}")
    st.markdown("**All indices**")
    ui.table(
        own[["index", "value", "lower", "upper", "method", "note"]].rename(
            columns=layout.COLUMN_LABELS
        ),
        "district_indices",
    )
    if panel.kind == "brackets":
        st.markdown("**How well each curve fits the published shares**")
        diagnostics = here.fits(tuple(METHOD_LABELS))
        mine = diagnostics[
            (diagnostics["region"].astype(str) == region) & (diagnostics["year"] == view.year)
        ]
        ui.table(mine, "district_fits")
    ranked = layout.ranks(table, view.index, panel)
    rank_chart = charts.rank_over_time(ranked, highlight=(region,))
    st.altair_chart(rank_chart, key="district_ranks")
    ui.downloads(f"district-{region}-{view.year}", key="district", table=own, chart=profile)
ui.cautions(panel, ranking=True)
