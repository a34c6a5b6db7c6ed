"""Nothing leaves the machine: every page loads only from the local server.

Every request of every page (scripts, styles, fonts, images, the page icon, chart resources)
is recorded; any address other than the local server fails the test, and such requests are
blocked so that the test itself never reaches outside. Headless Chromium does not report the
fetch of a page icon as a request, so the addresses the page refers to (icons, images,
scripts, style sheets, frames) are checked in the document as well.
"""

from __future__ import annotations

from urllib.parse import urlparse

import pytest
from browser_helpers import settle

from explorer.present.vocabulary import PAGES

pytestmark = pytest.mark.browser

#: Every address a document refers to for something it loads.
REFERENCED = """() => [...document.querySelectorAll(
    'link[href], img[src], script[src], iframe[src], source[src], image, use, video[src], audio[src]'
  )].map(e => e.getAttribute('href') || e.getAttribute('src')
              || e.getAttribute('xlink:href') || '')
    .filter(Boolean)
    .map(a => new URL(a, document.baseURI).href)"""


def _outside(address: str, server: str) -> bool:
    """True for an address that is neither the local server nor data held in the page."""
    parsed = urlparse(address)
    if parsed.scheme in ("data", "blob", "about"):
        return False
    local = urlparse(server)
    return (parsed.scheme, parsed.hostname, parsed.port) != (
        local.scheme,
        local.hostname,
        local.port,
    ) and not (
        parsed.scheme in ("ws", "wss")
        and (parsed.hostname, parsed.port)
        == (
            local.hostname,
            local.port,
        )
    )


def test_the_outside_check_tells_local_from_outside_addresses():
    server = "http://127.0.0.1:8501"
    assert not _outside("http://127.0.0.1:8501/static/x.js", server)
    assert not _outside("ws://127.0.0.1:8501/_stcore/stream", server)
    assert not _outside("data:image/svg+xml,<svg/>", server)
    assert _outside("https://fonts.gstatic.com/s/i/x.svg", server)
    assert _outside("http://127.0.0.1:9999/", server)
    assert _outside("http://localhost.example/", server)


def test_no_page_loads_anything_from_outside_the_local_server(server, context):
    requested: list[str] = []
    blocked: list[str] = []

    def block(route) -> None:
        blocked.append(route.request.url)
        route.abort()

    context.route(lambda url: _outside(url, server), block)
    context.on("request", lambda request: requested.append(request.url))
    page = context.new_page()
    referenced: list[str] = []
    for name in PAGES:
        page.goto(f"{server}/{name}")
        settle(page)
        page.wait_for_load_state("networkidle", timeout=60_000)
        referenced += page.evaluate(REFERENCED)
    assert requested, "no request was recorded at all"
    outside = sorted(
        {address for address in requested + blocked + referenced if _outside(address, server)}
    )
    assert outside == [], f"requests or references to outside addresses: {outside}"
