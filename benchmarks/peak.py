"""Peak resident memory of a command run in a fresh process.

The kernel keeps each process's high-water mark of its resident set (``VmHWM`` in
``/proc/<pid>/status``) and hands it to the parent with the exit status (``wait4``'s
``ru_maxrss``, what ``/usr/bin/time -v`` prints as "Maximum resident set size"), so no
polling can miss a short peak.
"""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

__all__ = ["peak_of"]


def peak_of(command: list[str], cwd: Path | None = None) -> tuple[int, int, str]:
    """Run ``command``; return its exit code, peak resident bytes and its output."""
    with subprocess.Popen(
        command, cwd=cwd, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True
    ) as child:
        output = child.stdout.read()
        _, status, usage = os.wait4(child.pid, 0)
        child.returncode = os.waitstatus_to_exitcode(status)
    return child.returncode, usage.ru_maxrss * 1024, output  # ru_maxrss is in KiB on Linux
