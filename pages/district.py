"""District sheet: one district's Lorenz curve, every index with its bounds, its rank."""

import altair as alt
import numpy as np
import streamlit as st

from explorer import ui
from explorer.present import charts
from explorer.ui import layout
from explorer.ui.state import METHOD_LABELS


def method_word(key: str) -> str:
    """How a figure was made, in words (a Lorenz curve, or the records themselves)."""
    return {"units": "From the household records", "means": "From district means"}.get(
        key, ui.method_label(key)
    )


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
    means_chart = (
        alt.Chart(own.assign(year=own["year"].astype(int)))
        .mark_line(point=True)
        .encode(
            x=alt.X("year:O", title="Year"),
            y=alt.Y(
                "mean_income:Q", title="Mean income (currency units)", axis=alt.Axis(format=",.0f")
            ),
            tooltip=[
                alt.Tooltip("year:O", title="Year"),
                alt.Tooltip("mean_income:Q", title="Mean income", format=",.0f"),
            ],
        )
        .properties(
            title=alt.TitleParams(
                f"Mean income, {info['name']}", subtitle=layout.wrap(layout.caption(view, panel))
            ),
            height=320,
        )
    )
    st.altair_chart(means_chart, key="district_means_chart")
    shown_means, options = layout.planner_table(
        own,
        {"year": "Year", "mean_income": "Mean income", "population": "Population"},
        formats={"mean_income": "%,.0f", "population": "%,.0f"},
    )
    ui.table(shown_means, "district_means", **options)
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
            shown = shown.assign(method=shown["method"].map(ui.method_label))
            how = (
                "Dots: the published shares; lines: each curve rebuilt from them; grey band: "
                "every curve consistent with the shares lies inside it."
            )
        else:
            curves, band, shown = None, None, None
            how = "Every household, poorest first; dashed: complete equality."
        profile = charts.lorenz_profile(
            points,
            shown,
            band,
            title=f"Lorenz curve, {info['name']}, {view.year}",
            caption=layout.wrap(f"{how} {layout.caption(view, panel)}", width=70),
        )
        # Below the curve the method names have room; beside it they squeeze the curve.
        profile = profile.configure_legend(orient="bottom", columns=2, labelLimit=260)
        # Vega's own theme: Streamlit's squeezes a square chart whose title and legend take room.
        st.altair_chart(profile, theme=None, width="content", key="district_lorenz")
    with right:
        headline = own[own["index"] == view.index]
        if len(headline):
            row = headline.iloc[0]
            bounded = bool(np.isfinite(row["lower"]) or np.isfinite(row["upper"]))
            no_bound = (
                "Turn on 'Sampling intervals' in the sidebar for an interval."
                if panel.kind == "units"
                else "No bound for this index."
            )
            st.metric(ui.index_label(view.index), layout.figure(row["value"]))
            low, high = st.columns(2)
            low.metric(
                "Lower bound" if panel.kind == "brackets" else "Interval from",
                layout.figure(row["lower"]),
                help=None if bounded else no_bound,
            )
            high.metric(
                "Upper bound" if panel.kind == "brackets" else "Interval to",
                layout.figure(row["upper"]),
                help=None if bounded else no_bound,
            )
            if not bounded:
                st.caption(no_bound)

    # One short word per row: the full method is named in the caption and the table.
    strip_rows = own.assign(
        method=own["method"].map(lambda key: {"units": "records"}.get(key, "curve"))
    )
    strip = charts.interval_strip(
        strip_rows, title=f"Every index of {info['name']}, {view.year}, with its bounds"
    )
    if np.isfinite(own[["lower", "upper"]].to_numpy(dtype=float)).any():
        st.altair_chart(layout.fit_facets(strip, panels=1, room=400), key="district_strip")
    else:  # dots without bars would say nothing the table below does not
        st.caption(
            "No bounds or intervals to draw for this district-year"
            + (
                ": turn on 'Sampling intervals' in the sidebar to see how far each "
                "figure could move with another sample."
                if panel.kind == "units"
                else "."
            )
        )

    st.markdown("**All indices**")
    index_rows = own[["index", "value", "lower", "upper", "method", "note"]].rename(
        columns=layout.COLUMN_LABELS
    )
    shown_indices, options = layout.planner_table(
        index_rows,
        {
            "Index": "Index",
            "Value": "Value",
            "Lower bound": "Lower bound",
            "Upper bound": "Upper bound",
            "Method": "Curve or data",
            "Note": "Note",
        },
        words={
            "Index": lambda r: ui.index_label(r["Index"]),
            "Lower bound": lambda r: layout.bound_text(r["Lower bound"]),
            "Upper bound": lambda r: layout.bound_text(r["Upper bound"]),
            "Method": lambda r: method_word(r["Method"]),
        },
    )
    ui.table(shown_indices, "district_indices", **options)
    if panel.kind == "brackets":
        st.markdown("**How well each curve fits the published shares**")
        diagnostics = here.fits(tuple(METHOD_LABELS))
        mine = diagnostics[
            (diagnostics["region"].astype(str) == region) & (diagnostics["year"] == view.year)
        ]
        shown_fits, options = layout.planner_table(
            mine,
            {
                "method": "Curve asked for",
                "used": "Curve used",
                "valid": "Usable",
                "max_error": "Largest gap to a published point",
                "sse": "Sum of squared gaps",
                "reason": "Why not usable",
            },
            words={
                "method": lambda r: ui.method_label(r["method"]),
                "used": lambda r: ui.method_label(r["used"]),
                "valid": lambda r: "yes" if r["valid"] else "no",
            },
            formats={"max_error": "%.4f", "sse": "%.6f"},
        )
        ui.table(shown_fits, "district_fits", **options)
    ranked = layout.ranks(table, view.index, panel)
    rank_chart = charts.rank_over_time(ranked, highlight=(region,))
    st.altair_chart(rank_chart, key="district_ranks")
    ui.downloads(f"district-{region}-{view.year}", key="district", table=own, chart=profile)
ui.cautions(panel, ranking=True)
