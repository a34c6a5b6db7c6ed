"""Load test of the app on loopback: many browsers at once versus one alone.

Starts ``streamlit run explorer/app.py`` on a free local port (with a throw-away data
folder), measures the redraw latency of one browser changing the year on its own (the
baseline), then drives ``--users`` headless Chromium contexts at once through every page,
changing the year, for ``--seconds``. Redraw latency is the time from the change until the
app reports its script as idle again, read in the page itself from the
``data-test-script-state`` attribute Streamlit keeps on its root element.

Prints a few progress lines, then one JSON object on the last line: ``name``, ``seconds``,
``users``, ``changes``, the baseline and loaded p50/p95 in milliseconds, their ratios, the
server's peak resident memory and the ``errors`` (exceptions or error messages shown on a
page, failed loads, browser errors, HTTP failures, lost connections), which must be 0.
Stops by itself: a hard limit kills everything after the planned time plus a margin.

    python benchmarks/load.py            # 10 users, about three minutes
    python benchmarks/load.py --quick    # about 30 seconds
"""

from __future__ import annotations

import argparse
import asyncio
import contextlib
import json
import os
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

from explorer import serving
from explorer.serving import app_command, wait_until_serving

ROOT = Path(__file__).resolve().parent.parent
CHROMIUM = "/usr/bin/chromium"
OUT = ROOT / "benchmarks" / "out"  # screenshots of failures (not kept in git)
CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
]
PAGES = ["", "timelines", "breakdown", "district"]  # "" is the first page, served at "/"
ERROR_SELECTOR = '[data-testid="stException"], [data-testid="stAlertContentError"]'
STATE = "[data-test-script-state]"
YEAR = '[data-testid="stSidebar"] [data-testid="stSlider"] input[type="range"][aria-label="Year"]'


# Records each change of the app's script state with the page's own clock, so that a
# run too short to be seen from outside the page is still counted.
WATCH_STATE = """
() => {
  if (window.__riftStates) return;
  window.__riftStates = [];
  let last = null;
  const note = () => {
    const el = document.querySelector('[data-test-script-state]');
    const state = el && el.getAttribute('data-test-script-state');
    if (state !== last) { window.__riftStates.push([state, performance.now()]); last = state; }
  };
  // attribute changes as they happen, and a poll in case the root element is replaced
  new MutationObserver(note).observe(document.body, {subtree: true, attributes: true,
                                     attributeFilter: ['data-test-script-state']});
  setInterval(note, 20);
  note();
}
"""
# Resolves when a run that began after t0 has finished: the redraw's end time.
REDRAW_DONE = """
(t0) => {
  const s = window.__riftStates || [];
  let started = false;
  for (const [state, t] of s) {
    // a run in progress at t0 is restarted by the change without a new 'running'
    if (t < t0) { started = state === 'running' || state === 'rerunRequested'; continue; }
    if (state === 'running' || state === 'rerunRequested') started = true;
    else if (started && state === 'notRunning') return t;
  }
  return false;
}
"""


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


class MemoryWatch(threading.Thread):
    """Peak resident memory of the server process (psutil if present, else /proc)."""

    def __init__(self, pid: int) -> None:
        super().__init__(daemon=True)
        self.pid, self.peak, self.stopped = pid, 0, threading.Event()

    def sample(self) -> int:
        try:
            import psutil

            return psutil.Process(self.pid).memory_info().rss
        except ImportError:
            pass
        except Exception:
            return 0
        try:
            status = Path(f"/proc/{self.pid}/status").read_text()
        except OSError:
            return 0
        # VmHWM is the kernel's own high-water mark of the resident set
        for line in status.splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) * 1024
        return 0

    def run(self) -> None:
        while not self.stopped.wait(0.25):
            self.peak = max(self.peak, self.sample())


def start_server(port: int, data_dir: Path) -> subprocess.Popen:
    env = {**os.environ, "RIFT_DATA": str(data_dir)}
    command = app_command(port)
    # serving.start_server: the server also stops when this benchmark is killed.
    server = serving.start_server(
        command,
        cwd=ROOT,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        text=True,
        start_new_session=True,
    )
    if wait_until_serving(f"http://127.0.0.1:{port}", 60, server):
        return server
    if server.poll() is not None:
        raise RuntimeError(f"the app exited on start:\n{server.stderr.read()[-2000:]}")
    stop_server(server)
    raise RuntimeError("the app did not answer its health check within 60 s")


def stop_server(server: subprocess.Popen) -> None:
    if server.poll() is None:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(server.pid, signal.SIGTERM)
        try:
            server.wait(timeout=10)
        except subprocess.TimeoutExpired:
            with contextlib.suppress(ProcessLookupError):
                os.killpg(server.pid, signal.SIGKILL)
            server.wait(timeout=10)


class User:
    """One browser context: visits pages, changes the year, notes latencies and errors."""

    def __init__(self, name: str, context, base: str, errors: list[str]) -> None:
        self.name, self.context, self.base, self.errors = name, context, base, errors
        self.latencies: list[float] = []
        self.page = None

    def error(self, what: str) -> None:
        self.errors.append(f"{self.name}: {what}"[:600])

    def response(self, response) -> None:
        # The front end probes /<page>/_stcore/... before the root's; those 404s are its
        # normal way of finding the server's base path, not failures.
        if response.status >= 400 and not (
            response.status == 404 and "/_stcore/" in response.url and response.url.count("/") > 4
        ):
            self.error(f"HTTP {response.status} for {response.url}")

    async def open(self, path: str) -> bool:
        if self.page is None:
            self.page = await self.context.new_page()
            self.page.on("pageerror", lambda exc: self.error(f"page error: {exc}"))
            self.page.on("response", self.response)
        try:
            await self.page.goto(f"{self.base}/{path}", wait_until="domcontentloaded")
            await self.page.evaluate(WATCH_STATE)
            await self.page.wait_for_selector(
                f'{STATE}[data-test-script-state="notRunning"]', timeout=60_000
            )
            await self.page.wait_for_selector(YEAR, state="attached")
        except Exception as exc:  # playwright's timeouts and navigation errors
            self.error(f"failed load of /{path}: {type(exc).__name__}: {str(exc)[:120]}")
            return False
        return await self.check_page(path)

    async def check_page(self, path: str) -> bool:
        shown = await self.page.locator(ERROR_SELECTOR).all_inner_texts()
        for text in shown:
            self.error(f"error shown on /{path}: {text.strip()[:160]}")
        state = await self.page.get_attribute(STATE, "data-test-connection-state")
        if state not in (None, "CONNECTED"):
            self.error(f"connection {state} on /{path}")
        return not shown

    async def change_year(self, path: str) -> None:
        try:
            await self._change_year(path)
        except Exception as exc:  # playwright timeouts, a closed page, ...
            self.error(f"changing the year on /{path} failed: {type(exc).__name__}: {exc}")
            await self.evidence(path)

    async def evidence(self, path: str) -> None:
        """What the page shows when something went wrong: texts and a screenshot."""
        with contextlib.suppress(Exception):
            OUT.mkdir(parents=True, exist_ok=True)
            shot = OUT / f"load-{self.name}-{len(self.errors)}.png"
            await self.page.screenshot(path=str(shot), timeout=10_000)
            texts = await self.page.locator(
                '[data-testid="stAlert"], [data-testid="stException"]'
            ).all_inner_texts()
            state = await self.page.get_attribute(STATE, "data-test-script-state", timeout=5_000)
            self.error(f"on /{path}: state {state}, alerts {texts[:3]}, screenshot {shot.name}")

    async def _change_year(self, path: str) -> None:
        slider = self.page.locator(YEAR).first
        now, top = await slider.input_value(), await slider.get_attribute("max")
        key = "ArrowLeft" if now == top else "ArrowRight"
        t0 = await self.page.evaluate("performance.now()")
        await slider.focus()
        await slider.press(key, timeout=30_000)
        try:
            handle = await self.page.wait_for_function(REDRAW_DONE, arg=t0, timeout=60_000)
        except Exception as exc:
            states = await self.page.evaluate("(window.__riftStates || []).slice(-6)")
            value = await slider.input_value()
            self.error(
                f"no redraw after changing the year on /{path} ({type(exc).__name__}); "
                f"year input {now} -> {value}; last states {states}"
            )
            return
        self.latencies.append(await handle.json_value() - t0)
        await self.check_page(path)


async def drive(users: int, seconds: float, base: str, changes_alone: int) -> dict:
    from playwright.async_api import async_playwright

    errors: list[str] = []
    async with async_playwright() as pw:
        browser = await pw.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            # the baseline: one user alone (after a warm-up that fills the caches)
            alone = User("alone", await browser.new_context(), base, errors)
            if await alone.open(PAGES[0]):
                await alone.change_year(PAGES[0])
                alone.latencies.clear()
                for _ in range(changes_alone):
                    await alone.change_year(PAGES[0])
            await alone.context.close()

            crowd = [
                User(f"user{i}", await browser.new_context(), base, errors) for i in range(users)
            ]
            # everyone arrives at once; the timed phase starts when all pages are up
            arrived = time.monotonic()
            await asyncio.gather(*(u.open(PAGES[i % len(PAGES)]) for i, u in enumerate(crowd)))
            arrival = time.monotonic() - arrived
            stop_at = time.monotonic() + seconds

            async def walk(user: User, step: int) -> None:
                path = PAGES[step % len(PAGES)]
                while True:
                    for _ in range(3):
                        await user.change_year(path)
                        if time.monotonic() >= stop_at:
                            return
                    step += 1
                    path = PAGES[step % len(PAGES)]
                    await user.open(path)

            await asyncio.gather(*(walk(u, i) for i, u in enumerate(crowd)))
            loaded = [t for u in crowd for t in u.latencies]
        finally:
            await browser.close()
    return {"alone": alone.latencies, "loaded": loaded, "errors": errors, "arrival": arrival}


def quantile(values: list[float], q: float) -> float | None:
    import numpy as np

    return float(np.quantile(values, q)) if values else None


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="about 30 seconds in all")
    parser.add_argument("--users", type=int, default=10, help="concurrent browsers (10)")
    parser.add_argument("--seconds", type=float, help="duration of the crowd phase")
    args = parser.parse_args(argv)
    seconds = args.seconds or (20.0 if args.quick else 150.0)
    changes_alone = 5 if args.quick else 15
    hard_limit = seconds + 240  # start-up, baseline, arrival and shut-down included

    started = time.monotonic()
    # A hard stop for anything that hangs: the alarm kills the server and exits.
    server_box: list[subprocess.Popen] = []

    def give_up(signum, frame):
        for server in server_box:
            stop_server(server)
        print(json.dumps({"name": "load", "error": f"hard limit of {hard_limit:.0f} s hit"}))
        os._exit(1)

    signal.signal(signal.SIGALRM, give_up)
    signal.alarm(int(hard_limit))
    with tempfile.TemporaryDirectory(prefix="rift-load-") as data_dir:
        port = free_port()
        print(f"starting the app on 127.0.0.1:{port}", flush=True)
        server = start_server(port, Path(data_dir))
        server_box.append(server)
        memory = MemoryWatch(server.pid)
        memory.start()
        try:
            print(f"baseline: 1 user; then {args.users} users for {seconds:.0f} s", flush=True)
            result = asyncio.run(
                drive(args.users, seconds, f"http://127.0.0.1:{port}", changes_alone)
            )
        finally:
            memory.stopped.set()
            memory.join(timeout=2)
            peak = max(memory.peak, memory.sample())
            stop_server(server)
    signal.alarm(0)

    alone, loaded, errors = result["alone"], result["loaded"], result["errors"]
    for line in errors[:20]:
        print("error:", line, flush=True)
    p50a, p95a = quantile(alone, 0.50), quantile(alone, 0.95)
    p50, p95 = quantile(loaded, 0.50), quantile(loaded, 0.95)
    measured = bool(alone and loaded)
    if not measured:
        errors.append("no redraw was measured")
    summary = {
        "name": "load",
        "seconds": round(time.monotonic() - started, 1),
        "users": args.users,
        "changes": {"alone": len(alone), "loaded": len(loaded)},
        "alone_ms": {"p50": p50a and round(p50a, 1), "p95": p95a and round(p95a, 1)},
        "loaded_ms": {"p50": p50 and round(p50, 1), "p95": p95 and round(p95, 1)},
        "ratio": {"p50": round(p50 / p50a, 2) if measured else None,
                  "p95": round(p95 / p95a, 2) if measured else None},
        "arrival_s": round(result["arrival"], 1),
        "peak_rss_mb": round(peak / 2**20, 1),
        "errors": len(errors),
    }  # fmt: skip
    print(json.dumps(summary))
    return 0 if not errors else 1


if __name__ == "__main__":
    sys.exit(main())
