"""Tests of explorer.present.report and explorer.present.cautions.

The report is parsed with the standard library's HTML parser (html.parser, which follows
the HTML5 tokenizer) to find tags and attributes, so the checks see what a browser sees.
"""

from __future__ import annotations

import html
import re
from datetime import UTC, datetime
from html.parser import HTMLParser

import altair as alt
import pandas as pd
import pytest

from explorer.present import cautions, report
from explorer.views import ViewState, from_json

EVIL = "<script>alert('x')</script>"


class _Tags(HTMLParser):
    """Every start tag with its attributes, and the text of <pre> blocks."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.pre: list[str] = []
        self._in_pre = False

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        if tag == "pre":
            self._in_pre = True
            self.pre.append("")

    def handle_endtag(self, tag):
        if tag == "pre":
            self._in_pre = False

    def handle_data(self, data):
        if self._in_pre:
            self.pre[-1] += data


def parse(text: str) -> _Tags:
    parser = _Tags()
    parser.feed(text)
    parser.close()
    return parser


def sample_report(name: str = "Vale survey", district: str = "Millbrook") -> tuple[str, ViewState]:
    view = ViewState(page="district", year=2021, districts=(district,), index="palma")
    table = pd.DataFrame(
        {
            "region": [district, "D-02"],
            "year": [2021, 2021],
            "index": ["palma", "palma"],
            "value": [1.42, float("nan")],
        }
    )
    chart = (
        alt.Chart(table)
        .mark_bar()
        .encode(x="value:Q", y="region:N")
        .properties(title=alt.TitleParams("Palma by district", subtitle="test data"))
    )
    text = report.build_report(
        view,
        panel_info={"name": name, "fingerprint": "0123456789abcdef", "kind": "brackets"},
        tables={"Indices": table},
        charts={"Palma chart": chart},
        notes=[f"Palma from pchip curves for {district}."],
        cautions=cautions.for_view("brackets", ranking=True, wide_intervals=1),
        generated=datetime(2026, 3, 4, 5, 6, 7, tzinfo=UTC),
    )
    return text, view


def test_user_strings_are_escaped_everywhere():
    """A district or dataset named like a script tag shows as text, never as a tag."""
    text, _ = sample_report(name=EVIL, district=EVIL)
    tags = parse(text)
    assert not [t for t, _ in tags.tags if t == "script"]
    assert "<script" not in text
    assert html.escape(EVIL) in text or "&lt;script&gt;" in text


def test_report_fetches_nothing_from_the_network():
    """No element loads a remote resource: no script, link, img or iframe tags, no
    src/href to http(s), no CSS url() or @import (offline use)."""
    text, _ = sample_report()
    tags = parse(text)
    assert {t for t, _ in tags.tags}.isdisjoint({"script", "link", "img", "iframe", "object"})
    for _, attrs in tags.tags:
        for name in ("src", "href", "xlink:href", "data"):
            value = attrs.get(name) or ""
            assert not re.match(r"\s*(https?:)?//", value), (name, value)
    assert "url(" not in text and "@import" not in text


def test_charts_are_inline_svg_with_their_titles():
    text, _ = sample_report()
    tags = parse(text)
    assert sum(1 for t, _ in tags.tags if t == "svg") == 1
    assert "Palma by district" in text


def test_report_holds_the_view_file_and_link_that_reopen_the_view():
    """The embedded view file reads back (views.from_json) as exactly this view."""
    text, view = sample_report(district="Saint-Ève, Upper")
    tags = parse(text)
    files = [block for block in tags.pre if '"rift_view"' in block]
    assert len(files) == 1
    assert from_json(files[0]) == (view, [])
    assert html.escape(view.to_link()) in text


def test_report_names_fingerprint_time_cautions_notes_and_references():
    text, _ = sample_report()
    assert "0123456789abcdef" in text
    assert "2026-03-04T05:06:07+00:00" in text
    assert html.escape(cautions.CAUTIONS["funds"]) in text
    assert "Palma from pchip curves" in text
    assert "Gastwirth" in text and "1972" in text


def test_tables_show_missing_values_as_a_dash():
    text, _ = sample_report()
    assert re.search(r"<td[^>]*>—</td>", text)


def test_a_chart_that_cannot_be_drawn_does_not_lose_the_report():
    broken = alt.Chart(pd.DataFrame({"a": [1]})).mark_point().encode(x="a:Q")
    broken = broken.properties(width=-5).transform_calculate(b="datum.a +")
    text = report.build_report(
        ViewState(),
        panel_info={},
        tables={},
        charts={"Broken": broken},
        notes=[],
        cautions=[],
    )
    assert "Broken" in text and "</html>" in text


# --------------------------------------------------------------------------- cautions


def test_ranking_views_carry_the_funds_caution_first():
    """Where districts are ranked, the index-alone caution leads (the order of
    explorer.present.cautions: a decision rests on the office's own rules first)."""
    chosen = cautions.for_view("brackets", ranking=True)
    assert chosen[0] == cautions.CAUTIONS["funds"]
    assert cautions.CAUTIONS["funds"] not in cautions.for_view("brackets", ranking=False)


@pytest.mark.parametrize(
    ("kind", "key"), [("brackets", "grouped"), ("units", "samples"), ("means", "means")]
)
def test_each_kind_of_data_gets_its_own_caution(kind, key):
    assert cautions.CAUTIONS[key] in cautions.for_view(kind, ranking=False)


def test_wide_intervals_and_unknown_concept_are_flagged():
    chosen = cautions.for_view("units", ranking=False, wide_intervals=3, income_concept="")
    assert any("3 districts have wide" in c for c in chosen)
    assert cautions.CAUTIONS["concept_unknown"] in chosen
    one = cautions.for_view("units", ranking=False, wide_intervals=1)
    assert any("1 district has wide" in c for c in one)
    assert cautions.CAUTIONS["concept_unknown"] not in cautions.for_view(
        "units", ranking=False, income_concept="disposable, per person"
    )
