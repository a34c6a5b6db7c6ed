"""Compare: two to six districts, or one district over the years, side by side."""

import streamlit as st

from explorer import figures, ui
from explorer.figures.tables import names
from explorer.present import vocabulary
from explorer.views import MAX_COMPARED

opened = ui.open_view()
view, panel = opened.view, opened.panel
st.title(vocabulary.PAGES["compare"].title)
ui.caption(vocabulary.describe_view(view, panel))

district_names = names(panel)
labels = dict(zip(district_names["region"], district_names["name"], strict=True))
regions = list(labels)
years = [int(y) for y in panel.years]


def _shown(region: str) -> str:
    return f"{labels.get(region, region)} ({region})"


ui.control(
    "compare_years",
    st.segmented_control,
    "Compare",
    list(vocabulary.COMPARE_MODES),
    format_func=vocabulary.COMPARE_MODES.get,
    # clicking the chosen segment again clears it: that keeps the districts
    to_view=lambda mode: (years[0], years[-1]) if mode == "years" and len(years) > 1 else (),
    from_view=lambda chosen: "years" if chosen else "districts",
    role="mode",
    help=vocabulary.COMPARE_HELP,
)
if not ui.current_view().compare_years:
    chosen = ui.current_view().districts
    if len(chosen) < 2 and len(regions) > 1:  # a first visit: two districts to start from
        first = chosen[0] if chosen else regions[0]
        ui.update(districts=(first, next(r for r in regions if r != first)))
    ui.control(
        "districts",
        st.multiselect,
        f"Districts (2 to {MAX_COMPARED})",
        regions,
        format_func=_shown,
        max_selections=MAX_COMPARED,
        to_view=tuple,
        from_view=lambda chosen: list(chosen[:MAX_COMPARED]),
        help=vocabulary.FIND_HELP,
    )
else:
    left, right = st.columns(2)
    with left:
        ui.control(
            "districts",
            st.selectbox,
            "District",
            regions,
            format_func=_shown,
            to_view=lambda region: (region,),
            from_view=lambda chosen: chosen[0] if chosen else regions[0],
            role="one",
            help=vocabulary.FIND_HELP,
        )
    with right:
        ui.control(
            "compare_years",
            st.multiselect,
            f"Years (2 to {MAX_COMPARED})",
            years,
            max_selections=MAX_COMPARED,
            to_view=lambda chosen: tuple(sorted(chosen)),
            from_view=list,
        )
view = ui.current_view()
shown = ui.page_figure(figures.compare_page, panel, view, opened.compute)
if shown.notice:
    ui.notice(shown.notice)
    st.stop()
if panel.kind in vocabulary.KIND_NOTES:
    st.info(vocabulary.KIND_NOTES[panel.kind])

if shown.lorenz_chart is not None:
    left, right = st.columns(2)
    with left:
        ui.chart(shown.lorenz_chart, theme=None, key="compare_lorenz")
    with right:
        if shown.general_chart is not None:
            ui.chart(shown.general_chart, theme=None, key="compare_general")
        else:
            st.caption("Without mean incomes there are no generalised Lorenz curves to draw.")

st.markdown("**Every figure side by side**")
ui.caption(
    "Each figure with its bounds (grouped shares) or interval (household records with "
    "sampling intervals on), then each one's difference from the first. “Clear”: the "
    "ranges do not overlap. " + shown.caption
)
titles = {column: column for column in shown.table.columns}
shown_table, options = ui.planner_table(shown.table, titles)
ui.table(shown_table, "compare_table", **options)

if shown.verdicts:
    st.subheader("Verdicts, pair by pair")
    for verdict in shown.verdicts:
        ui.markdown("**{} and {}**", verdict.first, verdict.second)
        ui.markdown("Lorenz curves: {}", verdict.lorenz)
        ui.markdown("With mean incomes (generalised Lorenz): {}", verdict.welfare)
        if verdict.decile_words:
            ui.markdown("Sampling: {}", verdict.decile_words)
ui.downloads("compare", key="compare", table=shown.table, chart=shown.lorenz_chart)
ui.cautions(panel, ranking=True)
