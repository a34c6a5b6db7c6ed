"""The link is the view: every control on every page is a field of the view and its link.

A control is bound when its key is ``ctl_<field>`` (or ``ctl_<field>__<role>`` for a second
control setting part of one field) for a field of ``explorer.views.ViewState`` that has a link key (``explorer.ui.state.control`` draws such controls). What is not a
setting of the view is listed below with the reason; anything else fails the test.
"""

from __future__ import annotations

import pytest
from app_helpers import page, run, view
from streamlit.testing.v1 import AppTest
from streamlit.testing.v1.element_tree import Button, DownloadButton, Widget

from explorer import views

#: Presses are actions, not settings: they change the view (or save it) through a bound field.
ACTIONS = (Button, DownloadButton)

#: Widgets that are not part of what is looked at, and why.
NOT_VIEW_SETTINGS = {
    "atlas_map": "a click on the map opens that district's sheet (the view's districts)",
    "intake_panel": "a file on the planner's own machine; a link cannot carry a file",
    "intake_boundaries": "a file on the planner's own machine; a link cannot carry a file",
    "intake_population": "a file on the planner's own machine; a link cannot carry a file",
    "out_view_in": "a view file to apply; what it holds becomes the view",
    "out_view_name": "the name a view is saved under, not part of what is looked at",
    "intake_stored": "picks a stored dataset to open; the dataset then is the view's dataset",
    "intake_open_choice": "picks a stored dataset to open; the dataset then is the view's dataset",
    "intake_rename_name": "a new name for a stored dataset, an action on the workspace",
    "intake_delete_confirm": "confirms deleting a stored dataset, an action on the workspace",
}
#: Keys with these starts belong to reading an uploaded file (its column map, sheet, layer).
UPLOAD_PREFIXES = ("in_",)

PAGES = (
    "atlas",
    "timelines",
    "breakdown",
    "district",
    "compare",
    "what_if",
    "briefing",
    "intake",
)


def _widgets(at: AppTest) -> list[Widget]:
    found: list[Widget] = []

    def walk(node) -> None:
        if isinstance(node, Widget):
            found.append(node)
        for child in getattr(node, "children", {}).values():
            walk(child)

    walk(at._tree)
    return found


def _unbound(at: AppTest) -> list[str]:
    fields = set(views.QUERY_KEYS) - {"page"}
    wrong = []
    for widget in _widgets(at):
        key = getattr(widget, "key", None) or ""
        if isinstance(widget, ACTIONS) or key in NOT_VIEW_SETTINGS:
            continue
        if key.startswith(UPLOAD_PREFIXES):
            continue
        # ctl_<field>, or ctl_<field>__<role> for a second widget setting part of a field
        if not (key.startswith("ctl_") and key[4:].split("__")[0] in fields):
            wrong.append(f"{type(widget).__name__} {key or '(no key)'!r}: {widget.label!r}")
    return wrong


@pytest.mark.parametrize("dataset", ["demo", "demo-households", "demo-means", "demo-published"])
@pytest.mark.parametrize("name", PAGES)
def test_every_widget_on_every_page_is_bound_to_the_view(app, name, dataset):
    app.query_params["d"] = dataset
    run(app)
    app.switch_page(page(name))
    run(app)
    assert _widgets(app), "no widgets found: the walk over the page is broken"
    if name == "atlas":  # the clusters layer draws its own controls
        app.button_group(key="ctl_layer").set_value("clusters")
        run(app)
        assert not _unbound(app), _unbound(app)
    assert not _unbound(app), _unbound(app)


def _raw_values(at: AppTest) -> list:
    """Every value a control of the view can hold on this panel (to undo a format_func)."""
    from explorer.figures.series import figure_keys
    from explorer.present import vocabulary

    shown = at.session_state["rift_panel"]
    pool: list = [*map(str, shown.regions), *map(int, shown.years)]
    if shown.levels:
        pool.extend(shown.hierarchy[shown.levels[-1]].astype(str).unique())
    for choices in (figure_keys(shown), vocabulary.METHOD_LABELS, vocabulary.CLASS_LABELS):
        pool.extend(choices)
    return [
        *pool,
        *vocabulary.LAYER_LABELS,
        *vocabulary.DECOMPOSABLE,
        "province",
        "district",
        "",  # "no other district" of the District sheet's comparison
        *vocabulary.COMPARE_MODES,
        *vocabulary.WHAT_IF_RECEIVERS,
    ]


def _set_other(at: AppTest, widget: Widget) -> None:
    """Set a widget to a value other than its current one, as a planner would."""
    kind = type(widget).__name__
    if kind == "TextInput":  # the poverty line, the one typed setting
        widget.set_value("50%mean" if widget.value != "50%mean" else "60%median")
        return
    if kind == "Toggle":
        widget.set_value(not widget.value)
    elif kind == "Slider":
        step = widget.step if isinstance(widget.value, float) else 1
        up = widget.value + step
        widget.set_value(round(up, 6) if up <= widget.max else round(widget.value - step, 6))
    elif kind == "NumberInput":  # an amount of money: one step more
        widget.set_value(widget.value + (widget.step or 1))
    elif kind == "SelectSlider":
        year = str(widget.value)
        others = [o for o in widget.options if o != year]
        widget.set_value(int(others[len(others) // 2]))
    else:  # select boxes, multiselects, button groups: options are labels; find the raw values
        labels = {}
        for raw in _raw_values(at):
            try:
                labels[str(widget.format_func(raw))] = raw
            except (AttributeError, TypeError, KeyError):  # not a value of this control
                continue
        raw = [labels[o] for o in widget.options if o in labels]
        assert len(raw) == len(widget.options), (widget.key, widget.options)
        if kind == "Multiselect":
            widget.set_value(raw[1:3])
        else:  # one step along, so a year "from" stays before a year "to"
            widget.set_value(raw[(raw.index(widget.value) + 1) % len(raw)])


def _bound(at: AppTest) -> dict[str, Widget]:
    return {
        w.key: w
        for w in _widgets(at)
        if (w.key or "").startswith("ctl_") and w.key != "ctl_dataset"
    }


def _set_everything(at: AppTest) -> set[str]:
    """Set every bound control to a value other than its default, one run each."""
    done: set[str] = set()
    while True:
        todo = [k for k in _bound(at) if k not in done]
        if not todo:
            return done
        key = todo[0]
        _set_other(at, _bound(at)[key])
        run(at)
        done.add(key)


@pytest.mark.parametrize(
    ("name", "dataset"),
    [
        ("atlas", "demo"),
        ("timelines", "demo"),
        ("breakdown", "demo"),
        ("district", "demo"),
        ("compare", "demo"),
        ("compare", "demo-households"),
        ("what_if", "demo"),
        ("atlas", "demo-households"),
        ("atlas", "demo-poverty"),
        ("district", "demo-households-poverty"),
    ],
)
def test_every_control_set_away_from_its_default_comes_back_from_the_link(app, name, dataset):
    # "-poverty": the view starts on a poverty measure, so its line's controls are drawn
    poverty = dataset.endswith("-poverty")
    if poverty:
        dataset = dataset.removesuffix("-poverty")
        app.query_params["ix"] = "fgt_1"
    app.query_params["d"] = dataset
    run(app)
    app.switch_page(page(name))
    run(app)
    changed = _set_everything(app)
    assert len(changed) >= 3, changed
    before = view(app)
    assert before.replace(page="map") != views.ViewState(dataset=dataset)
    shown = {key: _bound(app)[key].value for key in _bound(app)}
    link = {key: app.query_params[key] for key in app.query_params}
    if poverty:  # the line and whose median it is were both moved off their defaults
        assert {"pl", "pr"} <= set(link), link

    fresh = AppTest.from_file(app._script_path, default_timeout=120)
    fresh.query_params.update(link)
    fresh.switch_page(page(name))
    run(fresh)
    assert not fresh.warning, [w.value for w in fresh.warning]
    assert view(fresh) == before
    assert {key: _bound(fresh)[key].value for key in _bound(fresh)} == shown
