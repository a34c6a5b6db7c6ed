"""``rift app`` as a server: the names it answers to, and that stopping it frees its port.

The server tests listen on loopback only, on a free port, with bounded waits.
"""

from __future__ import annotations

import base64
import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest

from explorer import serving

ROOT = Path(__file__).resolve().parents[1]


# --------------------------------------------------------------------------- allowed names


def test_a_loopback_server_answers_only_to_loopback_names():
    names = serving.allowed_hosts("127.0.0.1")
    assert set(names) == {"127.0.0.1", "localhost", "::1"}


def test_listening_everywhere_adds_this_machines_own_names_and_the_listed_ones():
    names = serving.allowed_hosts("0.0.0.0", ["Planning.Example", " "])
    assert socket.gethostname().lower() in names
    assert "planning.example" in names
    assert "0.0.0.0" not in names  # not a name a browser can use to reach the machine
    assert "" not in names


def test_the_command_line_carries_every_allowed_name_to_the_server():
    command = serving.app_command(8765, "127.0.0.1", ["rift.example"])
    given = [command[i + 1] for i, part in enumerate(command) if part == "--server.allowedHosts"]
    assert given == serving.allowed_hosts("127.0.0.1", ["rift.example"])
    assert "rift.example" in given


def test_the_command_line_keeps_the_browserless_drive_api_off():
    command = serving.app_command(8765)
    at = command.index("--server.enableAgentApi")
    assert command[at + 1] == "false"


# --------------------------------------------------------------------------- a real server


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def _listening(port: int) -> bool:
    with socket.socket() as sock:
        sock.settimeout(1)
        return sock.connect_ex(("127.0.0.1", port)) == 0


def _stream_handshake(port: int, host: str) -> int:
    """The HTTP status the server gives a WebSocket handshake to the app's stream with
    ``host`` as Host header (101 = connection opened); 0 when it closed without an answer."""
    key = base64.b64encode(os.urandom(16)).decode()
    request = (
        "GET /_stcore/stream HTTP/1.1\r\n"
        f"Host: {host}\r\n"
        "Upgrade: websocket\r\nConnection: Upgrade\r\n"
        f"Sec-WebSocket-Key: {key}\r\nSec-WebSocket-Version: 13\r\n"
        "Sec-WebSocket-Protocol: streamlit\r\n\r\n"
    )
    with socket.create_connection(("127.0.0.1", port), timeout=10) as sock:
        sock.sendall(request.encode())
        reply = b""
        while b"\r\n" not in reply:
            chunk = sock.recv(1024)
            if not chunk:
                return 0
            reply += chunk
    return int(reply.split(b" ", 2)[1])


def _start_rift_app(port: int, *extra: str) -> subprocess.Popen:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    command = [sys.executable, "-m", "explorer", "app", "--port", str(port)]
    command += ["--host", "127.0.0.1", *extra]
    process = serving.start_server(
        command, env=env, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL
    )
    if not serving.wait_until_serving(f"http://127.0.0.1:{port}", 90, process):
        serving.stop_server(process)
        pytest.fail("rift app did not start within 90 s")
    return process


def _stops_and_frees_its_port(process: subprocess.Popen, port: int, signum: int) -> None:
    process.send_signal(signum)
    try:
        process.wait(timeout=15)
    except subprocess.TimeoutExpired:
        serving.stop_server(process)
        pytest.fail(f"rift app was still running 15 s after signal {signum}")
    deadline = time.monotonic() + 10
    while _listening(port) and time.monotonic() < deadline:
        time.sleep(0.2)
    assert not _listening(port), f"something still listens on port {port} after rift app ended"


@pytest.mark.slow
def test_a_forged_host_is_refused_and_sigterm_stops_the_server_with_rift_app():
    port = _free_port()
    process = _start_rift_app(port, "--allow-host", "planning.example")
    try:
        assert _stream_handshake(port, f"127.0.0.1:{port}") == 101
        assert _stream_handshake(port, f"localhost:{port}") == 101
        assert _stream_handshake(port, f"planning.example:{port}") == 101
        # What a page on a rebinding name would send: refused before any app data flows.
        assert _stream_handshake(port, f"rebind.attacker.example:{port}") in (0, 403)
        assert _stream_handshake(port, "127.0.0.1.attacker.example") in (0, 403)
    finally:
        _stops_and_frees_its_port(process, port, signal.SIGTERM)


def _http(port: int, method: str, path: str, host: str) -> tuple[int, bytes]:
    """Status and body of a plain HTTP request with ``host`` as its Host header."""
    import http.client

    connection = http.client.HTTPConnection("127.0.0.1", port, timeout=30)
    try:
        body = b"{}" if method == "POST" else None
        headers = {"Host": host, "Content-Type": "application/json"}
        connection.request(method, path, body=body, headers=headers)
        reply = connection.getresponse()
        return reply.status, reply.read()
    finally:
        connection.close()


@pytest.mark.slow
def test_a_foreign_host_gets_no_app_connection_and_only_the_static_page_shell():
    """Streamlit 1.67 checks ``server.allowedHosts`` on the app's WebSocket (and its HTTP
    drive API), not on static files: a foreign Host is refused the connection every figure
    and dataset travels over, and can fetch only the page shell shipped in Streamlit's
    package, byte for byte (the limit README.md states)."""
    import streamlit

    port = _free_port()
    process = _start_rift_app(port)
    try:
        assert _stream_handshake(port, f"127.0.0.1:{port}") == 101
        assert _stream_handshake(port, "evil.example") in (0, 403)
        status, _ = _http(port, "POST", "/_stcore/agent/interact", "evil.example")
        assert status in (403, 404)
        status, body = _http(port, "GET", "/", "evil.example")
        shell = (Path(streamlit.__file__).parent / "static" / "index.html").read_bytes()
        assert status == 200 and body == shell
    finally:
        _stops_and_frees_its_port(process, port, signal.SIGTERM)


@pytest.mark.slow
@pytest.mark.parametrize("signum", [signal.SIGINT, signal.SIGHUP], ids=["SIGINT", "SIGHUP"])
def test_sigint_and_sighup_to_rift_app_stop_its_server_too(signum):
    port = _free_port()
    process = _start_rift_app(port)
    _stops_and_frees_its_port(process, port, signum)


def _running(pid: int) -> bool:
    """True while ``pid`` exists and is not a zombie (dead, waiting to be reaped)."""
    try:
        status = Path(f"/proc/{pid}/status").read_text()
    except OSError:
        return False
    state = next(line for line in status.splitlines() if line.startswith("State:"))
    return "Z" not in state.split()[1]


@pytest.mark.skipif(not Path("/proc/self/status").exists(), reason="needs Linux /proc")
def test_a_server_does_not_outlive_the_process_that_started_it_even_when_that_is_killed():
    script = (
        "import sys, time\n"
        f"sys.path.insert(0, {str(ROOT)!r})\n"
        "from explorer import serving\n"
        "child = serving.start_server([sys.executable, '-c', 'import time; time.sleep(60)'])\n"
        "print(child.pid, flush=True)\n"
        "time.sleep(60)\n"
    )
    parent = subprocess.Popen([sys.executable, "-c", script], stdout=subprocess.PIPE, text=True)
    try:
        child = int(parent.stdout.readline())
        assert _running(child)
    finally:
        parent.kill()  # SIGKILL: no handler of the parent's can run
        parent.wait(timeout=10)
        parent.stdout.close()
    deadline = time.monotonic() + 10
    while _running(child) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert not _running(child)


def test_the_server_is_streamlit_run_with_the_imports_warmed_meanwhile():
    """`python -m explorer.serve` passes its arguments to Streamlit's own command line, and
    the warm-up leaves Rift's figures imported in the server process."""
    import subprocess
    import sys

    command = serving.app_command(8765)
    assert command[1:4] == ["-m", "explorer.serve", "run"]
    done = subprocess.run(
        [sys.executable, "-m", "explorer.serve", "--version"],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 0 and "Streamlit" in done.stdout
    probe = (
        "import sys; from explorer import serve; serve.warm(); "
        "print(all(m in sys.modules for m in ('explorer.figures', 'geopandas', 'altair')))"
    )
    warmed = subprocess.run(
        [sys.executable, "-c", probe], capture_output=True, text=True, timeout=120
    )
    assert warmed.stdout.strip() == "True"
