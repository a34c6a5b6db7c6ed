"""Two boundary vintages and a change table through Intake in a real browser, then the
carried trajectories across the change on Timelines.

The invented province of Tarrowmere (tests/fixtures/vintages/make_vintages.py): Ardley
split, Bexmoor and Corvain merged into Bexvale, the Dunholt-Eskwith border moved, in 2011.
"""

from __future__ import annotations

import importlib.util
from urllib.parse import parse_qs, quote, urlparse

import pytest
from browser_helpers import ROOT, settle, shot

pytestmark = pytest.mark.browser

FIXTURES = ROOT / "tests" / "fixtures" / "vintages"


def _files(folder) -> dict[str, dict]:
    spec = importlib.util.spec_from_file_location("make_vintages", FIXTURES / "make_vintages.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    paths = module.write(folder)
    kinds = {"panel": "text/csv", "changes": "text/csv"}
    return {
        key: {
            "name": path.name,
            "mimeType": kinds.get(key, "application/geo+json"),
            "buffer": path.read_bytes(),
        }
        for key, path in paths.items()
    }


def _uploader(page, label: str):
    found = page.locator('[data-testid="stFileUploader"]').filter(has_text=label)
    return found.first.locator('input[type="file"]')


def _number(page, label: str, value: int) -> None:
    box = page.get_by_label(label).first
    box.fill(str(value))
    box.press("Enter")
    settle(page)


def test_two_vintages_and_a_change_table_give_a_trajectory_across_the_change(
    server, context, tmp_path
):
    files = _files(tmp_path)
    page = context.new_page()
    page.goto(f"{server}/intake")
    settle(page)
    _uploader(page, "Panel file").set_input_files(files["panel"])
    settle(page)
    _uploader(page, "Boundary file (optional)").set_input_files(files["old"])
    settle(page)
    page.get_by_text("Boundary changes (optional)").first.click()
    settle(page)
    _number(page, "The boundary file above is valid from", 2001)
    _uploader(page, "A second boundary file").set_input_files(files["new"])
    settle(page)
    _number(page, "Valid from year", 2011)
    _uploader(page, "Change table").set_input_files(files["changes"])
    settle(page)
    page.get_by_role("button", name="Read and check").click()
    page.wait_for_selector("text=now shown on every page of this session")
    settle(page)
    page.wait_for_selector("text=Years carried to the 2011 boundaries", state="attached")
    page.get_by_role("button", name="Save to the shared workspace").click()
    settle(page)
    page.wait_for_function("() => !location.search.includes('upload-')")
    dataset = parse_qs(urlparse(page.url).query).get("d", [""])[-1]
    assert dataset and dataset != "demo"

    chosen = quote("Bexvale,Ardley North")
    page.goto(f"{server}/timelines?d={dataset}&sel={chosen}")
    settle(page)
    assert page.locator('[data-testid="stException"]').count() == 0
    chart = page.locator('[data-testid="stVegaLiteChart"]').first
    chart.wait_for()
    # Vega draws the legend and axes as SVG text
    text = chart.evaluate(
        "c => [...c.querySelectorAll('svg text')].map(t => t.textContent).join(' ')"
    )
    # the legend says how the hollow points were carried, and the years run across 2011
    assert "carried to the 2011 boundaries: merged from Bexmoor, Corvain" in text
    assert "carried to the 2011 boundaries: split from Ardley (weight 0.55)" in text
    assert "2009" in text and "2012" in text
    chart.scroll_into_view_if_needed()
    shot(page, "timelines-carried-across-2011")
