"""The one shared view: read from the URL once, kept in the session, written back to the URL.

The view (``explorer.views.ViewState``) is the single source of truth. On a session's first
run the URL's query is parsed by ``views.from_query`` before any widget exists; bad values
fall back to defaults and their notices are shown. Every control is seeded from the view and
writes its value back through an ``on_change`` callback, so a choice survives page switches.
At the end of each run the URL is set to ``view.to_query()``, so the address bar always holds
a link to exactly what is on screen, in the one link format the report and view files use.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence
from typing import Any

import streamlit as st

from explorer import resources, views
from explorer.figures import narrow, settle
from explorer.figures.series import POVERTY_FIGURES, figure_keys
from explorer.present import vocabulary
from explorer.present.vocabulary import (
    DECOMPOSABLE,
    METHOD_LABELS,
    PAGES,
    method_label,
)
from explorer.ui import data, show
from explorer.ui.cache import CachedCompute

__all__ = [
    "FROM_LINK",
    "FROM_VIEW_FILE",
    "OpenView",
    "add_notices",
    "control",
    "current_view",
    "known",
    "notice_heading",
    "open_view",
    "page_path",
    "panel",
    "publish",
    "show_notices",
    "sidebar",
    "start",
    "update",
]

VIEW = "rift_view"
#: The sidebar's figure control, named for what the data can show.
FIGURE_CONTROL = {"means": "Figure of district means", "published": "Published figure"}
FIGURE_HELP = {
    "brackets": "Inequality indices, and poverty measures against a line you set "
    "(FGT(0) the share below it, FGT(1) the average gap, FGT(2) its severity; Watts; Sen).",
    "units": "Inequality indices, and poverty measures against a line you set "
    "(FGT(0) the share below it, FGT(1) the average gap, FGT(2) its severity; Watts; Sen).",
    "means": "One mean income per district: the mean itself, its ratio to the province's "
    "mean, or its average yearly growth since a first year. Poverty cannot be measured "
    "from means alone: a mean says nothing about how many people fall below a line.",
    "published": "The figures the source published for each district, shown as given: "
    "they cannot be recomputed, bounded or split into parts here.",
}
NOTICES = "rift_notices"
PANEL = "rift_panel"


def known(panel: Any, catalog: Sequence[data.Dataset]) -> dict[str, Any]:
    """The valid choices a view may hold for this panel (fed to views.from_query)."""
    choices: dict[str, Any] = {"datasets": tuple(d.id for d in catalog)}
    if panel is not None:
        choices.update(
            years=tuple(int(y) for y in panel.years),
            districts=tuple(str(r) for r in panel.regions),
            levels=tuple(panel.levels),
            counties=tuple(_counties(panel)),
            indices=figure_keys(panel),
            methods=tuple(METHOD_LABELS) if panel.kind == "brackets" else ("auto",),
            decomposition_indices=DECOMPOSABLE,
        )
    return choices


def _counties(panel: Any) -> list[str]:
    if not panel.levels:
        return []
    return sorted(str(v) for v in panel.hierarchy[panel.levels[-1]].dropna().unique())


def _parse(params: dict[str, Any], choices: dict[str, Any]):
    return views.from_query(params, known=choices)


def _query_dict() -> dict[str, Any]:
    query = st.query_params
    return {
        key: (query.get_all(key) if len(query.get_all(key)) > 1 else query[key]) for key in query
    }


def start(catalog: Sequence[data.Dataset]):
    """Return the session's view and panel, reading the URL on the session's first run.

    The panel is opened here so that the year and district choices are known before the
    controls are drawn.
    """
    if VIEW not in st.session_state:
        params = _query_dict()
        view, notices = _parse(params, known(None, catalog))
        panel, opened = _open_or_demo(view.dataset, notices)
        view, more = _parse(params, known(panel, catalog))
        st.session_state[NOTICES] = list(dict.fromkeys([*notices, *more]))
        st.session_state[VIEW] = settle(dataclasses.replace(view, dataset=opened), panel)
    view = st.session_state[VIEW]
    panel, opened = _open_or_demo(view.dataset, st.session_state.setdefault(NOTICES, []))
    view = settle(dataclasses.replace(view, dataset=opened), panel)
    # Chosen districts outside the group filter are let go: no page shows them.
    view = settle(view, narrow(panel, view.counties))
    st.session_state[VIEW] = view
    st.session_state[PANEL] = panel
    return view, panel


def panel():
    """The panel of the current view (opened by ``start`` on this run)."""
    return st.session_state[PANEL]


def _open_or_demo(dataset_id: str, notices: list[str]) -> tuple[Any, str]:
    """The dataset's panel and id, or the demo's (with a notice) if it cannot be opened."""
    from explorer.data.model import DataError

    try:
        return data.open_dataset(dataset_id), dataset_id
    except (DataError, KeyError, FileNotFoundError, OSError) as error:
        notices.append(
            f"The dataset '{dataset_id}' could not be opened ({_short(error)}); "
            "showing the demo province instead."
        )
        return data.open_dataset("demo"), "demo"


def _short(error: Exception) -> str:
    problems = getattr(error, "problems", None)
    if problems:  # a DataError: its first problem in plain words, not the count line
        return str(problems[0].message).strip()[:200]
    text = str(error).strip().splitlines()
    return text[0][:160] if text else type(error).__name__


def current_view():
    """The shared view of this session."""
    return st.session_state[VIEW]


def update(**changes: Any):
    """Change fields of the shared view and return the new view.

    A year range that would run backwards is closed up on the side just changed.
    """
    old = st.session_state[VIEW]
    start = changes.get("year_from", old.year_from)
    end = changes.get("year_to", old.year_to)
    if start is not None and end is not None and start > end:
        if "year_from" in changes:
            changes["year_to"] = start
        else:
            changes["year_from"] = end
    view = dataclasses.replace(old, **changes)
    st.session_state[VIEW] = view
    return view


def control(
    field: str,
    widget: Callable[..., Any],
    label: str,
    *args: Any,
    to_view: Callable[[Any], Any] = lambda value: value,
    from_view: Callable[[Any], Any] = lambda value: value,
    role: str = "",
    **kwargs: Any,
) -> Any:
    """Draw a widget bound to one field of the view (seeded from it, writing back to it).

    ``role`` tells apart two widgets that set parts of one field (the District sheet's
    district and the district it is compared with): their keys are ``ctl_<field>__<role>``.
    """
    key = f"ctl_{field}" + (f"__{role}" if role else "")
    wanted = from_view(getattr(current_view(), field))
    if st.session_state.get(key, _MISSING) != wanted:
        st.session_state[key] = wanted

    def _write_back() -> None:
        update(**{field: to_view(st.session_state[key])})

    widget(label, *args, key=key, on_change=_write_back, **kwargs)
    return getattr(current_view(), field)


_MISSING = object()


#: Where the pending notices' view came from: the address (a link) or a view file.
FROM_LINK, FROM_VIEW_FILE = "link", "view file"
NOTICES_FROM = "rift_notices_from"


def add_notices(notices: Sequence[str], *, source: str) -> None:
    """Notices to show on the next run, about a view read from ``source`` (a link or a
    view file), replacing any still pending."""
    st.session_state[NOTICES] = list(notices)
    st.session_state[NOTICES_FROM] = source


def notice_heading(source: str) -> str:
    """The heading over the notices about a view read from ``source``."""
    return f"Some parts of the {source} could not be used and were reset to defaults:"


def show_notices() -> None:
    """Show the notices about bad values of the link or view file once, then forget them."""
    notices = st.session_state.get(NOTICES) or []
    if notices:
        source = st.session_state.get(NOTICES_FROM, FROM_LINK)
        st.warning(
            notice_heading(source) + "\n\n" + "\n".join(f"- {show.plain(n)}" for n in notices),
            icon="⚠️",
        )
        st.session_state[NOTICES] = []
        st.session_state[NOTICES_FROM] = FROM_LINK


def publish(page: str | None = None) -> None:
    """Write the view back into the address bar (the link to exactly this view)."""
    view = current_view()
    if page is not None and getattr(view, "page", page) != page:
        view = update(page=page)
    # The page is already in the address's path; keep it out of the query.
    page_key = views.QUERY_KEYS.get("page")
    query = {k: v for k, v in view.to_query().items() if k != page_key}
    if _query_dict() != query:
        st.query_params.from_dict(query)


def sidebar(catalog: Sequence[data.Dataset], panel: Any) -> None:
    """The shared controls: dataset, index, Lorenz method, year."""
    labels = {d.id: d.label for d in catalog}
    with st.sidebar:
        st.markdown("### What to show")
        control(
            "dataset",
            st.selectbox,
            "Dataset",
            list(labels),
            format_func=lambda key: labels.get(key, key),
            help="The demo province, datasets saved in the shared workspace, or files "
            "uploaded in this browser session on the Intake page.",
        )
        control(
            "index",
            st.selectbox,
            FIGURE_CONTROL.get(panel.kind, "Inequality or poverty measure"),
            list(figure_keys(panel)),
            format_func=lambda key: vocabulary.figure_label(key, panel),
            help=FIGURE_HELP.get(panel.kind),
        )
        if current_view().index in (*POVERTY_FIGURES, "growth_pro_poor"):
            _poverty_controls()
        if panel.kind == "brackets":
            control(
                "method",
                st.selectbox,
                "Lorenz curve from the shares",
                list(METHOD_LABELS),
                format_func=method_label,
                help="How each district's Lorenz curve is rebuilt from its income shares. "
                "The bounds (lower/upper) are always shown beside the value.",
            )
        elif panel.kind == "units":
            control(
                "bootstrap",
                st.toggle,
                "Sampling intervals (bootstrap)",
                help="Resamples the households 199 times to show how much each district's "
                "figure could move with another sample. Takes a little while the first time.",
            )
        elif panel.kind == "published":
            st.caption("Published figures: shown as the source gave them, never recomputed.")
        else:
            st.caption(
                "District means only: no inequality inside districts can be measured; the "
                "Breakdown page splits the inequality between districts."
            )
        if panel.levels:
            groups = _counties(panel)
            word = vocabulary.groups_word(panel.levels[-1])
            control(
                "counties",
                st.multiselect,
                f"Show only these {word}",
                groups,
                to_view=tuple,
                from_view=list,
                placeholder=f"All {word}",
                help=f"Every page then covers only the districts of the chosen {word}: "
                "the map zooms to them, and rankings, timelines and the breakdown leave "
                "the others out. Empty: the whole province.",
            )
        years = [int(y) for y in panel.years]
        control("year", st.select_slider if len(years) > 1 else st.selectbox, "Year", years)


_BAD_LINE = "rift_bad_poverty_line"


def _line_or_kept(raw: str) -> str:
    """The typed poverty line, or the view's own when it cannot be read (said once)."""
    line = views.canonical_poverty_line(raw)
    if line is None:
        st.session_state[_BAD_LINE] = raw
        return current_view().poverty_line
    return line


def _poverty_controls() -> None:
    """The poverty line and, for a relative line, whose median or mean it is taken of."""
    control(
        "poverty_line",
        st.text_input,
        "Poverty line",
        to_view=_line_or_kept,
        help="An amount per person per year in the dataset's currency (e.g. 12000), or a "
        "share of a median or mean: 60%median (common practice) or 50%mean.",
    )
    bad = st.session_state.pop(_BAD_LINE, None)
    if bad is not None:
        show.notice(
            f"'{bad}' is not a poverty line; the line stays "
            f"{vocabulary.poverty_line_words(current_view())}. Write e.g. 12000, 60%median "
            "or 50%mean.",
            "warning",
        )
    if "%" in current_view().poverty_line:
        control(
            "relative_to",
            st.radio,
            "Share of whose median or mean",
            ["province", "district"],
            format_func={
                "province": "The province's (one line for all)",
                "district": "Each district's own",
            }.get,
            help="The province's: every district is measured against the same amount. Each "
            "district's own: poverty relative to local living standards.",
        )


@dataclasses.dataclass(frozen=True)
class OpenView:
    """What a page works on: the session's view, its panel, and the cached computations."""

    view: Any
    panel: Any
    compute: CachedCompute


def open_view() -> OpenView:
    """The view, its panel and the cached computations on that panel, for this run."""
    from explorer.data.dataset_store import facts_of, with_facts

    view = current_view()
    whole = panel()
    shown = with_facts(narrow(whole, view.counties), facts_of(whole))
    show.set_aside_notice(whole)
    show.equal_weight_offer(whole)
    return OpenView(view, shown, CachedCompute(shown, data.scope_of(view.dataset)))


def page_path(page: str):
    """Absolute path of a page script by its page key."""
    return resources.pages_dir() / PAGES[page].script
