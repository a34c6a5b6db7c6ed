"""Names from a file and values from a link are shown as text, never as Markdown or HTML.

Streamlit renders Markdown in titles, captions, notices, metric labels and help texts; a
district called ``![x](http://host/beacon.png)`` must be shown as typed, not fetched.
"""

from __future__ import annotations

import json
import re

import pandas as pd
import pytest
from app_helpers import page, run
from streamlit.testing.v1 import AppTest

from explorer.ui.show import WORD_JOINER, plain

IMAGE = "![x](http://beacon.invalid/b.png)"
HTML = "<img src=x onerror=alert(1)>"
LINK = "[Sign in again](http://phish.invalid/)"

#: A Markdown link or image, or an HTML tag, that was not escaped.
#: A bare address that GitHub-style Markdown would make a link (escaping alone does not
#: stop it; the escape puts an invisible word joiner into "://").
LIVE_MARKUP = re.compile(r"(?<!\\)\]\(|(?<!\\)<[a-z/]|\\?:\\?/\\?/")


def _hostile_demo(folder, facts=None) -> str:
    """The demo deciles with Markdown and HTML in district and county names, saved."""
    from explorer import data as readers
    from explorer.data.workspace import Workspace

    panel_path, boundary_path = readers.demo_paths("brackets")
    frame = pd.read_csv(panel_path)
    frame["county"] = frame["county"].replace({"Brennhollow": LINK})
    shapes = json.loads(boundary_path.read_text())
    for feature in shapes["features"]:
        properties = feature["properties"]
        properties["county"] = (
            LINK if properties["county"] == "Brennhollow" else properties["county"]
        )
        if properties["region"] == "BRE01":
            properties["name"] = IMAGE
        if properties["region"] == "BRE02":
            properties["name"] = HTML
    folder.mkdir(parents=True, exist_ok=True)
    csv, geo = folder.parent / "hostile.csv", folder.parent / "hostile.geojson"
    frame.to_csv(csv, index=False)
    geo.write_text(json.dumps(shapes))
    panel = readers.load_panel(csv, geo)
    options = {"kind": None, "column_map": None, "boundary_id": None, "crs": None}
    return Workspace(folder).add(panel, [csv, geo], options, facts)


def _texts(at: AppTest) -> list[str]:
    """Every text Streamlit renders as Markdown on the page: bodies, labels, help texts."""
    found: list[str] = []

    def walk(node) -> None:
        proto = getattr(node, "proto", None)
        for name in ("body", "label", "help"):
            value = getattr(proto, name, None)
            if isinstance(value, str) and value:
                found.append(value)
        for child in getattr(node, "children", {}).values():
            walk(child)

    walk(at._tree)
    return found


#: Proto fields Streamlit renders as Markdown (st.markdown ``body``; widget, expander and
#: tab ``label``; ``help``; captions) — Streamlit 1.67 docstrings, ``streamlit.elements``.
MARKDOWN_FIELDS = {"body", "label", "help", "caption", "captions", "title", "placeholder"}
#: Widgets whose ``options`` are Markdown too (st.radio, st.pills, st.segmented_control);
#: st.selectbox and st.multiselect show their options as plain text.
MARKDOWN_OPTIONS = {"Radio", "ButtonGroup"}


def _strings(message, kind: str, out: list[tuple[str, str]]) -> None:
    for field, value in message.ListFields():
        items = value if field.is_repeated else [value]
        if field.type == field.TYPE_MESSAGE:
            for item in items:
                _strings(item, kind, out)
        elif field.type == field.TYPE_STRING and (
            field.name in MARKDOWN_FIELDS or (field.name == "options" and kind in MARKDOWN_OPTIONS)
        ):
            out.extend((f"{kind}.{field.name}", v) for v in items if v)


def _every_markdown_text(at: AppTest) -> list[tuple[str, str]]:
    """Every string of every element and block of the page that Streamlit shows as Markdown,
    nested messages included (an expander's label lives inside its block's proto)."""
    found: list[tuple[str, str]] = []

    def walk(node) -> None:
        proto = getattr(node, "proto", None)
        if proto is not None and hasattr(proto, "ListFields"):
            _strings(proto, type(node).__name__, found)
        for child in getattr(node, "children", {}).values():
            walk(child)

    walk(at._tree)
    return found


@pytest.mark.parametrize(
    "name",
    ["atlas", "timelines", "breakdown", "district", "compare", "what_if", "briefing", "intake"],
)
def test_dataset_facts_and_names_with_markup_are_text_in_every_element(app, tmp_path, name):
    from explorer.data.dataset_store import DatasetFacts

    facts = DatasetFacts(
        name=LINK, income_concept=IMAGE, currency=HTML, price_base=LINK, source=IMAGE
    )
    dataset = _hostile_demo(tmp_path / "workspace", facts)
    app.query_params.update({"d": dataset, "sel": "BRE01,BRE02"})
    run(app)
    app.switch_page(page(name))
    run(app)
    texts = _every_markdown_text(app)
    live = [(where, text) for where, text in texts if LIVE_MARKUP.search(text)]
    assert not live, live
    # the facts are shown (escaped), not left out
    assert any(plain(LINK) in text for _, text in texts), texts


@pytest.mark.parametrize(
    "name", ["atlas", "timelines", "breakdown", "district", "compare", "what_if", "briefing"]
)
def test_names_with_markup_are_shown_as_typed_on_every_page(app, tmp_path, name):
    dataset = _hostile_demo(tmp_path / "workspace")
    app.query_params.update({"d": dataset, "sel": "BRE01,BRE02"})
    run(app)
    app.switch_page(page(name))
    run(app)
    texts = _texts(app)
    live = [t for t in texts if LIVE_MARKUP.search(t)]
    assert not live, live
    if name == "district":  # the heading names the district and its county, escaped
        assert any(plain(IMAGE) in t and plain(LINK) in t for t in texts), texts


@pytest.mark.parametrize(
    "params",
    [
        {"ix": IMAGE},
        {"sel": f"{LINK},BRE01"},
        {"ct": HTML},
        {"d": LINK},
        {"lv": IMAGE},
        {LINK: "1"},
    ],
)
def test_link_values_with_markup_are_quoted_as_typed_in_the_notice(app, params):
    app.query_params.update(params)
    run(app)
    notices = [w.value for w in app.warning]
    assert notices, "a bad link value gives a notice"
    assert not [t for t in _texts(app) if LIVE_MARKUP.search(t)], notices
    ((key, value),) = params.items()
    shown = (key if key == LINK else value).split(",")[0]
    # The notice quotes the value (shortened to 40 characters), escaped.
    assert any(plain(shown[:40]) in n for n in notices), notices


def test_the_escape_shows_every_character_as_typed():
    # CommonMark 0.29, section 2.4: a backslash before ASCII punctuation gives that character.
    for text in (IMAGE, HTML, LINK, ":red[x] :material/home: $x$ www.a.b a_b*c*"):
        escaped = plain(text)
        assert re.sub(r"\\(.)", r"\1", escaped).replace(WORD_JOINER, "") == text
        # Parentheses and quotes stay as they are: without an unescaped "]" before it, "(" opens
        # no link (CommonMark 0.29, section 6.3), and screen readers read labels unescaped.
        assert not re.search(r"(?<!\\)[\[\]<>!*_$:]", escaped), escaped


def test_block_markers_are_escaped_only_where_the_text_begins():
    # CommonMark 0.29, sections 4.2 (ATX headings), 5.1 (block quotes), 5.2 (list items):
    # these markers act only at the start of a line, and a shown text is one line.
    for text in ("# Title", "- item", "+ item", "> quote", "1. first", "2) second"):
        escaped = plain(text)
        assert "\\" in escaped[:3], escaped
        assert re.sub(r"\\(.)", r"\1", escaped) == text
    assert plain("St. Mary-on-Sea (north)") == "St. Mary-on-Sea (north)"
