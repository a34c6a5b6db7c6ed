"""A view file opened in the app: its notices say "view file", a byte-order mark is
accepted, and a file that is no view file leaves the view as it was."""

from __future__ import annotations

import json

from app_helpers import page, run, view

#: UTF-8's byte-order mark (Unicode Standard, section 23.8 "Signature"): common practice
#: for files saved by some editors on Windows.
BOM = b"\xef\xbb\xbf"


def _apply(app, content: bytes):
    app.switch_page(page("intake"))
    run(app)
    app.file_uploader(key="out_view_in").set_value(("view.json", content, "application/json"))
    run(app)
    app.button(key="out_view_apply").click()
    return run(app)


def _headings(app) -> list[str]:
    return [w.value.split("\n")[0] for w in app.warning]


def test_notices_about_a_view_file_say_view_file(app):
    run(app)
    body = {"rift_view": 1, "dataset": "demo", "page": "map", "year": 2015, "index": "nonsense"}
    _apply(app, BOM + json.dumps(body).encode())
    assert view(app).year == 2015  # read despite the byte-order mark
    headings = _headings(app)
    assert (
        "Some parts of the view file could not be used and were reset to defaults:" in headings
    ), headings
    assert not [h for h in headings if "of the link" in h]


def test_notices_about_a_link_still_say_link(app):
    app.query_params.update({"ix": "nonsense"})
    run(app)
    headings = _headings(app)
    assert "Some parts of the link could not be used and were reset to defaults:" in headings
    assert not [h for h in headings if "view file" in h]


def test_a_file_that_is_no_view_file_leaves_the_view_unchanged(app):
    app.query_params.update({"y": "2012"})
    run(app)
    before = view(app)
    assert before.year == 2012
    _apply(app, b'{"year": 2020}')
    assert view(app) == before
    errors = [e.value for e in app.error]
    assert any("not applied" in e and "rift" in e.replace("\\", "") for e in errors), errors
