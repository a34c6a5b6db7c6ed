"""How the app is started as a server, and how to tell that it is up.

One command line for ``rift app``, the browser tests and the benchmarks, so all of them run
the app exactly as a user does.
"""

from __future__ import annotations

import sys
import time
import urllib.request
from pathlib import Path

PROJECT = Path(__file__).resolve().parent.parent
APP = Path(__file__).resolve().parent / "app.py"


def app_command(port: int, host: str = "127.0.0.1") -> list[str]:
    """The ``streamlit run`` command serving Rift on ``host:port``, headless, no statistics.

    Run it with ``cwd=PROJECT`` so that the project's ``.streamlit/config.toml`` applies.
    """
    return [
        sys.executable,
        "-m",
        "streamlit",
        "run",
        str(APP),
        "--server.port",
        str(port),
        "--server.headless",
        "true",
        "--server.address",
        host,
        "--browser.gatherUsageStats",
        "false",
    ]


def wait_until_serving(base_url: str, timeout: float = 60.0, process=None) -> bool:
    """True once ``base_url`` answers its health check; False after ``timeout`` seconds or
    as soon as ``process`` (a ``subprocess.Popen``, optional) has exited."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if process is not None and process.poll() is not None:
            return False
        try:
            with urllib.request.urlopen(f"{base_url}/_stcore/health", timeout=2) as reply:
                if reply.status == 200 and reply.read().strip() == b"ok":
                    return True
        except OSError:
            pass
        time.sleep(0.3)
    return False
