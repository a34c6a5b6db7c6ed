"""How the app is started as a server, and how to tell that it is up.

One command line for ``rift app``, the browser tests and the benchmarks, so all of them run
the app exactly as a user does.
"""

from __future__ import annotations

import signal
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterable, Mapping
from pathlib import Path

__all__ = [
    "APP",
    "PROJECT",
    "SETTINGS",
    "allowed_hosts",
    "app_command",
    "run_until_stopped",
    "start_server",
    "stop_server",
    "wait_until_serving",
]

#: A neutral working directory for the server (its own settings travel on the command line).
PROJECT = Path(__file__).resolve().parent
APP = Path(__file__).resolve().parent / "app.py"


#: The Streamlit settings Rift depends on, passed on the command line by :func:`app_command`
#: so that they hold wherever ``rift app`` is started (an installed wheel has no
#: ``.streamlit/config.toml`` beside the working directory). A local tool for confidential
#: data: no usage statistics, no hosted-deployment toolbar, no error details in the browser
#: (they go to the server's log), a deliberate upload ceiling in MB, and Streamlit's HTTP
#: API for driving an app without a browser kept off whatever a config file says.
SETTINGS: dict[str, str] = {
    "server.headless": "true",
    # Watching Rift's own source files for changes walks every loaded module's path on
    # the server's event loop after each run (seconds on a first page): an installed tool
    # does not change under its users.
    "server.fileWatcherType": "none",
    "server.runOnSave": "false",
    # A full garbage collection after every run costs a tenth of a second or more with
    # many users; Python's own collector still runs as objects pile up.
    "runner.postScriptGC": "false",
    "server.enableAgentApi": "false",
    "browser.gatherUsageStats": "false",
    "client.toolbarMode": "minimal",
    "client.showErrorDetails": "none",
    "server.maxUploadSize": "200",
    "theme.base": "light",
}


#: Names under which this machine itself is reached.
LOOPBACK = ("localhost", "127.0.0.1", "::1")
#: Listen addresses that mean "every interface of this machine".
EVERYWHERE = ("0.0.0.0", "::", "")
#: The signals that stop ``rift app`` and are passed on to its server.
STOP_SIGNALS = tuple(
    getattr(signal, name) for name in ("SIGTERM", "SIGINT", "SIGHUP") if hasattr(signal, name)
)


def allowed_hosts(host: str, extra: Iterable[str] = ()) -> list[str]:
    """The names a browser may use in its ``Host`` header to reach a server on ``host``.

    A web page can point a name it controls at this machine (DNS rebinding) and then talk to
    a server listening here; the server therefore answers only to the names it is meant to be
    reached by: the address it listens on and its loopback names, and, when it listens on
    every interface, this machine's own host names. ``extra`` adds names (``--allow-host``);
    ``*`` among them accepts any name.
    """
    names = [host, *LOOPBACK]
    if host in EVERYWHERE:
        names = list(LOOPBACK)
        hostname = socket.gethostname()
        names += [hostname, socket.getfqdn(hostname)]
    names += [name.strip() for name in extra if name.strip()]
    return list(dict.fromkeys(name.lower() for name in names if name))


def app_command(port: int, host: str = "127.0.0.1", allow_hosts: Iterable[str] = ()) -> list[str]:
    """The ``streamlit run`` command serving Rift on ``host:port`` with :data:`SETTINGS`.

    The command works from any working directory: every setting is on the command line.
    ``server.allowedHosts`` (Streamlit's own allow-list, checked when a browser opens the
    app's connection) holds :func:`allowed_hosts` of ``host`` and ``allow_hosts``.
    """
    # explorer.serve is `streamlit run` with Rift's modules imported while the server starts
    command = [sys.executable, "-m", "explorer.serve", "run", str(APP)]
    settings = {**SETTINGS, "server.port": str(port), "server.address": host}
    for name, value in settings.items():
        command += [f"--{name}", value]
    for name in allowed_hosts(host, allow_hosts):
        command += ["--server.allowedHosts", name]
    return command


def _stop_with_parent():
    """Linux: a function for the child that makes it get SIGTERM when its parent dies.

    Everything is looked up here, in the parent: between fork and exec the child only calls
    ``prctl`` (importing there could wait forever on a lock another thread held).
    """
    if not sys.platform.startswith("linux"):
        return None
    try:
        import ctypes

        prctl = ctypes.CDLL(None, use_errno=True).prctl
    except (OSError, AttributeError):
        return None
    pr_set_pdeathsig, sigterm = 1, int(signal.SIGTERM)

    def in_child() -> None:  # pragma: no cover - runs in the child before exec
        prctl(pr_set_pdeathsig, sigterm)

    return in_child


def start_server(
    command: list[str], *, env: Mapping[str, str] | None = None, cwd: Path = PROJECT, **popen
) -> subprocess.Popen:
    """Start a server process that cannot outlive the process starting it (on Linux)."""
    return subprocess.Popen(command, env=env, cwd=cwd, preexec_fn=_stop_with_parent(), **popen)


def stop_server(process: subprocess.Popen, timeout: float = 10.0) -> int | None:
    """SIGTERM the server, wait up to ``timeout`` seconds, then kill it; its exit status."""
    if process.poll() is None:
        process.terminate()
        try:
            process.wait(timeout=timeout)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=timeout)
    return process.returncode


def run_until_stopped(
    command: list[str], *, env: Mapping[str, str] | None = None, cwd: Path = PROJECT
) -> int:
    """Run the server in the foreground, passing SIGTERM, SIGINT and SIGHUP on to it.

    Stopping the starting process (a service manager, a container stop, a test harness)
    stops the server too and waits for it to exit, so its port is free afterwards.
    """
    process = start_server(command, env=env, cwd=cwd)
    received: list[int] = []

    def forward(signum, _frame) -> None:
        received.append(signum)
        if process.poll() is None:
            process.send_signal(signum)

    previous = {number: signal.signal(number, forward) for number in STOP_SIGNALS}
    try:
        while True:
            try:
                code = process.wait(timeout=0.5)
                break
            except subprocess.TimeoutExpired:
                if received and not _exited_within(process, 10.0):
                    process.kill()
    finally:
        for number, handler in previous.items():
            signal.signal(number, handler)
    # Stopped on purpose: a normal end, whatever status the server chose on its way out.
    return 0 if received else code


def _exited_within(process: subprocess.Popen, seconds: float) -> bool:
    try:
        process.wait(timeout=seconds)
    except subprocess.TimeoutExpired:
        return False
    return True


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
