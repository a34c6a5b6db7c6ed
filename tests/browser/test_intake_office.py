"""An office table and the parts of a Shapefile through Intake in a real browser: a name
suggestion accepted, levels chosen and named, the dataset saved and its link reopened."""

from __future__ import annotations

from urllib.parse import parse_qs, urlparse

import pytest
from browser_helpers import ROOT, settle, shot

pytestmark = pytest.mark.browser

OFFICE = ROOT / "tests" / "fixtures" / "office"
NAMES = ["Northland", "Ashvale", "Lower Marsh North", "Brindle Cove", "Kestrel Heights"]


def shapefile_parts(folder) -> list[dict]:
    """An invented five-district Shapefile, as the parts a planner picks together."""
    import geopandas as gpd
    from shapely.geometry import box

    frame = gpd.GeoDataFrame(
        {"name": NAMES, "ZONE_CD": ["East", "East", "West", "West", "West"]},
        geometry=[box(10 + i * 0.1, 50, 10.1 + i * 0.1, 50.1) for i in range(5)],
        crs="EPSG:4326",
    )
    frame.to_file(folder / "districts.shp")
    return [
        {"name": p.name, "mimeType": "application/octet-stream", "buffer": p.read_bytes()}
        for p in sorted(folder.glob("districts.*"))
    ]


def test_office_table_and_shapefile_parts_are_saved_and_the_link_reopens(server, context, tmp_path):
    page = context.new_page()
    page.goto(f"{server}/intake")
    settle(page)
    inputs = page.locator('[data-testid="stFileUploader"] input[type="file"]')
    across = OFFICE / "income_years_across.csv"
    inputs.nth(0).set_input_files(
        {"name": across.name, "mimeType": "text/csv", "buffer": across.read_bytes()}
    )
    settle(page)
    inputs.nth(1).set_input_files(shapefile_parts(tmp_path))
    settle(page)
    page.wait_for_selector("text=years across the columns")
    accept = page.get_by_role(
        "checkbox", name="'Lower Marsh' in the panel is 'Lower Marsh North' in the boundaries"
    )
    accept.check(force=True)
    settle(page)
    assert accept.is_checked()
    name = page.get_by_label("Name shown").first
    name.fill("Zone")
    name.press("Enter")
    settle(page)
    page.get_by_role("button", name="Read and check").click()
    page.wait_for_selector("text=now shown on every page of this session")
    settle(page)
    # the summary is a data grid: its cells are in the page for assistive technology
    page.wait_for_selector("text=5 districts matched", state="attached", timeout=30_000)
    source = page.get_by_label("Source")
    source.fill("Valdoria Board of Statistics")
    source.press("Enter")
    settle(page)
    page.get_by_role("button", name="Save to the shared workspace").click()
    settle(page)
    page.wait_for_function("() => !location.search.includes('upload-')")
    dataset = parse_qs(urlparse(page.url).query).get("d", [""])[-1]
    assert dataset and not dataset.startswith("upload-") and dataset != "demo"
    shot(page, "intake-office-saved")

    other = context.browser.new_context()
    try:
        reopened = other.new_page()
        reopened.goto(page.url)
        settle(reopened)
        assert parse_qs(urlparse(reopened.url).query).get("d", [""])[-1] == dataset
        assert reopened.locator("text=income_years_across").count() >= 1
    finally:
        other.close()
