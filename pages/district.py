"""District sheet: one district's Lorenz curve, every index with its bounds, its rank."""

import numpy as np
import streamlit as st

from explorer import figures, ui
from explorer.figures.district import method_word
from explorer.figures.tables import names
from explorer.present import vocabulary

opened = ui.open_view()
view, panel = opened.view, opened.panel
st.title("District sheet")
ui.caption(vocabulary.describe_view(view, panel))

district_names = names(panel)
labels = dict(zip(district_names["region"], district_names["name"], strict=True))
regions = list(labels)
if not view.districts:
    view = ui.update(districts=(regions[0],))


def _with_first(region: str) -> tuple[str, ...]:
    """The chosen district first, the compared one kept unless it is the same."""
    kept = [d for d in ui.current_view().districts[1:2] if d != region]
    return (region, *kept)


def _with_second(region: str) -> tuple[str, ...]:
    first = ui.current_view().districts[0]
    return (first,) if not region or region == first else (first, region)


pick, against = st.columns(2) if panel.kind in ("brackets", "units") else (st.container(), None)
with pick:
    ui.control(
        "districts",
        st.selectbox,
        "District",
        regions,
        format_func=lambda region: f"{labels.get(region, region)} ({region})",
        to_view=_with_first,
        from_view=lambda chosen: chosen[0] if chosen else regions[0],
        help=vocabulary.FIND_HELP,
    )
if against is not None:
    with against:
        ui.control(
            "districts",
            st.selectbox,
            "Compare with",
            ["", *regions],
            format_func=lambda region: (
                f"{labels.get(region, region)} ({region})" if region else "No other district"
            ),
            to_view=_with_second,
            from_view=lambda chosen: chosen[1] if len(chosen) > 1 else "",
            role="compare",
            help="A second district: both Lorenz curves on one chart, whether one lies "
            "above the other even at the bounds, and whether their figures clearly differ.",
        )
view = ui.current_view()
sheet = ui.page_figure(figures.district, panel, view, opened.compute)
ui.markdown("**{}**", sheet.heading)
if sheet.carried:
    ui.notice(sheet.carried, "info")

if panel.kind == "means":
    st.info("District means only: no Lorenz curve or inequality inside the district.")
    for column, (label, value) in zip(st.columns(3), sheet.facts, strict=False):
        ui.metric(column, label, value)
    ui.chart(sheet.means_chart, theme=None, width="content", key="district_means_chart")
    shown_means, options = ui.planner_table(
        sheet.means[list(vocabulary.MEANS_COLUMNS)],
        vocabulary.MEANS_COLUMNS,
        formats={
            "mean_income": "%,.0f",
            "population": "%,.0f",
            "ratio": "%.3f",
            "rank": "%d",
        },
        # the first year has no year before it: a dash, not an empty number
        words={"growth": lambda r: vocabulary.figure(r["growth"], digits=2)},
    )
    ui.table(shown_means, "district_means", **options)
    ui.chart(sheet.rank_chart, key="district_ranks")
    ui.downloads(f"district-{sheet.region}", key="district", table=sheet.means)
elif panel.kind == "published":
    st.info(vocabulary.KIND_NOTES["published"])
    shown_figures, options = ui.planner_table(
        sheet.published,
        {"figure": "Figure", "value": "Value", "scale": "Scale", "rank": "Rank among districts"},
    )
    ui.markdown("**Published figures, {}**", str(view.year))
    ui.table(shown_figures, "district_published", **options)
    ui.chart(sheet.means_chart, theme=None, width="content", key="district_published_chart")
    if sheet.rank_chart is not None:
        ui.chart(sheet.rank_chart, key="district_ranks")
    ui.downloads(f"district-{sheet.region}-{view.year}", key="district", table=sheet.published)
else:
    no_bound = (
        "Turn on 'Sampling intervals' in the sidebar for an interval."
        if panel.kind == "units"
        else "No bound for this index."
    )
    left, right = st.columns(2)
    with left:
        # Vega's own theme: Streamlit's squeezes a square chart whose title and legend take room.
        ui.chart(sheet.profile, theme=None, width="content", height=640, key="district_lorenz")
    with right:
        row = sheet.headline
        if row is not None:
            bounded = bool(np.isfinite(row["lower"]) or np.isfinite(row["upper"]))
            st.metric(vocabulary.index_label(view.index), vocabulary.figure(row["value"]))
            low, high = st.columns(2)
            low.metric(
                "Lower bound" if panel.kind == "brackets" else "Interval from",
                vocabulary.figure(row["lower"]),
                help=None if bounded else no_bound,
            )
            high.metric(
                "Upper bound" if panel.kind == "brackets" else "Interval to",
                vocabulary.figure(row["upper"]),
                help=None if bounded else no_bound,
            )
            if not bounded:
                st.caption(no_bound)

    if sheet.has_bounds:
        ui.chart(sheet.strip, key="district_strip")
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
    index_rows = sheet.indices[["index", "value", "lower", "upper", "method", "note"]].rename(
        columns=vocabulary.COLUMN_LABELS
    )
    shown_indices, options = ui.planner_table(
        index_rows,
        vocabulary.INDEX_COLUMNS,
        words={
            "Index": lambda r: vocabulary.index_label(r["Index"]),
            "Lower bound": lambda r: vocabulary.bound_text(r["Lower bound"]),
            "Upper bound": lambda r: vocabulary.bound_text(r["Upper bound"]),
            "Method": lambda r: method_word(r["Method"]),
        },
    )
    ui.table(shown_indices, "district_indices", **options)
    if sheet.fits is not None:
        st.markdown("**How well each curve fits the published shares**")
        shown_fits, options = ui.planner_table(
            sheet.fits,
            vocabulary.FIT_COLUMNS,
            words={
                "method": lambda r: vocabulary.method_label(r["method"]),
                "used": lambda r: vocabulary.method_label(r["used"]),
                "valid": lambda r: "yes" if r["valid"] else "no",
            },
            formats={"max_error": "%.4f", "sse": "%.6f"},
        )
        ui.table(shown_fits, "district_fits", **options)
    if sheet.welfare is not None:
        st.markdown("**Welfare in money**")
        ui.caption(vocabulary.WELFARE_CAPTION)
        shown_welfare, options = ui.planner_table(sheet.welfare, vocabulary.WELFARE_COLUMNS)
        ui.table(shown_welfare, "district_welfare", **options)
    if sheet.growth is not None:
        st.subheader("Did growth reach the poorest?")
        if len(panel.years) > 1:
            ui.control(
                "year_from",
                st.selectbox,
                "Growth since",
                [int(y) for y in panel.years[:-1]],
                help="The first year of the growth at each percentile (also where Timelines "
                "starts and the first year of the Breakdown's change).",
            )
        if sheet.growth.chart is not None:
            left, right = st.columns([3, 2])
            with left:
                ui.chart(sheet.growth.chart, theme=None, key="district_growth")
            with right:
                for label, value in sheet.growth.facts:
                    st.metric(label, value)
        ui.caption(sheet.growth.note)
    ui.chart(sheet.rank_chart, key="district_ranks")
    pair = ui.page_figure(figures.compare, panel, view, opened.compute)
    if pair is not None:
        st.subheader("Side by side")
        left, right = st.columns([1, 1])
        with left:
            ui.chart(pair.chart, theme=None, width="content", key="district_pair")
        with right:
            ui.markdown("**Lorenz curves.** {}", pair.lorenz)
            ui.markdown("**Mean income too (generalised Lorenz).** {}", pair.welfare)
            if pair.index:
                ui.markdown("**The chosen measure.** {}", pair.index)
    ui.downloads(
        f"district-{sheet.region}-{view.year}",
        key="district",
        table=sheet.indices,
        chart=sheet.profile,
    )
ui.cautions(panel, ranking=True)
