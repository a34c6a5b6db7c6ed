"""The page icon and the pages' icons are drawn from the local server, never fetched outside.

What Streamlit 1.67 does with an icon was read in its source (``streamlit/commands/
page_config.py`` and the browser bundle it serves, ``static/static/js/index.*.js``):

- ``set_page_config(page_icon=...)``: an emoji is sent as ``emoji:<emoji>`` and drawn by the
  browser as an SVG data address; a ``:material/<name>:`` icon becomes the favicon address
  ``https://fonts.gstatic.com/s/i/short-term/release/materialsymbolsrounded/<name>/...``;
- ``st.Page(icon=":material/...:")`` is drawn in the sidebar with the Material Symbols font
  Streamlit serves itself, but becomes the favicon (fetched as above) when no page icon was
  set before the navigation.

The browser test ``tests/browser/test_offline.py`` records every request; these checks need
no browser.
"""

from __future__ import annotations

import re
from html.parser import HTMLParser
from pathlib import Path
from urllib.parse import urljoin, urlparse
from urllib.request import Request, urlopen

import pytest
import streamlit
from app_helpers import page, run
from streamlit.commands.page_config import _get_favicon_string

from explorer import serving
from explorer.present.vocabulary import APP_ICON, PAGES

STATIC = Path(streamlit.__file__).parent / "static"


def _bundle() -> str:
    texts = [p.read_text(encoding="utf-8") for p in (STATIC / "static" / "js").glob("*.js")]
    (bundle,) = [t for t in texts if "SET_PAGE_FAVICON" in t]
    return bundle


def test_the_favicon_is_an_emoji_drawn_in_the_page():
    assert _get_favicon_string(APP_ICON) == f"emoji:{APP_ICON}"
    bundle = _bundle()
    # what the served bundle does with each kind of favicon (re-read on a Streamlit upgrade)
    assert re.search(r"startsWith\(`emoji:`\)\?\w+\(\w+\(\w+\.slice\(6\)\)\)", bundle)
    assert "`data:image/svg+xml,<svg" in bundle
    assert "fonts.gstatic.com/s/i/short-term/release/materialsymbolsrounded/" in bundle


def test_the_pages_material_icons_come_from_a_font_served_locally():
    assert all(page.icon.startswith(":material/") for page in PAGES.values())
    css = "".join(p.read_text(encoding="utf-8") for p in (STATIC / "static" / "css").glob("*.css"))
    faces = re.findall(r"@font-face\{[^}]*Material Symbols[^}]*\}", css)
    assert faces
    for face in faces:
        for address in re.findall(r"url\(([^)]+)\)", face):
            assert not urlparse(address.strip("'\"")).netloc, address


def test_the_page_icon_is_set_before_the_navigation_on_every_page(app, monkeypatch):
    calls: list[tuple[str, object]] = []
    real_config, real_navigation = streamlit.set_page_config, streamlit.navigation

    def config(*args, **kwargs):
        calls.append(("config", kwargs.get("page_icon")))
        return real_config(*args, **kwargs)

    def navigation(*args, **kwargs):
        calls.append(("navigation", None))
        return real_navigation(*args, **kwargs)

    monkeypatch.setattr(streamlit, "set_page_config", config)
    monkeypatch.setattr(streamlit, "navigation", navigation)
    run(app)
    for name in ("timelines", "intake"):
        app.switch_page(page(name))
        run(app)
    runs = [i for i, (what, _) in enumerate(calls) if what == "navigation"]
    assert len(runs) >= 3
    for at in runs:
        before = [icon for what, icon in calls[:at] if what == "config"]
        assert before and before[-1] == APP_ICON, calls


class _Addresses(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.found: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.found += [v for k, v in attrs if k in ("src", "href") and v]


@pytest.mark.slow
def test_the_served_page_and_its_styles_refer_to_no_other_host(tmp_path):
    import os
    import socket
    import subprocess

    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        port = sock.getsockname()[1]
    base = f"http://127.0.0.1:{port}"
    env = {**os.environ, "RIFT_DATA": str(tmp_path / "workspace")}
    process = serving.start_server(
        serving.app_command(port),
        cwd=serving.PROJECT,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    try:
        assert serving.wait_until_serving(base, 90, process), "the server did not start"
        html = urlopen(Request(f"{base}/"), timeout=30).read().decode("utf-8")
        parser = _Addresses()
        parser.feed(html)
        assert parser.found
        styles = [a for a in parser.found if a.endswith(".css")]
        for address in parser.found:
            assert urlparse(urljoin(f"{base}/", address)).netloc == f"127.0.0.1:{port}", address
        for style in styles:
            css = urlopen(urljoin(f"{base}/", style), timeout=30).read().decode("utf-8")
            for address in re.findall(r"url\(([^)]+)\)", css):
                address = address.strip("'\"")
                if not address.startswith("data:"):
                    assert not urlparse(address).netloc, (style, address)
    finally:
        serving.stop_server(process)
