"""The one way to open a dataset by its id: a built-in demo or one saved in a workspace.

The report, the command line and the app all call :func:`open_dataset`; the app wraps it in
its caches and adds the panels a browser session uploaded (which live only in that session).
"""

from __future__ import annotations

from pathlib import Path

from explorer import data as readers
from explorer.data.demo import DEMO_IDS
from explorer.data.model import DataError, Panel, Problem

__all__ = ["demo_kind", "open_dataset", "open_demo", "open_stored"]


def demo_kind(dataset_id: str) -> str | None:
    """The kind of demo data behind a built-in dataset id, or None for any other id."""
    return DEMO_IDS.get(dataset_id)


def open_demo(kind: str) -> Panel:
    """The built-in demo province of one kind (``brackets``, ``units`` or ``means``)."""
    return readers.demo_panel(kind)


def open_stored(dataset_id: str, data_dir: str | Path | None = None) -> Panel:
    """A dataset saved in the workspace at ``data_dir`` (the default workspace if None).

    Raises
    ------
    DataError
        If the workspace holds no dataset of that id (saying how to name the right one), or
        holds it damaged (saying what is wrong with it).
    """
    from explorer.data.workspace import Workspace

    workspace = Workspace(Path(data_dir)) if data_dir else Workspace()
    listing = workspace.list()
    known = set(listing["id"]) if len(listing) else set()
    if dataset_id not in known and dataset_id not in set(workspace.damaged()["id"]):
        raise DataError(
            [
                Problem(
                    f"the view's dataset {dataset_id!r} is not in the workspace",
                    fix="open the workspace folder that holds it (on the command line: "
                    "--data DIR; for the app: the folder it was started with), or save the "
                    "dataset there from the Intake page first",
                )
            ]
        )
    return workspace.open(dataset_id)


def open_dataset(dataset_id: str, data_dir: str | Path | None = None) -> Panel:
    """The panel behind a view's dataset id: a demo dataset or one stored in a workspace."""
    kind = demo_kind(dataset_id)
    if kind is not None:
        return open_demo(kind)
    return open_stored(dataset_id, data_dir)
