"""Where a page's panel comes from: the dataset list and the opened panels.

Three kinds of dataset are offered: the built-in demo province, datasets saved in the shared
workspace (the folder named by ``RIFT_DATA``), and panels this browser session uploaded.
Uploads live in ``st.session_state`` only, so one user's upload is never listed, cached or
downloadable in another session until its owner saves it to the workspace.

Opening goes through :func:`explorer.data.catalog.open_dataset`, the one the report and the
command line use; this module adds the session's uploads and keeps opened panels in memory.
The computations on a panel are cached in :mod:`explorer.ui.cache`.
"""

from __future__ import annotations

import os
import uuid
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd
import streamlit as st

from explorer.data import catalog as datasets
from explorer.present.vocabulary import DEMO_DATASETS

__all__ = [
    "Dataset",
    "add_upload",
    "catalog",
    "data_dir",
    "open_dataset",
    "saved_labels",
    "scope_of",
    "session_scope",
    "uploads",
    "workspace",
]

_UPLOADS = "rift_uploads"
_SESSION_SCOPE = "rift_session_scope"


@dataclass(frozen=True)
class Dataset:
    """One entry of the dataset list: where it lives and what to call it."""

    id: str
    label: str
    source: str  # "demo" | "workspace" | "upload" | "damaged" (stored, cannot be opened)


def data_dir() -> Path | None:
    """The shared workspace folder from ``RIFT_DATA``, or None for the default location."""
    value = os.environ.get("RIFT_DATA", "").strip()
    return Path(value) if value else None


@st.cache_resource(show_spinner=False)
def _workspace(root: str):
    from explorer.data.workspace import Workspace

    return Workspace(Path(root)) if root else Workspace()


def workspace():
    """The shared workspace (one object per data folder; it holds no user session data)."""
    root = data_dir()
    return _workspace(str(root) if root else "")


def session_scope() -> str:
    """A random id for this browser session, used to keep its uploads' cache entries apart."""
    if _SESSION_SCOPE not in st.session_state:
        st.session_state[_SESSION_SCOPE] = uuid.uuid4().hex
    return st.session_state[_SESSION_SCOPE]


def uploads() -> dict[str, Any]:
    """This session's uploaded panels by dataset id (never shared with other sessions)."""
    return st.session_state.setdefault(_UPLOADS, {})


def add_upload(panel) -> str:
    """Keep an uploaded panel for this session only and return its dataset id."""
    dataset_id = f"upload-{panel.fingerprint[:10]}"
    uploads()[dataset_id] = panel
    return dataset_id


def catalog() -> list[Dataset]:
    """Every dataset this session may open: demo, shared workspace, own uploads."""
    entries = [Dataset(key, label, "demo") for key, (label, _) in DEMO_DATASETS.items()]
    try:
        listing = workspace().list()
        damaged = workspace().damaged()
    except Exception:  # a broken workspace must not hide the demo and the uploads
        listing = pd.DataFrame(columns=["id", "name"])
        damaged = pd.DataFrame(columns=["id", "reason"])
    for ident, label in saved_labels(listing).items():
        entries.append(Dataset(ident, f"{label} (saved)", "workspace"))
    # listed, not left out: choosing one says what is wrong with it
    for row in damaged.itertuples(index=False):
        entries.append(Dataset(str(row.id), f"{str(row.id)[:6]} · damaged (saved)", "damaged"))
    for dataset_id, panel in uploads().items():
        entries.append(Dataset(dataset_id, f"{panel.name or dataset_id} (this session)", "upload"))
    return entries


def saved_labels(listing: pd.DataFrame) -> dict[str, str]:
    """Each stored dataset's entry: name, kind, date saved and the start of its id.

    The id is shown with 6 characters, or as many more as it takes for no two entries to
    read the same (same name, kind and day, ids beginning alike).
    """
    rows = [
        (str(row.id), [str(row.name), str(row.kind), str(row.created)[:10]])
        for row in listing.itertuples(index=False)
    ]
    width = 6
    while True:
        labels = {ident: " · ".join([*words, ident[:width]]) for ident, words in rows}
        if len(set(labels.values())) == len(labels) or width >= max(
            (len(i) for i, _ in rows), default=0
        ):
            return labels
        width += 2


@st.cache_resource(show_spinner="Opening the dataset…", max_entries=8)
def _opened(dataset_id: str, root: str):
    return datasets.open_dataset(dataset_id, root or None)


def open_dataset(dataset_id: str):
    """The Panel behind a dataset id; raises DataError if it cannot be opened."""
    if dataset_id in uploads():
        return uploads()[dataset_id]
    root = data_dir()
    return _opened(dataset_id, str(root) if root else "")


def scope_of(dataset_id: str) -> str:
    """Cache scope: shared for demo and workspace data, this session's own for uploads."""
    return session_scope() if dataset_id in uploads() else "shared"
