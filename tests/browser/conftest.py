"""A real Rift server and headless Debian Chromium for the browser tests."""

from __future__ import annotations

import os
import socket
from pathlib import Path
from subprocess import STDOUT

import pytest

from explorer.serving import PROJECT, app_command, start_server, stop_server, wait_until_serving

ROOT = Path(__file__).resolve().parents[2]
CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
]


_SERVED: dict[str, Path] = {}


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


@pytest.fixture(scope="session")
def server(tmp_path_factory):
    """Start ``streamlit run explorer/app.py`` on a free port; stop it at the end."""
    if not CHROMIUM.exists():
        pytest.skip(
            "browser tests need Debian's Chromium at /usr/bin/chromium (apt-get install chromium)"
        )
    port = _free_port()
    workspace = tmp_path_factory.mktemp("workspace")
    log = (tmp_path_factory.mktemp("server") / "server.log").open("w")
    env = {**os.environ, "RIFT_DATA": str(workspace)}
    # start_server: the server is stopped with this test run however the run ends.
    process = start_server(app_command(port), cwd=PROJECT, env=env, stdout=log, stderr=STDOUT)
    base = f"http://127.0.0.1:{port}"
    if not wait_until_serving(base, 60, process):
        stop_server(process)
        pytest.fail("the Rift server did not start within 60 s")
    _SERVED["workspace"] = workspace  # for tests that put a dataset in the shared workspace
    yield base
    stop_server(process, timeout=15)
    log.close()


@pytest.fixture(scope="session")
def workspace(server) -> Path:
    """The workspace folder the test server reads its saved datasets from."""
    return _SERVED["workspace"]


@pytest.fixture(scope="session")
def browser(server):
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        chromium = playwright.chromium.launch(executable_path=str(CHROMIUM), args=CHROMIUM_ARGS)
        yield chromium
        chromium.close()


@pytest.fixture
def context(browser):
    """A fresh browser context: its own cookies, storage and Streamlit session."""
    ctx = browser.new_context(viewport={"width": 1400, "height": 1800}, accept_downloads=True)
    ctx.set_default_timeout(60_000)  # the two cores are shared; a run can take a while
    yield ctx
    ctx.close()


def pytest_collection_modifyitems(config, items):
    """Browser tests wait on a real server and browser sharing two cores with everything
    else: one retry absorbs a timing hiccup, while a real fault still fails twice."""
    here = Path(__file__).parent
    for item in items:
        if here in Path(str(item.fspath)).parents:
            item.add_marker(pytest.mark.flaky(reruns=1, reruns_delay=2))
