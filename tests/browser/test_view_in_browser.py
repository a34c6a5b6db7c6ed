"""In the browser: a copied link brings back every control, and names from data stay text."""

from __future__ import annotations

import json
import sys
from pathlib import Path
from urllib.parse import urlparse

import pandas as pd
import pytest
from browser_helpers import settle, shot

pytestmark = pytest.mark.browser

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "app"))


def _open(context, url: str):
    page = context.new_page()
    page.goto(url)
    settle(page)
    # Every bound control has drawn its input (the sidebar's year slider comes last).
    page.wait_for_selector('[data-testid="stSidebar"] .st-key-ctl_year input')
    page.wait_for_function(
        "() => [...document.querySelectorAll('[class*=\"st-key-ctl_\"]')]"
        ".every(b => b.querySelector('input, button[role=\"radio\"]'))"
    )
    settle(page)
    return page


def _controls(page) -> dict[str, str]:
    """What every bound control on the page shows, by its view field."""
    shown: dict[str, str] = {}
    for box in page.locator('[class*="st-key-ctl_"]').all():
        key = next(c for c in box.get_attribute("class").split() if c.startswith("st-key-ctl_"))
        field = key.removeprefix("st-key-ctl_")
        switch = box.locator('input[type="checkbox"]')
        slider = box.locator('input[type="range"]')
        combo = box.locator('input[role="combobox"]')
        segments = box.locator('button[role="radio"]')
        if switch.count():
            shown[field] = str(switch.first.is_checked())
        elif slider.count():
            shown[field] = slider.first.get_attribute("aria-valuetext") or ""
        elif segments.count():
            chosen = box.locator('button[role="radio"][aria-checked="true"]')
            shown[field] = chosen.first.inner_text() if chosen.count() else ""
        elif combo.count():  # a select box, or a multiselect's chosen tags and its input
            shown[field] = box.inner_text() + "|" + combo.first.input_value()
        else:
            shown[field] = box.inner_text()
    return shown


def _wait_for(page, key: str, value: str) -> None:
    page.wait_for_function(
        "([k, v]) => new URL(location.href).searchParams.get(k) === v", arg=[key, value]
    )
    settle(page)


def test_controls_set_by_hand_come_back_in_a_fresh_browser_from_the_copied_link(
    server, browser, context
):
    page = _open(context, f"{server}/")
    # Atlas: classes, their number, the wide-bounds outline, then the clusters layer.
    page.locator(".st-key-ctl_classes input[role='combobox']").click()
    page.get_by_role("option", name="Natural breaks").click()
    _wait_for(page, "cl", "breaks")
    page.locator(".st-key-ctl_k input[type='range']").focus()
    page.keyboard.press("ArrowRight")
    _wait_for(page, "k", "6")
    page.locator(".st-key-ctl_show_intervals label").click()
    _wait_for(page, "iv", "0")
    index_layer = _controls(page)
    page.locator(".st-key-ctl_layer").get_by_role("radio", name="Local clusters").click()
    _wait_for(page, "ly", "clusters")
    cluster_layer = _controls(page)
    atlas_link = page.url
    # Timelines: one panel per county, two districts highlighted.
    page.get_by_role("link", name="Timelines").click()
    settle(page)
    page.locator(".st-key-ctl_by_county label").click()
    _wait_for(page, "pc", "1")
    timelines = _controls(page)
    timelines_link = page.url
    assert cluster_layer["layer"] == "Local clusters" and timelines["by_county"] == "True"

    fresh = browser.new_context(viewport={"width": 1400, "height": 1800})
    fresh.set_default_timeout(60_000)
    try:
        assert _controls(_open(fresh, timelines_link)) == timelines
        assert _controls(_open(fresh, atlas_link)) == cluster_layer
        # The same link without its layer shows the index layer's hidden controls as set.
        query = {k: v for k, v in (p.split("=") for p in urlparse(atlas_link).query.split("&"))}
        query.pop("ly")
        again = _open(fresh, f"{server}/?" + "&".join(f"{k}={v}" for k, v in query.items()))
        assert _controls(again) == index_layer
        assert index_layer["classes"].endswith("|Natural breaks") and index_layer["k"] == "6"
        shot(again, "link-restores-controls")
    finally:
        fresh.close()


IMAGE = "![x](http://beacon.invalid/b.png)"
HTML = '<img src="http://beacon.invalid/c.png">'
LINK = "[Sign in again](http://phish.invalid/)"


def _hostile(workspace: Path, tmp: Path) -> str:
    from explorer import data as readers
    from explorer.data.workspace import Workspace

    panel_path, boundary_path = readers.demo_paths("brackets")
    frame = pd.read_csv(panel_path)
    frame["county"] = frame["county"].replace({"Brennhollow": LINK})
    shapes = json.loads(boundary_path.read_text())
    for feature in shapes["features"]:
        properties = feature["properties"]
        if properties["county"] == "Brennhollow":
            properties["county"] = LINK
        properties["name"] = {"BRE01": IMAGE, "BRE02": HTML}.get(
            properties["region"], properties["name"]
        )
    csv, geo = tmp / "hostile.csv", tmp / "hostile.geojson"
    frame.to_csv(csv, index=False)
    geo.write_text(json.dumps(shapes))
    panel = readers.load_panel(csv, geo)
    options = {"kind": None, "column_map": None, "boundary_id": None, "crs": None}
    return Workspace(workspace).add(panel, [csv, geo], options)


@pytest.mark.parametrize("path", ["", "timelines", "breakdown", "district"])
def test_markup_in_names_and_link_values_draws_no_image_link_or_element(
    server, context, workspace, tmp_path, path
):
    dataset = _hostile(workspace, tmp_path)
    page = context.new_page()
    outside: list[str] = []
    # Requests the data could cause: every address in the names and links is *.invalid.
    page.on(
        "request",
        lambda request: (
            outside.append(request.url)
            if not request.url.startswith(server) and ".invalid" in request.url
            else None
        ),
    )
    bad = "%5BSign%20in%20again%5D(http%3A%2F%2Fphish.invalid%2F)"
    page.goto(f"{server}/{path}?d={dataset}&sel=BRE01,BRE02,{bad}&ix={bad}")
    settle(page)
    main = page.locator('[data-testid="stAppViewContainer"]')
    live = main.locator('img[src*="invalid"], a[href*="invalid"]')
    where = live.evaluate_all(
        "els => els.map(e => [e.outerHTML.slice(0, 120), "
        "[...(function*(n){while(n){if(n.dataset&&n.dataset.testid)yield n.dataset.testid;"
        "n=n.parentElement}})(e)].slice(0, 4).join('<')])"
    )
    assert where == [], where
    assert page.locator('[data-testid="stMarkdownContainer"] img').count() == 0
    # What the reader sees, without the invisible word joiner that keeps addresses unlinked.
    text = main.inner_text().replace("\u2060", "")
    if path == "district":  # the names are there, as typed
        assert IMAGE in text and LINK in text
    assert "Sign in again" in text  # the link value is quoted in the notice
    shot(page, f"markup-as-text-{path or 'atlas'}")
    assert outside == [], outside
