"""Where the files Rift ships live: the page scripts and the demo province.

In a source checkout they sit at the top of the repository (``pages/``, ``demo_data/``); an
installed wheel carries them inside the package (``explorer/pages``, ``explorer/demo_data``,
mapped by ``[tool.setuptools.package-dir]`` in pyproject.toml). Both layouts resolve here, so
nothing else in the program knows which one it runs from.
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["demo_dir", "pages_dir"]

_PACKAGE = Path(__file__).resolve().parent


def _shipped(name: str) -> Path:
    inside = _PACKAGE / name
    if inside.is_dir():
        return inside
    return _PACKAGE.parent / name


def pages_dir() -> Path:
    """The folder of the page scripts that ``st.navigation`` serves."""
    return _shipped("pages")


def demo_dir() -> Path:
    """The folder of the built-in demo province's files."""
    return _shipped("demo_data")
