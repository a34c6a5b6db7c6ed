"""Datasets and saved views on disk: the :class:`Workspace` facade over the dataset store
(:mod:`explorer.data.dataset_store`) and the view store (:mod:`explorer.data.view_store`).

A workspace is one directory (the user's data directory unless told otherwise). Every
write is atomic (:mod:`explorer.data.atomic`): a crash leaves either the old state or the
new one, plus at most a hidden leftover that the next :class:`Workspace` cleans up. Input
files are only ever read. Names typed by users never become paths outside the root.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import pandas as pd
import platformdirs

from explorer.data.atomic import clean_leftovers
from explorer.data.dataset_store import (
    ENV_VAR,
    SCHEMA_VERSION,
    UNITS,
    DatasetFacts,
    DatasetStore,
    Source,
    dataset_id,
    equal_weight_notice,
)
from explorer.data.model import Panel, fail
from explorer.data.naming import safe_name
from explorer.data.view_store import ViewStore

__all__ = [
    "SCHEMA_VERSION",
    "UNITS",
    "DatasetFacts",
    "Workspace",
    "dataset_id",
    "equal_weight_notice",
    "safe_name",
]


class Workspace:
    """Datasets and saved views in one data directory.

    Parameters
    ----------
    root : path, optional
        The data directory. Defaults to ``$RIFT_DATA`` if set, else the user's data
        directory for ``rift`` (``platformdirs.user_data_dir``). Created if missing.

    Notes
    -----
    Opening a workspace removes temporaries left by crashed writers (a temporary
    belongs to a process id; those of live processes are left alone). Any number of
    processes may read and write the same workspace: directories are the truth, and the
    ``index.json`` summary is only a cache rebuilt when it disagrees with them.

    Examples
    --------
    >>> ws = Workspace(tmp_path)                                   # doctest: +SKIP
    >>> dataset = ws.add(panel, [Path("shares.csv")], {"kind": "brackets"})  # doctest: +SKIP
    >>> ws.open(dataset).fingerprint == panel.fingerprint          # doctest: +SKIP
    True
    """

    def __init__(self, root: str | os.PathLike[str] | None = None) -> None:
        if root is None:
            root = os.environ.get(ENV_VAR) or platformdirs.user_data_dir("rift")
        self.root = Path(root).expanduser().absolute()
        self.datasets = DatasetStore(self.root)
        self.views = ViewStore(self.root / "views")
        self.datasets_dir = self.datasets.datasets_dir
        self.views_dir = self.views.views_dir
        self.index_path = self.datasets.index_path
        try:
            self.datasets_dir.mkdir(parents=True, exist_ok=True)
            self.views_dir.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise fail(
                f"Cannot use {self.root} as the data directory: {exc.strerror or exc}.",
                f"Point {ENV_VAR} at a directory you can write to.",
            ) from None
        clean_leftovers([self.root, self.datasets_dir, self.views_dir])

    def __repr__(self) -> str:
        return f"Workspace({str(self.root)!r})"

    def add(
        self,
        panel: Panel,
        sources: Sequence[Source],
        options: dict[str, Any],
        facts: DatasetFacts | None = None,
    ) -> str:
        """Store a validated panel with its facts; see :meth:`DatasetStore.add`."""
        return self.datasets.add(panel, sources, options, facts)

    def facts(self, ident: str) -> DatasetFacts:
        """The dataset's facts (name, concept, unit, money, source); empty for old ones."""
        return self.datasets.facts(ident)

    def set_facts(self, ident: str, facts: DatasetFacts) -> None:
        """Replace the dataset's facts; see :meth:`DatasetStore.set_facts`."""
        self.datasets.set_facts(ident, facts)

    def options(self, ident: str) -> dict[str, Any]:
        """The options the dataset was read with, its crosswalk and levels among them."""
        return self.datasets.options(ident)

    def open(self, ident: str) -> Panel:
        """Read a stored dataset back; see :meth:`DatasetStore.open`."""
        return self.datasets.open(ident)

    def list(self) -> pd.DataFrame:
        """The stored datasets, newest first; see :meth:`DatasetStore.list`."""
        return self.datasets.list()

    def damaged(self) -> pd.DataFrame:
        """The stored datasets that cannot be listed, with why; see
        :meth:`DatasetStore.damaged`."""
        return self.datasets.damaged()

    def remove(self, ident: str) -> None:
        """Delete a stored dataset; see :meth:`DatasetStore.remove`."""
        self.datasets.remove(ident)

    def save_view(self, name: str, text: str) -> Path:
        """Save a view's text under a name; see :meth:`ViewStore.save_view`."""
        return self.views.save_view(name, text)

    def load_view(self, name: str) -> str:
        """The text of a saved view; see :meth:`ViewStore.load_view`."""
        return self.views.load_view(name)

    def list_views(self) -> list[str]:
        """Names of the saved views, sorted; see :meth:`ViewStore.list_views`."""
        return self.views.list_views()
