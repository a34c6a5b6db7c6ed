"""Where a page's panel comes from, and the cached computations on it.

Three kinds of dataset are offered: the built-in demo province, datasets saved in the shared
workspace (the folder named by ``RIFT_DATA``), and panels this browser session uploaded.
Uploads live in ``st.session_state`` only, so one user's upload is never listed, cached or
downloadable in another session until its owner saves it to the workspace.

Every computation is cached by content: the panel travels as ``_panel`` (not hashed) next to
its fingerprint (hashed), plus a scope that is the session's own id for uploads, so even
identical uploads in two sessions never share a cache entry.
"""

from __future__ import annotations

import os
import uuid
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd
import streamlit as st

from explorer.present.frames import DEMO_DATASETS, district_means  # noqa: F401 — re-exported

_UPLOADS = "rift_uploads"
_SESSION_SCOPE = "rift_session_scope"


@dataclass(frozen=True)
class Dataset:
    """One entry of the dataset list: where it lives and what to call it."""

    id: str
    label: str
    source: str  # "demo" | "workspace" | "upload"


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
    except Exception:  # a broken workspace must not hide the demo and the uploads
        listing = pd.DataFrame(columns=["id", "name"])
    for row in listing.itertuples(index=False):
        entries.append(Dataset(str(row.id), f"{row.name} (saved)", "workspace"))
    for dataset_id, panel in uploads().items():
        entries.append(Dataset(dataset_id, f"{panel.name or dataset_id} (this session)", "upload"))
    return entries


@st.cache_resource(show_spinner="Reading the demo province…")
def _demo(kind: str):
    from explorer.data.demo import demo_panel

    return demo_panel(kind)


@st.cache_resource(show_spinner="Opening the saved dataset…", max_entries=8)
def _stored(root: str, dataset_id: str):
    return _workspace(root).open(dataset_id)


def open_dataset(dataset_id: str):
    """The Panel behind a dataset id; raises DataError if it cannot be opened."""
    if dataset_id in DEMO_DATASETS:
        return _demo(DEMO_DATASETS[dataset_id][1])
    if dataset_id in uploads():
        return uploads()[dataset_id]
    root = data_dir()
    return _stored(str(root) if root else "", dataset_id)


def scope_of(dataset_id: str) -> str:
    """Cache scope: shared for demo and workspace data, this session's own for uploads."""
    return session_scope() if dataset_id in uploads() else "shared"


def _tidy(table: pd.DataFrame) -> pd.DataFrame:
    """A plain table for the cache: fresh index, no attached metadata (keeps it small)."""
    out = table.reset_index(drop=True)
    out.attrs = {}
    return out


# --- cached computations: (fingerprint, scope, arguments) is the key -------------------------


def indices(_panel, fingerprint: str, scope: str, method: str, ci: str | None = None):
    """The tidy index table for all years and indices at once (one cache entry per method)."""
    method = method if _panel.kind == "brackets" else "auto"
    if ci == "bootstrap":
        return _bootstrapped(_panel, fingerprint, scope)
    return _indices(_panel, fingerprint, scope, method)


@st.cache_data(show_spinner="Computing the indices for every district and year…", max_entries=64)
def _indices(_panel, fingerprint: str, scope: str, method: str):
    from explorer.stats import indices as index_table

    return index_table.compute(_panel, methods=(method,)).pipe(_tidy)


@st.cache_data(
    show_spinner="Resampling the households 199 times for every district and year…",
    max_entries=16,
)
def _bootstrapped(_panel, fingerprint: str, scope: str):
    from explorer.stats import indices as index_table

    table = index_table.compute(_panel, methods=("auto",), ci="bootstrap", reps=199, seed=0)
    return table.pipe(_tidy)


@st.cache_data(show_spinner="Checking the Lorenz fits…", max_entries=32)
def fits(_panel, fingerprint: str, scope: str, methods: tuple[str, ...]):
    """Fit diagnostics for the grouped-data methods."""
    from explorer.stats import indices as index_table

    return index_table.fits(_panel, methods).pipe(_tidy)


@st.cache_data(show_spinner="Splitting inequality within and between groups…", max_entries=64)
def breakdown(_panel, fingerprint: str, scope: str, by: tuple[str, ...], index: str, method: str):
    """The decomposition table for every year."""
    from explorer.stats import decompose

    return decompose.table(_panel, by=by, index=index, method=method).pipe(_tidy)


@st.cache_data(show_spinner="Decomposing the change…", max_entries=64)
def change(
    _panel, fingerprint: str, scope: str, by: tuple[str, ...], index: str, year_from, year_to
):
    """Change decomposition between two years."""
    from explorer.stats import decompose

    return decompose.change(_panel, by=by, index=index, year_from=year_from, year_to=year_to).pipe(
        _tidy
    )


@st.cache_data(show_spinner=False, max_entries=128)
def lorenz_curves(_panel, fingerprint: str, scope: str, region: str, year: int, methods):
    """Every method's Lorenz curve for one district-year on a shared grid, plus the points."""
    import numpy as np

    from explorer.stats import lorenz

    grid = np.linspace(0.0, 1.0, 101)
    rows = []
    for method in methods:
        fitted = lorenz.fit_panel(_panel, method)
        keys = fitted.keys.pipe(_tidy)
        hit = np.flatnonzero((keys["region"] == region).to_numpy() & (keys["year"] == year))
        if hit.size == 0:
            continue
        values = fitted.evaluate(grid)[hit[0]]
        ok = bool(np.asarray(fitted.valid)[hit[0]])
        rows.append(pd.DataFrame({"p": grid, "L": values, "method": method, "valid": ok}))
    return pd.concat(rows, ignore_index=True) if rows else pd.DataFrame(columns=["p", "L"])


@st.cache_data(show_spinner="Testing for spatial clustering (permutations)…", max_entries=32)
def clusters(
    _panel, fingerprint: str, scope: str, values: pd.Series, permutations: int = 499, seed: int = 0
):
    """Local Moran clusters and the global statistics for one map layer."""
    from explorer.stats import spatial

    graph = spatial_graph(_panel, fingerprint, scope)
    local = spatial.district_table(values, graph, permutations=permutations, seed=seed)
    overall = spatial.global_stats(values, graph, permutations=permutations, seed=seed)
    return _tidy(local), overall


# cache_data, not cache_resource: an upload's graph is user data, and cache_resource would
# hand one shared object to every session.
@st.cache_data(show_spinner=False, max_entries=16)
def _graph(fingerprint: str, scope: str, _boundaries):
    from explorer.stats import spatial

    return spatial.neighbours(_boundaries, kind="queen")


def spatial_graph(panel, fingerprint: str, scope: str):
    """Queen contiguity graph of the districts (islands attached by nearest neighbour)."""
    return _graph(fingerprint, scope, panel.boundaries)


@st.cache_data(show_spinner=False, max_entries=64)
def map_features(
    _panel, fingerprint: str, scope: str, values: pd.DataFrame
) -> list[dict[str, Any]]:
    """Display-ready GeoJSON features (oriented, simplified) with the values merged in."""
    from explorer.present import charts

    return charts.features_for_display(_panel.boundaries, values)


class ChartSpec:
    """A chart kept as its Vega-Lite spec: what is drawn, cached and exported.

    Building an Altair chart and validating it costs more than drawing it; a spec built
    once per view is reused on every redraw. ``to_dict`` makes it usable wherever a chart
    is expected (PNG and SVG export).
    """

    def __init__(self, spec: dict[str, Any]) -> None:
        self.spec = spec

    def to_dict(self, **_: Any) -> dict[str, Any]:
        return self.spec


@st.cache_data(show_spinner=False, max_entries=256)
def choropleth_spec(
    _panel,
    fingerprint: str,
    scope: str,
    values: pd.DataFrame,
    value_label: str,
    classes: tuple[str, ...],
    title: str,
    caption: str,
    selected: tuple[str, ...],
) -> dict[str, Any]:
    """The Atlas map's spec for one layer of values (cached per view)."""
    from explorer.present import charts

    features = map_features(_panel, fingerprint, scope, values)
    chart = charts.choropleth(
        features,
        value_label=value_label,
        classes=list(classes),
        title=title,
        caption=caption,
        selected=selected,
    )
    return chart.to_dict()
