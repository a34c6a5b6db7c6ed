"""What if: a transfer (and the levy that pays for it) tried on the view's year."""

import dataclasses

import streamlit as st

from explorer import ui
from explorer.figures import what_if as figures_what_if
from explorer.figures.tables import names
from explorer.present import vocabulary

opened = ui.open_view()
view, panel = opened.view, opened.panel
st.title(vocabulary.PAGES["what_if"].title)
ui.caption(vocabulary.describe_view(view, panel))
st.info(vocabulary.WHAT_IF_CAUTION)

if panel.kind not in ("brackets", "units"):
    ui.notice(figures_what_if.what_if(panel, view, opened.compute).notice)
    st.stop()

district_names = names(panel)
labels = dict(zip(district_names["region"], district_names["name"], strict=True))


def _set(**changes):
    """A writer of the view's scenario that changes one part of the draft."""

    def write(value):
        draft = figures_what_if.draft_of(ui.current_view().scenario)
        field, convert = next(iter(changes.items()))
        return figures_what_if.scenario_of(dataclasses.replace(draft, **{field: convert(value)}))

    return write


def _get(field):
    return lambda text: getattr(figures_what_if.draft_of(text), field)


draft = figures_what_if.draft_of(view.scenario)
left, right = st.columns(2)
with left:
    ui.control(
        "scenario",
        st.radio,
        "Who receives the transfer",
        list(vocabulary.WHAT_IF_RECEIVERS),
        format_func=vocabulary.WHAT_IF_RECEIVERS.get,
        to_view=_set(to=str),
        from_view=_get("to"),
        role="to",
    )
    if (
        ui.current_view().scenario
        and figures_what_if.draft_of(ui.current_view().scenario).to == "median"
    ):
        ui.control(
            "scenario",
            st.slider,
            "Line: share of the province median",
            min_value=0.3,
            max_value=0.8,
            step=0.05,
            to_view=_set(share=float),
            from_view=_get("share"),
            role="share",
        )
        ui.control(
            "scenario",
            st.toggle,
            "Top each income up to the line (instead of a flat amount)",
            to_view=_set(top_up=bool),
            from_view=_get("top_up"),
            role="top_up",
        )
    else:
        ui.control(
            "scenario",
            st.slider,
            "Bottom deciles reached",
            min_value=1,
            max_value=5,
            to_view=_set(deciles=int),
            from_view=_get("deciles"),
            role="deciles",
        )
with right:
    current = figures_what_if.draft_of(ui.current_view().scenario)
    if not (current.to == "median" and current.top_up):
        ui.control(
            "scenario",
            st.number_input,
            "Amount per person per year (data's currency and price base)",
            min_value=0.0,
            step=100.0,
            to_view=_set(amount=float),
            from_view=_get("amount"),
            role="amount",
        )
    ui.control(
        "scenario",
        st.multiselect,
        "Only in these districts (none chosen: everywhere)",
        list(labels),
        format_func=lambda region: f"{labels.get(region, region)} ({region})",
        to_view=_set(districts=tuple),
        from_view=lambda text: list(figures_what_if.draft_of(text).districts),
        role="districts",
        help=vocabulary.FIND_HELP,
    )
    ui.control(
        "scenario",
        st.toggle,
        "Paid for by a levy on the top decile (balanced budget)",
        to_view=_set(levy=bool),
        from_view=_get("levy"),
        role="levy",
    )

view = ui.current_view()
shown = ui.page_figure(figures_what_if.what_if, panel, view, opened.compute)
if shown.notice:
    ui.notice(shown.notice)  # why nothing is shown for this view, not a fault
    st.stop()

for column, (label, value) in zip(
    st.columns(max(len(shown.budget), 1)), shown.budget, strict=False
):
    ui.metric(column, label, value)
st.markdown(f"**The province's inequality and poverty, {view.year}, before and after**")
left, right = st.columns(2)
with left:
    table, options = ui.planner_table(
        shown.indices,
        vocabulary.SCENARIO_COLUMNS,
        formats={"before": "%.4f", "after": "%.4f", "change": "%+.4f"},
    )
    ui.table(table, "what_if_indices", **options)
with right:
    table, options = ui.planner_table(
        shown.poverty,
        vocabulary.SCENARIO_COLUMNS,
        formats={"before": "%.4f", "after": "%.4f", "change": "%+.4f"},
    )
    ui.table(table, "what_if_poverty", **options)
ui.chart(shown.gain_chart, theme=None, key="what_if_gain")
if shown.change_map is not None:
    ui.chart(shown.change_map, key="what_if_map")
with st.expander("Within and between, before and after"):
    table, options = ui.planner_table(
        shown.shares,
        {
            "index": "Index",
            "level": "Level",
            "component": "Part",
            "share_before": "Share before",
            "share_after": "Share after",
        },
        formats={"share_before": "percent", "share_after": "percent"},
    )
    ui.table(table, "what_if_shares", **options)
for note in shown.notes:
    ui.caption(note)
ui.downloads(
    f"what-if-{view.year}", key="what_if", table=shown.result.indices, chart=shown.gain_chart
)
ui.cautions(panel, ranking=False)
