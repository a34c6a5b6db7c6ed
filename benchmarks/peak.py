"""Peak resident memory of a Python module run in a fresh process.

The kernel keeps each process's high-water mark of its resident set (``VmHWM`` in
``/proc/self/status``), reset when the process starts a new program. The child reads it
as it exits and writes it to a file named by the parent. (``wait4``'s ``ru_maxrss`` is
no substitute: it keeps the peak of the parent's copy the child was forked from.)
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
from pathlib import Path

__all__ = ["peak_of"]

# Run in the child: note VmHWM at exit (after SystemExit too), then run the module.
_WRAPPER = """
import atexit, os, runpy, sys
def _note():
    with open("/proc/self/status") as status:
        kb = next(int(l.split()[1]) for l in status if l.startswith("VmHWM:"))
    with open(os.environ["RIFT_PEAK_FILE"], "w") as out:
        out.write(str(kb))
atexit.register(_note)
sys.argv = sys.argv[1:]
runpy.run_module(sys.argv[0], run_name="__main__", alter_sys=True)
"""


def peak_of(module: str, args: list[str], cwd: Path | None = None) -> tuple[int, int, str]:
    """Run ``python -m module args``; return its exit code, peak resident bytes, output."""
    with tempfile.TemporaryDirectory() as folder:
        note = Path(folder) / "peak"
        env = {**os.environ, "RIFT_PEAK_FILE": str(note)}
        done = subprocess.run(
            [sys.executable, "-c", _WRAPPER, module, *args],
            cwd=cwd,
            env=env,
            stdout=subprocess.PIPE,
            stderr=subprocess.STDOUT,
            text=True,
            check=False,
        )
        peak = int(note.read_text()) * 1024 if note.exists() else 0
    return done.returncode, peak, done.stdout
