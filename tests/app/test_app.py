"""The entrypoint: every page renders, the view round-trips through the link, bad links."""

from __future__ import annotations

import pytest
from app_helpers import page, run, view

PAGE_TITLES = {
    "atlas": "Map",
    "timelines": "Timelines",
    "breakdown": "Breakdown",
    "district": "District sheet",
    "intake": "Intake",
}


@pytest.mark.parametrize("name", list(PAGE_TITLES))
def test_every_page_renders_its_title_and_content_on_the_demo(app, name):
    run(app)
    app.switch_page(page(name))
    run(app)
    assert [t.value for t in app.title] == [PAGE_TITLES[name]]
    assert not app.error, [e.value for e in app.error]
    # Something real is drawn: a chart, a table or a file control, not just the title.
    drawn = len(app.get("vega_lite_chart")) + len(app.get("dataframe"))
    drawn += len(app.get("file_uploader"))
    assert drawn > 0


def test_link_values_seed_the_sidebar_and_the_view(app):
    # Link keys and formats are explorer.views.QUERY_KEYS (the one link format).
    app.query_params.update({"y": "2012", "ix": "mld", "lm": "linear", "cl": "breaks", "k": "7"})
    run(app)
    shown = view(app)
    assert (shown.year, shown.index, shown.method, shown.classes, shown.k) == (
        2012,
        "mld",
        "linear",
        "breaks",
        7,
    )
    assert app.session_state["ctl_year"] == 2012
    assert app.selectbox(key="ctl_index").value == "mld"
    assert app.selectbox(key="ctl_method").value == "linear"
    assert app.slider(key="ctl_k").value == 7
    assert not app.warning


def test_changing_a_control_writes_the_view_back_to_the_link(app):
    run(app)
    app.selectbox(key="ctl_index").set_value("theil_t")
    app.select_slider(key="ctl_year").set_value(2015)
    run(app)
    assert view(app).index == "theil_t" and view(app).year == 2015
    # The app writes the view into the address bar itself (st.query_params), which
    # AppTest sees; the page is in the path, not the query.
    assert app.query_params["ix"] == "theil_t" and app.query_params["y"] == "2015"
    assert "pg" not in app.query_params
    # The same link, parsed again, gives the same view (explorer.views round trip).
    from explorer import views

    again, notices = views.from_query(view(app).to_query())
    assert again == view(app) and notices == []


@pytest.mark.parametrize(
    ("params", "field", "expected"),
    [
        ({"y": "abc"}, "year", 2025),
        ({"y": "1850"}, "year", 2025),
        ({"ix": "evil()"}, "index", "gini"),
        ({"k": "99"}, "k", 5),
        ({"lm": "<script>"}, "method", "auto"),
        ({"d": "no-such-dataset"}, "dataset", "demo"),
        ({"sel": "NOWHERE,BRE01"}, "districts", ("BRE01",)),
    ],
)
def test_a_malformed_link_value_gives_a_notice_and_the_default(app, params, field, expected):
    # 2025 is the demo's latest year (demo_data/README.md), the default year.
    app.query_params.update(params)
    run(app)
    assert getattr(view(app), field) == expected
    notices = " ".join(w.value for w in app.warning)
    assert "reset to defaults" in notices, notices
    # The notice is shown once; the next rerun is clean and still at the default.
    run(app)
    assert not [w for w in app.warning if "reset to defaults" in w.value]
    assert getattr(view(app), field) == expected


def test_a_link_to_a_page_with_its_controls_opens_that_view(app):
    # The Palma ratio does not split, so the page offers the index it splits instead.
    app.query_params.update({"ix": "palma", "dx": "mld", "y0": "2010", "y1": "2020"})
    run(app)
    app.switch_page(page("breakdown"))
    run(app)
    assert app.selectbox(key="ctl_decomposition_index").value == "mld"
    assert app.selectbox(key="ctl_year_from").value == 2010
    assert app.selectbox(key="ctl_year_to").value == 2020
