"""The report prints on A4: the print style sheet and the footer every page repeats.

Checked on the style sheet's text and the document's structure (html.parser), without a
browser. The page size and margin boxes follow CSS Paged Media Module Level 3 (W3C,
sections 7 "Page size" and 5 "Page-margin boxes"); ``position: running()`` and
``element()`` follow CSS Generated Content for Paged Media (W3C, section 3); a table
footer repeating on every printed page follows CSS 2.1, section 17.2 ("table-footer-group").
"""

from __future__ import annotations

import re
from datetime import UTC, datetime
from html.parser import HTMLParser

import pytest

from explorer.present import report
from explorer.views import ViewState

WHEN = datetime(2026, 3, 4, 5, 6, 7, tzinfo=UTC)
FINGERPRINT = "0123456789abcdef"


def _text() -> str:
    return report.build_report(
        ViewState(),
        panel_info={"name": "Vale survey", "fingerprint": FINGERPRINT, "kind": "brackets"},
        tables={},
        charts={},
        notes=[],
        cautions=[],
        generated=WHEN,
    )


def _style(text: str) -> str:
    return "".join(re.findall(r"<style>(.*?)</style>", text, flags=re.S))


def _block(css: str, opening: str) -> str:
    """The text inside the braces of the first rule starting with ``opening``."""
    start = css.index(opening)
    depth, i = 0, css.index("{", start)
    for j in range(i, len(css)):
        depth += {"{": 1, "}": -1}.get(css[j], 0)
        if depth == 0:
            return css[i + 1 : j]
    raise AssertionError(f"unclosed rule {opening}")


class _Footer(HTMLParser):
    """The text of <footer>, and the elements it sits in."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.inside: list[str] = []
        self.text = ""

    def handle_starttag(self, tag, attrs):
        if tag == "footer":
            self.inside = list(self.stack)
        self.stack.append(tag)

    def handle_endtag(self, tag):
        while self.stack and self.stack.pop() != tag:
            pass

    def handle_data(self, data):
        if "footer" in self.stack:
            self.text += data


def test_pages_are_a4_with_margins_and_page_numbers():
    page = _block(_style(_text()), "@page")
    assert re.search(r"size:\s*A4\b", page)
    assert re.search(r"margin:\s*\d+mm", page)
    corner = _block(page, "@bottom-right")
    assert "counter(page)" in corner


def test_print_rules_keep_figures_and_rows_whole_and_hide_controls():
    printed = _block(_style(_text()), "@media print")
    whole = [
        rule for rule in re.findall(r"([^{}]+)\{([^{}]*)\}", printed) if "break-inside" in rule[1]
    ]
    kept = {name.strip() for selector, _ in whole for name in selector.split(",")}
    assert {"figure", "tr"} <= kept
    hidden = [s for s, body in re.findall(r"([^{}]+)\{([^{}]*)\}", printed) if "none" in body]
    assert any("button" in s and "input" in s and "select" in s for s in hidden)
    assert re.search(r"table-footer-group", printed)  # the footer repeats on every page


def test_footer_holds_the_fingerprint_and_the_date_and_repeats_on_every_page():
    parser = _Footer()
    parser.feed(_text())
    assert FINGERPRINT in parser.text
    assert WHEN.isoformat(timespec="seconds") in parser.text
    assert "tfoot" in parser.inside  # a table footer group: drawn on every printed page
    css = _style(_text())
    assert re.search(r"\.running\s*\{[^}]*position:\s*running\(footer\)", css)
    assert "element(footer)" in css


@pytest.mark.parametrize("needle", ["url(", "@import", "http://", "https://"])
def test_the_print_style_fetches_nothing(needle):
    assert needle not in report.PRINT_STYLE
