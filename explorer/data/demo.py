"""The built-in demo: an invented province whose files ship with the package
(:func:`explorer.resources.demo_dir`), and the income concept its files stand for."""

from __future__ import annotations

import dataclasses
from pathlib import Path

from explorer import resources
from explorer.data.load import load_panel
from explorer.data.model import DataError, Panel, Problem

__all__ = [
    "DEMO_IDS",
    "DEMO_BOUNDARIES",
    "DEMO_FILES",
    "DEMO_INCOME_CONCEPT",
    "demo_dir",
    "demo_panel",
    "demo_paths",
]

#: Built-in dataset id -> kind of demo data (their names in the list: present.vocabulary).
DEMO_IDS: dict[str, str] = {
    "demo": "brackets",
    "demo-households": "units",
    "demo-means": "means",
    "demo-published": "published",
}
DEMO_FILES = {
    "brackets": "deciles.csv",
    "units": "households.csv",
    "means": "means.csv",
    "published": "published.csv",
}
DEMO_BOUNDARIES = "districts.geojson"
DEMO_INCOME_CONCEPT = "equivalised disposable income per person (demo currency units)"


def demo_dir() -> Path:
    """The folder of the demo province's files (inside the package when installed)."""
    return resources.demo_dir()


def demo_paths(kind: str = "brackets") -> tuple[Path, Path]:
    """The shipped demo panel of ``kind`` and the demo boundary file.

    Raises
    ------
    DataError
        For a kind the demo does not have.
    """
    if kind not in DEMO_FILES:
        raise DataError(
            Problem(f"no demo panel of kind {kind!r}", f"use one of {', '.join(DEMO_FILES)}")
        )
    folder = demo_dir()
    return folder / DEMO_FILES[kind], folder / DEMO_BOUNDARIES


def demo_panel(kind: str = "brackets") -> Panel:
    """The invented demo province as a validated :class:`Panel` with boundaries.

    Raises
    ------
    DataError
        When the demo files are missing from the installation.
    """
    table, bounds = demo_paths(kind)
    if not table.exists():
        raise DataError(
            Problem(
                f"the demo data is missing ({table})",
                "reinstall Rift: the demo files ship inside the package",
                file=table.name,
            )
        )
    panel = load_panel(table, bounds if bounds.exists() else None)
    # The demo's files carry no concept column; demo_data/README.md states it.
    return dataclasses.replace(panel, income_concept=DEMO_INCOME_CONCEPT, name=f"demo {kind}")
