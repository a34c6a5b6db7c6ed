"""Breakdown: how much of the province's inequality lies within and between groups."""

import pandas as pd
import streamlit as st

from explorer import figures, ui
from explorer.present import vocabulary

opened = ui.open_view()
view, panel = opened.view, opened.panel
st.title("Breakdown")
ui.caption(vocabulary.describe_view(view, panel).rsplit(" · ", 1)[0] + " · every year")
st.caption(
    "The province's inequality split into differences between groups (their mean incomes) "
    "and inequality inside them, for every year."
)

if panel.kind == "published":
    st.info(
        "Published figures cannot be split into parts: the split needs the incomes "
        "behind each district's figure, which the source did not publish."
    )
    ui.cautions(panel, ranking=False)
    st.stop()

index_used, instead = figures.split_index(view)
left, right = st.columns(2)
with left:
    if instead:  # the view's index does not split: say so, and let the planner choose
        ui.caption(instead)
        ui.control(
            vocabulary.BREAKDOWN_FIELD,
            st.selectbox,
            "Index split instead",
            list(vocabulary.DECOMPOSABLE),
            format_func=vocabulary.index_label,
            help="Theil T, the mean log deviation and GE(2) split exactly into within and "
            "between parts; the Gini also has an overlap part (Dagum 1997).",
        )
    else:
        ui.caption(f"Splits the index chosen in the sidebar, {vocabulary.index_label(index_used)}.")
levels = tuple(panel.levels)
with right:
    if levels:
        ui.markdown(
            "**Groups:** {}",
            " → ".join(vocabulary.groups_word(level) for level in [*levels, "region"]),
        )
    else:
        st.markdown("**Groups:** districts (no higher level found)")
view = ui.current_view()

split = ui.page_figure(figures.breakdown, panel, view, opened.compute)
ui.chart(split.shown_chart, key="breakdown_chart")
st.markdown(f"**{view.year}: share of the province's {vocabulary.index_label(split.index)}**")
metrics = split.share_metrics()
for column, (label, share, help_text) in zip(
    st.columns(max(len(metrics), 1)), metrics, strict=False
):
    ui.metric(column, label, share, help_text)


def part_table(frame: pd.DataFrame, key: str, titles: dict[str, str]) -> None:
    """A decomposition table with planner words (its data keep the keys)."""
    tidy = frame.assign(
        value=vocabulary.tidy_zero(frame["value"]), share=vocabulary.tidy_zero(frame["share"])
    )
    shown, options = ui.planner_table(
        tidy, titles, words=vocabulary.PART_TEXT, formats={"share": "percent"}
    )
    ui.table(shown, key, **options)


by_level, parts = split.by_level, split.parts
part_table(by_level[by_level["year"] == view.year], "breakdown_table", vocabulary.PART_COLUMNS)
with st.expander("The full split, group by group"):
    part_table(parts[parts["year"] == view.year], "breakdown_detail", vocabulary.PART_COLUMNS)
ui.downloads(f"breakdown-{split.index}", key="breakdown", table=parts, chart=split.chart)

st.subheader("What changed between two years")
years = [int(y) for y in panel.years]
first, second = st.columns(2)
with first:
    ui.control("year_from", st.selectbox, "From", years)
with second:
    ui.control("year_to", st.selectbox, "To", years)
view = ui.current_view()
moved = ui.page_figure(figures.change, panel, view, opened.compute, split.index)
if moved is None:
    st.info("Choose a 'From' year before the 'To' year to see what drove the change.")
else:
    if moved.notice:
        ui.caption(moved.notice)
    ui.chart(moved.shown_chart, key="change_chart")
    st.caption(moved.term_help())
    part_table(moved.terms, "change_table", vocabulary.CHANGE_COLUMNS)
    ui.downloads(
        f"change-{moved.index}-{view.year_from}-{view.year_to}",
        key="change",
        table=moved.terms,
        chart=moved.chart,
    )
poor = ui.page_figure(figures.poverty_split, panel, view, opened.compute)
if poor is not None:
    st.subheader("Where the poverty lies")
    if poor.table is None:
        ui.notice(poor.notice)
    else:
        ui.caption(
            f"{vocabulary.index_label(poor.index)} of the province in {view.year}: "
            f"{vocabulary.figure(poor.total)}, split over the groups of each level (the "
            "split adds up exactly). Choose the measure and the line in the sidebar."
        )
        ui.chart(poor.chart, key="poverty_split_chart")
        shown_poor, options = ui.planner_table(
            poor.table,
            vocabulary.POVERTY_SPLIT_COLUMNS,
            formats={"population_share": "percent", "value": "%.4f", "contribution": "%.4f"},
            words={"percent": lambda r: f"{r['percent']:.1f} %"},
        )
        ui.table(shown_poor, "poverty_split_table", **options)
        ui.downloads(
            f"poverty-split-{poor.index}-{view.year}",
            key="poverty_split",
            table=poor.table,
            chart=poor.chart,
        )
ui.cautions(panel, ranking=False)
