"""How the app is started as a server, and how to tell that it is up.

One command line for ``rift app``, the browser tests and the benchmarks, so all of them run
the app exactly as a user does.
"""

from __future__ import annotations

import sys
import time
import urllib.request
from pathlib import Path

#: A neutral working directory for the server (its own settings travel on the command line).
PROJECT = Path(__file__).resolve().parent
APP = Path(__file__).resolve().parent / "app.py"


#: The Streamlit settings Rift depends on, passed on the command line by :func:`app_command`
#: so that they hold wherever ``rift app`` is started (an installed wheel has no
#: ``.streamlit/config.toml`` beside the working directory). A local tool for confidential
#: data: no usage statistics, no hosted-deployment toolbar, no error details in the browser
#: (they go to the server's log), a deliberate upload ceiling in MB.
SETTINGS: dict[str, str] = {
    "server.headless": "true",
    "browser.gatherUsageStats": "false",
    "client.toolbarMode": "minimal",
    "client.showErrorDetails": "none",
    "server.maxUploadSize": "200",
    "theme.base": "light",
}


def app_command(port: int, host: str = "127.0.0.1") -> list[str]:
    """The ``streamlit run`` command serving Rift on ``host:port`` with :data:`SETTINGS`.

    The command works from any working directory: every setting is on the command line.
    """
    command = [sys.executable, "-m", "streamlit", "run", str(APP)]
    settings = {**SETTINGS, "server.port": str(port), "server.address": host}
    for name, value in settings.items():
        command += [f"--{name}", value]
    return command


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
