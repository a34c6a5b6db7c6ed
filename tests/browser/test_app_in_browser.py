"""The real app in headless Chromium: pages, the link in the address bar, downloads, uploads."""

from __future__ import annotations

import re
from urllib.parse import parse_qs, urlparse

import pandas as pd
import pytest
from browser_helpers import ROOT, settle, shot

pytestmark = pytest.mark.browser

PAGES = {
    "": "Map",
    "timelines": "Timelines",
    "breakdown": "Breakdown",
    "district": "District sheet",
    "intake": "Intake",
}


def query(page) -> dict[str, str]:
    return {k: v[-1] for k, v in parse_qs(urlparse(page.url).query).items()}


def no_errors(page) -> None:
    assert page.locator('[data-testid="stException"]').count() == 0
    assert page.locator("text=Something went wrong").count() == 0


def test_every_page_opens_and_draws_without_an_error(server, context):
    page = context.new_page()
    for path, title in PAGES.items():
        page.goto(f"{server}/{path}")
        settle(page)
        assert page.locator("h1").first.inner_text().strip() == title
        no_errors(page)
        if path != "intake":
            # The cautions box closes every analysis page: the run has reached the end.
            page.wait_for_selector(".st-key-cautions_box", timeout=60_000)
            page.wait_for_selector(".vega-embed svg, .vega-embed canvas", timeout=60_000)
            settle(page)
        shot(page, f"page-{path or 'atlas'}")


def year_slider(page):
    return page.locator('[data-testid="stSidebar"] input[type="range"]').first


def test_moving_the_year_writes_it_into_the_address_and_a_copied_link_reopens_it(
    server, browser, context
):
    page = context.new_page()
    page.goto(f"{server}/")
    settle(page)
    slider = year_slider(page)
    assert slider.get_attribute("aria-valuetext") == "2025"
    before = page.locator('[data-testid="stMetricValue"]').first.inner_text()
    slider.focus()
    for _ in range(3):
        page.keyboard.press("ArrowLeft")
    page.wait_for_function(
        "() => new URL(location.href).searchParams.get('y') === '2022'", timeout=30_000
    )
    # The address changes as the run starts; wait for the redrawn figures too.
    page.wait_for_function(
        "(old) => document.querySelector('[data-testid=\"stMetricValue\"]').innerText !== old",
        arg=before,
        timeout=30_000,
    )
    settle(page)
    highest = page.locator('[data-testid="stMetricValue"]').first.inner_text()
    link = page.url
    assert query(page)["y"] == "2022"

    fresh = browser.new_context(viewport={"width": 1400, "height": 1000})
    fresh.set_default_timeout(60_000)
    try:
        other = fresh.new_page()
        other.goto(link)
        settle(other)
        assert year_slider(other).get_attribute("aria-valuetext") == "2022"
        assert other.locator('[data-testid="stMetricValue"]').first.inner_text() == highest
        assert query(other)["y"] == "2022"
        shot(other, "copied-link-2022")
    finally:
        fresh.close()


def test_clicking_a_district_on_the_map_opens_its_district_sheet(server, context):
    page = context.new_page()
    page.goto(f"{server}/")
    settle(page)
    # Interior districts of the invented province are convex Voronoi cells, so the
    # centre of a cell's outline lies inside it.
    district = page.locator('[data-testid="stVegaLiteChart"] path[aria-label*="Id: OSS03;"]')
    district.wait_for(timeout=30_000)
    page.wait_for_timeout(500)  # let Vega attach its event handlers
    district.click()
    page.wait_for_url(re.compile(r"/district\?.*sel="), timeout=30_000)
    settle(page)
    assert page.locator("h1").first.inner_text().strip() == "District sheet"
    assert query(page)["sel"] == "OSS03"
    assert "(OSS03)" in page.locator('[data-testid="stMain"]').inner_text()
    shot(page, "map-click-district")


def test_a_bad_link_shows_a_notice_and_the_default_view(server, context):
    page = context.new_page()
    page.goto(f"{server}/?y=abc&ix=evil()&k=99")
    settle(page)
    assert page.locator("text=reset to defaults").count() == 1
    assert year_slider(page).get_attribute("aria-valuetext") == "2025"
    no_errors(page)
    shot(page, "bad-link")


def test_the_report_downloads_as_one_offline_html_file(server, context, tmp_path):
    page = context.new_page()
    page.goto(f"{server}/intake")
    settle(page)
    page.get_by_role("tab", name="Take results out").click()
    with page.expect_download(timeout=60_000) as download:
        page.get_by_role("button", name="Report (one HTML file)").click()
    path = tmp_path / download.value.suggested_filename
    download.value.save_as(path)
    html = path.read_text(encoding="utf-8")
    assert path.suffix == ".html" and "<svg" in html
    assert not re.search(r"<(script|link)[^>]+(src|href)=[\"']https?://", html)
    assert "Kellvaran" in html or "demo" in html.lower()


def upload_panel(page, server, name: str, content: bytes) -> None:
    page.goto(f"{server}/intake")
    settle(page)
    page.locator('[data-testid="stFileUploader"] input[type="file"]').first.set_input_files(
        {"name": name, "mimeType": "text/csv", "buffer": content}
    )
    page.get_by_role("button", name="Read and check").click()
    page.wait_for_selector("text=now shown on every page of this session", timeout=60_000)
    settle(page)


def sidebar_datasets(page) -> list[str]:
    page.locator('[data-testid="stSidebar"] [data-testid="stSelectbox"]').first.click()
    options = page.locator('[role="option"]').all_inner_texts()
    page.keyboard.press("Escape")
    return options


def indices_csv(page, tmp_path, name: str) -> pd.DataFrame:
    page.get_by_role("tab", name="Take results out").click()
    with page.expect_download(timeout=60_000) as download:
        page.get_by_role("button", name="Table (CSV)").first.click()
    path = tmp_path / name
    download.value.save_as(path)
    return pd.read_csv(path)


def test_two_sessions_uploading_different_panels_each_see_only_their_own(server, browser, tmp_path):
    frame = pd.read_csv(ROOT / "demo_data" / "deciles.csv")
    panels = {
        "north.csv": frame[frame["county"] == "Brennhollow"],
        "south.csv": frame[frame["county"] == "Quillmarsh"],
    }
    contexts = {name: browser.new_context(accept_downloads=True) for name in panels}
    for ctx in contexts.values():
        ctx.set_default_timeout(60_000)
    try:
        pages = {name: ctx.new_page() for name, ctx in contexts.items()}
        for name, table in panels.items():
            upload_panel(pages[name], server, name, table.to_csv(index=False).encode())
        for name, page in pages.items():
            other = next(n for n in panels if n != name)
            listed = " ".join(sidebar_datasets(page))
            assert name.removesuffix(".csv") in listed
            assert other.removesuffix(".csv") not in listed
            downloaded = indices_csv(page, tmp_path, f"indices-{name}")
            assert set(downloaded["region"]) == set(panels[name]["region"])
            shot(page, f"upload-{name.removesuffix('.csv')}")
    finally:
        for ctx in contexts.values():
            ctx.close()


def download(page, button: str, folder) -> bytes:
    with page.expect_download() as pending:
        page.get_by_role("button", name=button).first.click()
    path = folder / pending.value.suggested_filename
    pending.value.save_as(path)
    return path.read_bytes()


def test_the_atlas_downloads_its_map_as_svg_png_and_clockwise_geojson(server, context, tmp_path):
    import io
    import json

    import shapely
    from shapely.geometry import shape

    page = context.new_page()
    page.goto(f"{server}/?y=2019")
    settle(page)
    page.get_by_text("Download: atlas-gini-2019").click()
    svg = download(page, "Chart (SVG)", tmp_path).decode("utf-8")
    assert svg.lstrip().startswith("<svg") and "2019" in svg
    png = download(page, "Chart (PNG)", tmp_path)
    assert png[:8] == b"\x89PNG\r\n\x1a\n"  # the PNG signature (ISO/IEC 15948)
    layer = json.loads(download(page, "Map layer (GeoJSON)", tmp_path))
    assert len(layer["features"]) == 46  # demo_data/README.md: 46 districts
    # Vega (d3-geo) needs clockwise exterior rings; shapely says whether a ring is CCW.
    for feature in layer["features"]:
        geometry = shape(feature["geometry"])
        for polygon in getattr(geometry, "geoms", [geometry]):
            assert not polygon.exterior.is_ccw
            assert shapely.is_valid(polygon)
    ranked = pd.read_csv(io.BytesIO(download(page, "Table (CSV)", tmp_path)))
    assert len(ranked) == 46 and (ranked["value"].diff().dropna() <= 0).all()


def chart_texts(page, first_line: str) -> list[str]:
    """Every text Vega drew, once every chart has drawn and one begins with ``first_line``."""
    page.wait_for_function(
        "(start) => [...document.querySelectorAll('[data-testid=\"stVegaLiteChart\"]')]"
        ".every(c => c.querySelector('svg text')) && [...document.querySelectorAll("
        "'[data-testid=\"stVegaLiteChart\"] svg text')].some(t => t.textContent"
        ".startsWith(start))",
        arg=first_line,
        timeout=60_000,
    )
    page.wait_for_timeout(500)  # the other charts of the page finish their drawing
    return page.evaluate(
        "() => [...document.querySelectorAll('[data-testid=\"stVegaLiteChart\"] svg text')]"
        ".map(t => t.textContent)"
    )


def test_no_title_caption_axis_or_legend_text_is_cut_off(server, context):
    # Vega shortens a text longer than its limit with an ellipsis (Vega docs: "limit");
    # a cut caption hides the data source and the method a planner needs.
    page = context.new_page()
    for path in ("", "timelines", "breakdown", "district"):
        page.goto(f"{server}/{path}")
        settle(page)
        texts = chart_texts(page, "Dots: " if path == "district" else "Data: ")
        assert not [text for text in texts if text.endswith("…")], (path, texts)
        no_errors(page)


def test_a_view_file_saved_on_intake_reopens_its_page_and_year(server, context, tmp_path):
    page = context.new_page()
    page.goto(f"{server}/timelines?y=2012&ix=theil_t")
    settle(page)
    page.get_by_role("link", name="Intake").click()
    settle(page)
    page.get_by_role("tab", name="Take results out").click()
    saved = tmp_path / "view.json"
    saved.write_bytes(download(page, "View file (JSON)", tmp_path))
    page.goto(f"{server}/intake?y=2019")
    settle(page)
    page.get_by_role("tab", name="Take results out").click()
    # The view-file uploader by its own label: the Intake page holds other uploaders too.
    uploader = page.locator('[data-testid="stFileUploader"]').filter(has_text="Open a view file")
    uploader.locator('input[type="file"]').set_input_files(saved)
    # The upload reruns the page; the button appears once the file is in.
    uploader.get_by_text("view.json").wait_for(timeout=120_000)
    settle(page, timeout=120_000)
    apply = page.get_by_role("button", name="Apply the view file")
    apply.wait_for(state="visible", timeout=120_000)
    apply.click()
    page.wait_for_url(re.compile(r"/timelines\?"), timeout=60_000)
    settle(page)
    assert page.locator("h1").first.inner_text().strip() == "Timelines"
    assert query(page)["y"] == "2012" and query(page)["ix"] == "theil_t"
    no_errors(page)
    shot(page, "view-file-reopened")


def test_a_panel_with_one_broken_district_year_is_used_and_the_problem_written_out(server, context):
    frame = pd.read_csv(ROOT / "demo_data" / "deciles.csv")
    broken = (frame["region"] == "OSS03") & (frame["year"] == 2020)
    frame.loc[broken, "share_3"] = 0.9  # the shares of this district-year no longer sum to 1
    page = context.new_page()
    upload_panel(page, server, "one_broken.csv", frame.to_csv(index=False).encode())
    text = page.locator('[data-testid="stMain"]').inner_text()
    assert "1 district-year(s) were left out" in text
    # The full sentence, not a cut-off table cell: where, what and how to fix.
    # A wide file's problem names the file's own share columns (share_1 … share_10).
    assert re.search(r"one_broken\.csv, line \d+, column 'share_1…share_10'", text)
    assert "district OSS03, year 2020 left out" in text and "How to fix:" in text
    no_errors(page)
    shot(page, "upload-one-broken")


@pytest.mark.parametrize(
    ("dataset", "figure", "words"),
    [
        ("demo-published", "median_income", ("Median income, as published", "as published")),
        ("demo-means", "mean_ratio", ("Mean income ÷ province mean", "province mean")),
        ("demo-means", "mean_growth", ("Growth since", "growth of mean income since")),
    ],
)
def test_published_figures_and_district_means_on_every_page(
    server, context, dataset, figure, words
):
    page = context.new_page()
    for path in ("", "timelines", "district", "breakdown"):
        page.goto(f"{server}/{path}?d={dataset}&ix={figure}&sel=CAL01")
        settle(page)
        no_errors(page)
        # the cautions box closes every analysis page: the run has reached the end
        page.wait_for_selector(".st-key-cautions_box", timeout=60_000)
        if path != "breakdown":  # published figures have no chart there, by design
            page.wait_for_selector(".vega-embed svg, .vega-embed canvas", timeout=60_000)
        settle(page)
        shot(page, f"{dataset}-{figure}-{path or 'map'}")
        if path == "":
            for word in words:
                assert page.get_by_text(word, exact=False).count() >= 1, word
        if path == "district":
            # the sheet names the district's rank among all the districts
            assert page.get_by_text(re.compile(r"\d+ of 46")).count() >= 1


def test_the_district_sheet_compares_two_districts_from_the_link(server, context):
    page = context.new_page()
    page.goto(f"{server}/district?sel=CAL01,BRE01&ix=fgt_1")
    settle(page)
    page.wait_for_selector(".st-key-cautions_box", timeout=60_000)
    page.wait_for_selector("text=Side by side")
    page.wait_for_selector("text=Lorenz curve lies above")
    settle(page)
    no_errors(page)
    shot(page, "district-compare")
    page.get_by_text("Side by side").scroll_into_view_if_needed()
    page.wait_for_timeout(500)
    page.screenshot(path=str(shot(page, "district-compare").with_name("district-pair.png")))
