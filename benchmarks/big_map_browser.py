"""The Map of 3,000 generated districts x 20 years in a real browser: first render, redraws, payload.

Usage: python benchmarks/big_map_browser.py [--quick] [--changes N]

The seeded synthetic country of ``big_map.py`` (not real data; 300 districts with --quick)
is written as a CSV and a GeoJSON file, read and stored in a temporary workspace as a user
would save it, and the app is started on it on a free loopback port. Debian's Chromium,
driven by playwright, opens the Map page on that dataset and times:

* the first render: from opening the address until the map's title for the latest year
  is drawn by Vega and the script is idle (nothing computed or cached before);
* redraws: a change of year (the slider, one step) and of index (the sidebar's list),
  each from the key press or click until the new title is drawn and the script is idle;
  median and max of each kind;
* the payload: the bytes the server sent over the websocket for the first render and for
  each redraw (the whole page; a view seen before comes from the browser's message cache),
  and the map's own payload as the figure function builds it (its spec with the outlines
  as JSON, its tables as Arrow), beside the self-contained spec a download holds.

The baseline, measured in the same run, is a full reload of the same view (the page opened
again with everything cached on the server). The server is started in its own process
group and stopped with SIGTERM to the group; the run checks that nothing is left listening
on the port. Needs /usr/bin/chromium. The last line is one JSON object.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from big_map import country, deciles  # noqa: E402

from explorer import serving  # noqa: E402
from explorer.serving import app_command, wait_until_serving  # noqa: E402

CHROMIUM = "/usr/bin/chromium"
ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
]
#: Index choices in the sidebar's list, in the order they are tried.
INDICES = ["Theil T", "Mean log deviation (Theil L)", "Gini coefficient"]
#: What the map shows now: its canvas's pixels (Vega draws 3,000 districts on a canvas) or
#: its SVG (small maps); "" while there is no map yet.
PICTURE = """() => {
  const box = document.querySelector('.st-key-atlas_map') || document;
  const canvas = box.querySelector('[data-testid="stVegaLiteChart"] canvas');
  if (canvas) return canvas.width > 0 ? canvas.toDataURL() : '';
  const svg = box.querySelector('[data-testid="stVegaLiteChart"] svg');
  return svg && svg.querySelector('path') ? svg.outerHTML : '';
}"""
#: True once the map shows something other than ``before`` and the script is idle.
DRAWN = (
    "(before) => !document.querySelector('[data-testid=\"stStatusWidget\"]') && (() => {"
    + " const now = ("
    + PICTURE
    + ")(); return now !== '' && now !== before; })()"
)
LAST_YEAR = 2025


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def listening(port: int) -> bool:
    with socket.socket() as sock:
        sock.settimeout(0.5)
        return sock.connect_ex(("127.0.0.1", port)) == 0


def store_dataset(n: int, workspace: Path, folder: Path) -> tuple[str, int, int]:
    """The generated country saved in ``workspace`` as a user would save it: its id, the
    bytes of the live map of the latest year (its spec with the outlines as JSON, its tables
    as Arrow) and of the self-contained spec a download holds."""
    from explorer import figures
    from explorer.data.load import load_panel
    from explorer.data.workspace import Workspace
    from explorer.figures.compute import PlainCompute
    from explorer.views import ViewState

    rng = np.random.default_rng(14)
    shapes = country(n, rng)
    frame = deciles(shapes, range(2006, LAST_YEAR + 1), rng)
    csv, geo = folder / "country.csv", folder / "country.geojson"
    frame.to_csv(csv, index=False)
    shapes.to_file(geo, driver="GeoJSON")
    panel = load_panel(csv, geo, levels=["county"])
    options = {"kind": None, "column_map": None, "boundary_id": None, "crs": None}
    ident = Workspace(workspace).add(panel, [csv, geo], options)
    shown = figures.atlas(panel, ViewState(year=LAST_YEAR), PlainCompute(panel))
    live = shown.chart.payload()["total"]
    download = len(json.dumps(shown.chart.to_dict(), separators=(",", ":")).encode())
    return ident, live, download


def start(port: int, workspace: Path, log) -> subprocess.Popen:
    """The app on loopback, in its own process group (stopped as a group at the end)."""
    server = serving.start_server(
        app_command(port),
        cwd=ROOT,
        env={**os.environ, "RIFT_DATA": str(workspace)},
        stdout=log,
        stderr=subprocess.STDOUT,
        start_new_session=True,
    )
    if not wait_until_serving(f"http://127.0.0.1:{port}", 90, server):
        stop(server)
        raise SystemExit("the app did not start within 90 s")
    return server


def stop(server: subprocess.Popen) -> int | None:
    """SIGTERM to the server's process group; SIGKILL to it if it has not ended in 30 s."""
    if server.poll() is None:
        os.killpg(server.pid, signal.SIGTERM)
        try:
            server.wait(timeout=30)
        except subprocess.TimeoutExpired:
            os.killpg(server.pid, signal.SIGKILL)
            server.wait(timeout=30)
    try:  # anything of the group still alive (a child that ignored the signal) goes too
        os.killpg(server.pid, signal.SIGKILL)
    except ProcessLookupError:
        pass
    return server.returncode


class Frames:
    """Bytes the server sends over the page's websockets, counted from the last reset."""

    def __init__(self, page) -> None:
        self.received = 0
        page.on("websocket", self._watch)

    def _watch(self, socket_) -> None:
        socket_.on("framereceived", self._count)

    def _count(self, payload) -> None:
        self.received += len(payload if isinstance(payload, bytes) else payload.encode())

    def take(self) -> int:
        got, self.received = self.received, 0
        return got


def wait_drawn(page, before: str, timeout: int) -> None:
    """Until the map shows a picture other than ``before`` and the script is idle (checked
    every 30 ms: reading a canvas on every animation frame would slow the page itself)."""
    page.wait_for_function(DRAWN, arg=before, timeout=timeout, polling=30)


def measure(port: int, ident: str, changes: int) -> dict:
    from playwright.sync_api import sync_playwright

    url = f"http://127.0.0.1:{port}/?d={ident}"
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        try:
            page = browser.new_page(viewport={"width": 1400, "height": 1000})
            frames = Frames(page)
            t0 = time.perf_counter()
            page.goto(url)
            wait_drawn(page, "", 180_000)
            first = time.perf_counter() - t0
            page.wait_for_timeout(300)
            first_bytes = frames.take()
            reload = []
            for _ in range(2):
                t0 = time.perf_counter()
                page.goto(url)
                wait_drawn(page, "", 120_000)
                reload.append(time.perf_counter() - t0)
            page.wait_for_timeout(500)
            frames.take()
            years, year_bytes = [], []
            slider = page.get_by_role("slider").first
            shown = LAST_YEAR
            for step in range(changes):
                key = "ArrowLeft" if step % 2 == 0 else "ArrowRight"
                shown += -1 if key == "ArrowLeft" else 1
                slider.focus()
                before = page.evaluate(PICTURE)
                frames.take()
                t0 = time.perf_counter()
                slider.press(key)
                wait_drawn(page, before, 120_000)
                years.append(time.perf_counter() - t0)
                page.wait_for_timeout(300)
                year_bytes.append(frames.take())
            index, index_bytes = [], []
            for step in range(changes):
                name = INDICES[step % len(INDICES)]
                page.locator('[data-testid="stSidebar"] [data-testid="stSelectbox"]').nth(1).click()
                page.wait_for_timeout(300)
                option = page.get_by_role("option", name=name, exact=True)
                before = page.evaluate(PICTURE)
                frames.take()
                t0 = time.perf_counter()
                option.click()
                wait_drawn(page, before, 120_000)
                index.append(time.perf_counter() - t0)
                page.wait_for_timeout(300)
                index_bytes.append(frames.take())
        finally:
            browser.close()
    redraws = years + index
    return {
        "first_render_s": round(first, 3),
        "reload_median_s": round(statistics.median(reload), 3),
        "year_change_median_s": round(statistics.median(years), 3),
        "year_change_max_s": round(max(years), 3),
        "index_change_median_s": round(statistics.median(index), 3),
        "index_change_max_s": round(max(index), 3),
        "redraw_median_s": round(statistics.median(redraws), 3),
        "redraw_max_s": round(max(redraws), 3),
        "first_render_sent_mb": round(first_bytes / 1e6, 3),
        "redraw_sent_median_mb": round(statistics.median(year_bytes + index_bytes) / 1e6, 3),
        "redraw_sent_max_mb": round(max(year_bytes + index_bytes) / 1e6, 3),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    parser.add_argument("--changes", type=int, default=6, help="redraws of each kind")
    args = parser.parse_args()
    n = 300 if args.quick else 3000
    started = time.time()
    port = free_port()
    with tempfile.TemporaryDirectory() as tmp:
        workspace, folder = Path(tmp) / "workspace", Path(tmp) / "files"
        folder.mkdir()
        ident, live_bytes, download_bytes = store_dataset(n, workspace, folder)
        with (Path(tmp) / "server.log").open("w") as log:
            server = start(port, workspace, log)
            try:
                found = measure(port, ident, max(2, args.changes))
            finally:
                code = stop(server)
        still = listening(port)
    found = {
        "districts": n,
        **found,
        "map_payload_mb": round(live_bytes / 1e6, 3),
        "map_download_spec_mb": round(download_bytes / 1e6, 3),
    }
    for key, value in found.items():
        print(f"{key:>24}: {value}")
    print(
        f"{'server stopped':>24}: exit status {code}, port {port} "
        + ("STILL LISTENING" if still else "free")
    )
    if still:
        raise SystemExit(f"something is still listening on port {port}")
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print(
        json.dumps(
            {
                "name": "big_map_browser" + ("-quick" if n < 3000 else ""),
                "seconds": round(time.time() - started, 1),
                "peak_memory_mb": round(peak, 1),
                "ratios": {
                    "redraw_to_reload": round(
                        found["redraw_median_s"] / found["reload_median_s"], 3
                    ),
                    "first_render_to_reload": round(
                        found["first_render_s"] / found["reload_median_s"], 3
                    ),
                },
                "figures": found,
            }
        )
    )


if __name__ == "__main__":
    main()
