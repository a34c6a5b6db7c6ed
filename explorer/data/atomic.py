"""Atomic writes on disk: a file or a folder is written under a hidden temporary name and
renamed into place, so a reader sees the old state or the new one, never half of either.

Temporaries carry the writer's process id; :func:`clean_leftovers` removes those of
processes that no longer run (a crash), and leaves those of live writers alone.
"""

from __future__ import annotations

import hashlib
import os
import secrets
import shutil
from collections.abc import Iterable
from pathlib import Path

__all__ = [
    "CHUNK",
    "PARTIAL",
    "REMOVING",
    "clean_leftovers",
    "fsync_dir",
    "fsync_file",
    "is_leftover",
    "sha256_file",
    "temp_name",
    "write_text_atomic",
]

PARTIAL = ".partial-"  # datasets or files being written
REMOVING = ".removing-"  # datasets being deleted
CHUNK = 1 << 20


def fsync_dir(path: Path) -> None:
    """Persist a directory entry (a rename or a new file) where the OS allows it."""
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass  # some file systems (and Windows) cannot fsync a directory
    finally:
        os.close(fd)


def fsync_file(path: Path) -> None:
    """Persist a written file's content before it is renamed into place."""
    with open(path, "rb+") as handle:
        os.fsync(handle.fileno())


def sha256_file(path: Path) -> str:
    """SHA-256 of a file, read in chunks so memory stays bounded."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        while chunk := handle.read(CHUNK):
            digest.update(chunk)
    return digest.hexdigest()


def temp_name(prefix: str = PARTIAL) -> str:
    """A hidden temporary name carrying this process's id (see :func:`is_leftover`)."""
    return f"{prefix}{os.getpid()}-{secrets.token_hex(6)}"


def write_text_atomic(path: Path, text: str) -> None:
    """Write ``text`` to ``path`` so readers see the old file or the new one, never half."""
    tmp = path.with_name(temp_name() + path.suffix)
    try:
        with open(tmp, "w", encoding="utf-8", newline="") as handle:
            handle.write(text)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    fsync_dir(path.parent)


def _pid_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True  # exists but is not ours, or the OS cannot tell: leave it alone
    return True


def is_leftover(name: str) -> bool:
    """Is ``name`` a temporary left by a process that no longer runs?"""
    if name.startswith(REMOVING):
        return True
    if not name.startswith(PARTIAL):
        return False
    pid = name[len(PARTIAL) :].split("-", 1)[0]
    return not (pid.isdigit() and _pid_alive(int(pid)))


def clean_leftovers(folders: Iterable[Path]) -> None:
    """Remove the temporaries that crashed writers left in ``folders``."""
    for folder in folders:
        try:
            entries = list(os.scandir(folder))
        except OSError:
            continue
        for entry in entries:
            if not is_leftover(entry.name):
                continue
            try:
                if entry.is_dir(follow_symlinks=False):
                    shutil.rmtree(entry.path, ignore_errors=True)
                else:
                    os.unlink(entry.path)
            except OSError:
                pass  # another process got there first
