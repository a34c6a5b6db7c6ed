"""Packaging check: run from a venv holding only the built wheel, outside the checkout.

Runs the commands a new user runs after `pip install rift-*.whl`, starts the app as a server,
and opens every page with Streamlit's AppTest, so a file missing from the wheel fails here.
"""

from __future__ import annotations

import os
import shutil
import socket
import subprocess
import sys
import tempfile
from pathlib import Path


def rift(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    exe = shutil.which("rift")
    assert exe, "the wheel installed no 'rift' command"
    done = subprocess.run([exe, *args], cwd=cwd, capture_output=True, text=True, timeout=600)
    print(f"$ rift {' '.join(args)}  -> exit {done.returncode}")
    if done.returncode != 0:
        print(done.stdout[-2000:], done.stderr[-4000:], sep="\n")
        raise SystemExit(f"rift {args[0]} failed from the installed wheel")
    return done


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def main() -> None:
    import explorer
    from explorer import resources, serving
    from explorer.views import ViewState

    package = Path(explorer.__file__).resolve().parent
    assert "site-packages" in str(package), f"explorer imported from {package}, not the wheel"
    pages = sorted(p.name for p in resources.pages_dir().glob("*.py"))
    assert resources.pages_dir().is_relative_to(package), "pages are not inside the package"
    assert resources.demo_dir().is_relative_to(package), "demo data is not inside the package"
    print("pages in the wheel:", ", ".join(pages))

    work = Path(tempfile.mkdtemp(prefix="rift-wheel-"))
    check = rift("check", "demo", cwd=work)
    assert "46" in check.stdout, check.stdout
    rift("compute", "demo", "--out", str(work / "indices.csv"), cwd=work)
    assert (work / "indices.csv").stat().st_size > 1000
    view = work / "view.json"
    view.write_text(ViewState().to_json(), encoding="utf-8")
    rift("report", str(view), "--out", str(work / "report.html"), cwd=work)
    assert "<html" in (work / "report.html").read_text(encoding="utf-8")[:2000].lower()

    # The server, as `rift app` starts it, from a folder with no settings file.
    port = free_port()
    log = open(work / "server.log", "w")  # noqa: SIM115 - closed below
    server = subprocess.Popen(
        serving.app_command(port),
        cwd=work,
        stdout=log,
        stderr=subprocess.STDOUT,
        env={**os.environ, "RIFT_DATA": str(work / "data")},
    )
    try:
        up = serving.wait_until_serving(f"http://127.0.0.1:{port}", timeout=90, process=server)
        assert up, (work / "server.log").read_text()[-3000:]
        print(f"rift app answers on port {port}")
    finally:
        server.terminate()
        server.wait(timeout=30)
        log.close()

    from streamlit.testing.v1 import AppTest

    app = AppTest.from_file(str(package / "app.py"), default_timeout=120)
    app.run()
    assert not app.exception, app.exception
    for page in pages:
        app.switch_page(str(resources.pages_dir() / page))
        app.run()
        assert not app.exception, (page, app.exception)
        errors = [e.value for e in app.error]
        assert not errors, (page, errors)
        print(f"page {page}: {len(app.main.children)} elements, no error")
    print("wheel smoke check passed")


if __name__ == "__main__":
    sys.exit(main())
