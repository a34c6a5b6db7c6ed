"""Helpers for the browser tests: waiting for the app, screenshots."""

from __future__ import annotations

import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
SCREENSHOTS = Path(__file__).resolve().parent / "screenshots"


def settle(page, timeout: float = 60_000) -> None:
    """Wait until the app has finished its run (no running indicator, a title shown)."""
    page.wait_for_selector("h1", timeout=timeout)
    page.wait_for_function(
        "() => !document.querySelector('[data-testid=\"stStatusWidget\"]')",
        timeout=timeout,
    )
    page.wait_for_timeout(300)
    # Every chart on the page has been drawn by Vega (an SVG or a canvas inside it).
    page.wait_for_function(
        "() => [...document.querySelectorAll('[data-testid=\"stVegaLiteChart\"]')]"
        ".every(c => c.querySelector('svg, canvas'))",
        timeout=timeout,
    )
    page.wait_for_function(
        "() => !document.querySelector('[data-testid=\"stStatusWidget\"]')",
        timeout=timeout,
    )
    # The running indicator shows only after a moment: a page still computing its first
    # figures can look finished. Wait until the page's text stops changing.
    deadline = time.monotonic() + timeout / 1000
    before = None
    while time.monotonic() < deadline:
        now = page.locator('[data-testid="stMain"]').inner_text()
        if now == before:
            break
        before = now
        page.wait_for_timeout(700)


def shot(page, name: str) -> Path:
    """Save a full-page screenshot to tests/browser/screenshots/ (git-ignored)."""
    SCREENSHOTS.mkdir(exist_ok=True)
    path = SCREENSHOTS / f"{name}.png"
    page.screenshot(path=str(path), full_page=True)
    return path
