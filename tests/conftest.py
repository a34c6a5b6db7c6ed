"""Shared fixtures: small, generic helpers for writing input files into tmp_path."""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path

import pytest

# Every chart a page draws in the tests (in-process and in the servers they start) is checked
# against the Vega-Lite schema; the app skips that check to draw faster (explorer.ui.draw).
os.environ.setdefault("RIFT_CHECK_CHARTS", "1")


@pytest.fixture
def write_text(tmp_path: Path) -> Callable[..., Path]:
    """Write ``text`` to ``tmp_path / name`` (default UTF-8) and return the path."""

    def write(name: str, text: str, encoding: str = "utf-8") -> Path:
        path = tmp_path / name
        path.write_bytes(text.encode(encoding))
        return path

    return write


@pytest.fixture
def snapshot_dir() -> Callable[[Path], dict[str, bytes]]:
    """Every file under a folder with its bytes, to prove that nothing was written."""

    def snap(folder: Path) -> dict[str, bytes]:
        return {
            str(p.relative_to(folder)): p.read_bytes()
            for p in sorted(folder.rglob("*"))
            if p.is_file()
        }

    return snap
