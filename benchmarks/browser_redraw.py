"""Benchmark: redraw of the Atlas in a real browser after a change of index or year.

    python benchmarks/browser_redraw.py          # 8 changes of each kind
    python benchmarks/browser_redraw.py --quick  # 4 of each

Starts the app on the demo (loopback only), drives Debian's Chromium with playwright, and
times each change from the click or key press until the map's new title has been drawn by
Vega; then the first load of a fresh server and the first click on each other page (from
the click until its charts are drawn). The baseline, measured in the same run, is a full
reload of the same view: what a user would otherwise wait for. Needs /usr/bin/chromium. The last line is one JSON object.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import socket
import statistics
import subprocess
import tempfile
import time
from pathlib import Path

from playwright.sync_api import sync_playwright

from explorer import serving
from explorer.serving import app_command, wait_until_serving

ROOT = Path(__file__).resolve().parent.parent
ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
]
INDICES = [
    ("Theil T", "Theil T"),
    ("Gini coefficient", "Gini"),
    ("Mean log deviation (Theil L)", "Mean log"),
]
DRAWN = (
    "(want) => [...document.querySelectorAll('[data-testid=\"stVegaLiteChart\"] svg text')]"
    ".some(t => t.textContent.startsWith(want) || t.textContent.includes(want))"
)


#: Pages whose first visit is timed, by their title in the navigation.
FIRST_VISITS = ("Timelines", "Breakdown", "District sheet", "Compare")
#: True once the page titled ``arg`` is up and every chart on it has been drawn by Vega.
PAGE_DRAWN = """(title) => {
  const heading = [...document.querySelectorAll('h1')].some(h => h.innerText.trim() === title);
  const running = document.querySelector('[data-testid="stStatusWidget"]');
  const charts = document.querySelectorAll('.vega-embed');
  const drawn = [...charts].every(c => c.querySelector('svg, canvas'));
  return heading && !running && charts.length > 0 && drawn;
}"""


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def start_server(port: int, data: str) -> subprocess.Popen:
    # serving.start_server: the server also stops when this benchmark is killed.
    server = serving.start_server(
        app_command(port),
        cwd=ROOT,
        env={**os.environ, "RIFT_DATA": data},
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    if not wait_until_serving(f"http://127.0.0.1:{port}", 60, server):
        serving.stop_server(server)
        raise SystemExit("the app did not start within 60 s")
    return server


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    changes = 4 if parser.parse_args().quick else 8
    port = free_port()
    started = time.time()
    with tempfile.TemporaryDirectory() as data:
        server = start_server(port, data)
        try:
            with sync_playwright() as p:
                browser = p.chromium.launch(executable_path="/usr/bin/chromium", args=ARGS)
                page = browser.new_page(viewport={"width": 1400, "height": 1000})
                url = f"http://127.0.0.1:{port}/"
                t0 = time.perf_counter()
                page.goto(url)
                page.wait_for_function(DRAWN, arg="Gini coefficient", timeout=60_000)
                first_load = time.perf_counter() - t0  # nothing computed or cached yet
                # the first click on a district: its sheet is computed on arrival
                district = page.locator(
                    '[data-testid="stVegaLiteChart"] path[aria-label*="Id: OSS03;"]'
                )
                district.wait_for(timeout=60_000)
                page.wait_for_timeout(500)  # let Vega attach its event handlers
                t0 = time.perf_counter()
                district.click()
                page.wait_for_function(PAGE_DRAWN, arg="District sheet", timeout=120_000)
                first_district = time.perf_counter() - t0
                page.goto(url)
                page.wait_for_function(DRAWN, arg="Gini coefficient", timeout=60_000)
                reload, index, year = [], [], []
                for _ in range(max(2, changes // 2)):
                    t0 = time.perf_counter()
                    page.goto(url)
                    page.wait_for_function(DRAWN, arg="Gini coefficient", timeout=60_000)
                    reload.append(time.perf_counter() - t0)
                for step in range(changes):
                    name, want = INDICES[step % len(INDICES)]
                    page.locator('[data-testid="stSidebar"] [data-testid="stSelectbox"]').nth(
                        1
                    ).click()
                    page.wait_for_timeout(300)
                    option = page.get_by_role("option", name=name, exact=True)
                    t0 = time.perf_counter()
                    option.click()
                    page.wait_for_function(DRAWN, arg=want, timeout=60_000)
                    index.append(time.perf_counter() - t0)
                    page.wait_for_timeout(500)
                slider = page.get_by_role("slider").first
                shown = 2025  # the demo's latest year, where the Atlas opens
                for step in range(changes):
                    key = "ArrowLeft" if step % 2 == 0 else "ArrowRight"
                    shown += -1 if key == "ArrowLeft" else 1
                    slider.focus()
                    t0 = time.perf_counter()
                    slider.press(key)
                    page.wait_for_function(DRAWN, arg=f", {shown}", timeout=60_000)
                    year.append(time.perf_counter() - t0)
                    page.wait_for_timeout(500)
                # the first click on each other page: its figures are computed on arrival
                first_visit = {}
                for title in FIRST_VISITS:
                    link = page.locator('[data-testid="stSidebarNav"] a', has_text=title).first
                    t0 = time.perf_counter()
                    link.click()
                    page.wait_for_function(PAGE_DRAWN, arg=title, timeout=120_000)
                    first_visit[title] = time.perf_counter() - t0
                    page.wait_for_timeout(500)
                browser.close()
        finally:
            serving.stop_server(server, timeout=30)
    base = statistics.median(reload)
    figures = {
        "reload_median_s": round(base, 3),
        "index_change_median_s": round(statistics.median(index), 3),
        "index_change_max_s": round(max(index), 3),
        "year_change_median_s": round(statistics.median(year), 3),
        "year_change_max_s": round(max(year), 3),
        "first_load_s": round(first_load, 3),
        "first_district_click_s": round(first_district, 3),
        "first_index_change_s": round(index[0], 3),
        **{f"first_visit_{t.split()[0].lower()}_s": round(v, 3) for t, v in first_visit.items()},
    }
    for key, value in figures.items():
        print(f"{key:>24}: {value}")
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print(
        json.dumps(
            {
                "name": "browser_redraw" + ("-quick" if changes == 4 else ""),
                "seconds": round(time.time() - started, 1),
                "peak_memory_mb": round(peak, 1),
                "ratios": {
                    "index_change_to_reload": round(statistics.median(index) / base, 3),
                    "year_change_to_reload": round(statistics.median(year) / base, 3),
                    "first_load_to_reload": round(first_load / base, 3),
                },
                "figures": figures,
            }
        )
    )


if __name__ == "__main__":
    main()
