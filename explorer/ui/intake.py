"""The Intake page's pieces: reading uploads, their summary, saved datasets, results out."""

from __future__ import annotations

import json
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import pandas as pd
import streamlit as st

from explorer.data.model import DataError
from explorer.present import vocabulary
from explorer.ui import data, show, state

__all__ = [
    "apply_view_file",
    "read_upload",
    "reading_options",
    "report_html",
    "results_out",
    "stored_datasets",
    "summary",
    "summary_text",
    "view_json",
]

KINDS = {
    "": "Detect from the columns",
    "brackets": "Income shares by population group",
    "units": "Household or person records",
    "means": "One mean income per district",
}
# Our column names a file's columns can be mapped onto.
TARGETS = (
    "region",
    "year",
    "pop_share",
    "income_share",
    "income",
    "weight",
    "mean_income",
    "population",
)
AS_IS = "(as in the file)"


def _safe_name(name: str) -> str:
    return show.slug(Path(name).name) or "upload"


@contextmanager
def _on_disk(*files: Any) -> Iterator[list[Path | None]]:
    """The uploads as files in a private temporary folder, removed afterwards.

    The readers work on paths; the folder lives only while the files are read.
    """
    with tempfile.TemporaryDirectory(prefix="rift-upload-") as folder:
        paths: list[Path | None] = []
        for upload in files:
            if upload is None:
                paths.append(None)
                continue
            path = Path(folder) / _safe_name(upload.name)
            path.write_bytes(upload.getvalue())
            paths.append(path)
        yield paths


@st.cache_data(show_spinner=False, max_entries=16)
def _columns(name: str, file_id: str, scope: str, _content: bytes) -> list[str]:
    # Keyed by the upload's id, so a large file is not hashed again on every rerun.
    from explorer import data as readers

    with tempfile.TemporaryDirectory(prefix="rift-peek-") as folder:
        path = Path(folder) / _safe_name(name)
        path.write_bytes(_content)
        try:
            return [str(c) for c in readers.read_table(path).columns]
        except DataError:
            return []


def reading_options(panel_file: Any, boundary_file: Any) -> dict[str, Any]:
    """Controls for how to read the files; returns the options for ``load_panel``."""
    options: dict[str, Any] = {}
    with st.expander("How to read the files", expanded=False):
        kind = st.selectbox("Kind of data", list(KINDS), format_func=KINDS.get, key="in_kind")
        options["kind"] = kind or None
        if panel_file.name.lower().endswith(".xlsx"):
            options["sheet"] = st.text_input("Sheet (empty: the first)", key="in_sheet") or None
        columns = _columns(
            panel_file.name,
            str(getattr(panel_file, "file_id", "")),
            data.session_scope(),
            panel_file.getvalue(),
        )
        if columns:
            st.markdown("**Which column holds what** (leave as is if the names already match)")
            mapping = {}
            grid = st.columns(4)
            for i, target in enumerate(TARGETS):
                choice = grid[i % 4].selectbox(target, [AS_IS, *columns], key=f"in_map_{target}")
                if choice != AS_IS and choice != target:
                    mapping[target] = choice
            options["column_map"] = mapping or None
        if boundary_file is not None:
            if boundary_file.name.lower().endswith(".gpkg"):
                options["layer"] = st.text_input("Layer (empty: the first)", key="in_layer") or None
            options["boundary_id"] = (
                st.text_input(
                    "Boundary attribute holding the district id (empty: detect)",
                    key="in_boundary_id",
                )
                or None
            )
            options["crs"] = (
                st.text_input(
                    "Coordinate system if the file has none (e.g. EPSG:3035)", key="in_crs"
                )
                or None
            )
    return options


def read_upload(panel_file: Any, boundary_file: Any, options: dict[str, Any]):
    """Read and validate the uploaded files; raises DataError with every problem."""
    from explorer import data as readers

    with st.status("Reading and checking the files…", expanded=True) as status:
        with _on_disk(panel_file, boundary_file) as (panel_path, boundary_path):
            show.caption(f"Reading {panel_file.name}…")
            try:
                loaded = readers.load_panel(panel_path, boundary_path, **options)
            except DataError:
                status.update(label="The files have problems", state="error")
                raise
            except Exception as error:  # a reader failure must still read as a data problem
                status.update(label="The files could not be read", state="error")
                from explorer.data.model import Problem

                raise DataError(
                    (
                        Problem(
                            message=f"the file could not be read ({type(error).__name__})",
                            fix="check that the file is a CSV, Excel, Parquet or boundary "
                            "file of the kind its name says",
                            file=panel_file.name,
                        ),
                    )
                ) from error
        status.update(label=f"Read {loaded.data.shape[0]:,} rows", state="complete")
    st.session_state.setdefault("rift_upload_sources", {})[loaded.fingerprint] = (
        [(panel_file.name, panel_file.getvalue())]
        + ([(boundary_file.name, boundary_file.getvalue())] if boundary_file else []),
        {k: v for k, v in options.items() if v is not None},
    )
    return loaded


def summary(panel: Any, dataset_id: str) -> None:
    """What was read, its warnings and excluded district-years, and the save button."""
    show.markdown("Read **{}**: now shown on every page of this session.", panel.name or dataset_id)
    try:
        described = panel.describe()
    except Exception:
        described = {"kind": panel.kind, "districts": len(panel.regions)}
    described = {key: value for key, value in described.items() if value is not None}
    rows = pd.DataFrame(
        {
            "item": list(described),
            "value": [str(v) for v in described.values()],
            "What": [SUMMARY_ITEMS.get(k, k.replace("_", " ").capitalize()) for k in described],
            "Found": [summary_text(k, v) for k, v in described.items()],
        }
    )
    # The data keep the short keys (item, value); the reader sees the two word columns.
    show.table(rows, "intake_summary", column_order=["What", "Found"])
    if panel.warnings:
        st.warning(f"{len(panel.warnings)} warning(s): the data were used, but check these.")
        show.problem_table(DataError(panel.warnings), "intake_warnings")
    excluded = getattr(panel, "excluded", None)
    if excluded is not None and len(excluded):
        st.warning(f"{len(excluded)} district-year(s) were left out because of their values.")
        show.table(
            excluded,
            "intake_excluded",
            column_config={
                "region": "District",
                "year": st.column_config.NumberColumn("Year", format="%d"),
                "reason": "Why it was left out",
            },
        )
    sources, options = st.session_state.get("rift_upload_sources", {}).get(
        panel.fingerprint, ([], {})
    )
    if st.button(
        "Save to the shared workspace",
        key="intake_save",
        help="Makes this dataset available to everyone using this workspace.",
    ):
        try:
            saved = data.workspace().add(panel, sources, options)
        except DataError as error:
            show.problems(error, heading="The dataset could not be saved")
        else:
            data.uploads().pop(dataset_id, None)
            state.update(dataset=saved)
            st.session_state["intake_last"] = None
            st.rerun()


SUMMARY_ITEMS = {
    "kind": "Kind of data",
    "name": "Name",
    "income_concept": "Income concept",
    "districts": "Districts",
    "district_years": "District-years used",
    "years": "Years",
    "brackets": "Income groups per district-year",
    "units": "Records per district-year",
    "levels": "Higher levels",
    "boundaries": "Boundaries",
    "warnings": "Warnings",
    "excluded": "District-years left out",
    "fingerprint": "Content fingerprint",
}


def _names(items: Any, most: int = 8) -> str:
    items = [str(i) for i in items]
    return ", ".join(items[:most]) + (f" and {len(items) - most} more" if len(items) > most else "")


def summary_text(item: str, value: Any) -> str:
    """One line of the upload summary in words (never a Python dict or list)."""
    if item == "kind":
        return KINDS.get(str(value), str(value))
    if item == "income_concept":
        return str(value) or "not stated in the file"
    if item == "years" and isinstance(value, dict):
        first, last, count = value.get("first"), value.get("last"), value.get("count", 0)
        return f"{first}–{last} ({count} years)" if count else "none"
    if item in ("brackets", "units") and isinstance(value, dict):
        low, high = value.get("min"), value.get("max")
        return f"{low}" if low == high else f"{low} to {high}"
    if item == "levels" and isinstance(value, dict):
        return "; ".join(f"{n} {vocabulary.groups_word(lv)}" for lv, n in value.items()) or "none"
    if item == "boundaries" and isinstance(value, dict):
        text = f"{value.get('matched', 0)} districts matched"
        if value.get("panel_only"):
            text += f"; without a boundary: {_names(value['panel_only'])}"
        if value.get("boundary_only"):
            text += f"; boundaries without data: {_names(value['boundary_only'])}"
        return text
    if isinstance(value, int | float) and not isinstance(value, bool):
        return f"{value:,}"
    return str(value)


def stored_datasets() -> None:
    """The workspace's datasets, with a button to open one."""
    try:
        listing = data.workspace().list()
    except DataError as error:
        show.problems(error, heading="The workspace could not be read")
        return
    root = data.data_dir()
    st.caption(f"Workspace folder: {root}" if root else "Workspace: the default data folder.")
    if listing.empty:
        st.info("No saved datasets yet. Bring in a panel and save it to the workspace.")
        return
    show.table(listing, "intake_stored")
    chosen = st.selectbox(
        "Open a saved dataset",
        list(listing["id"]),
        format_func=lambda i: str(listing.set_index("id").loc[i, "name"]),
        key="intake_open_choice",
    )
    if st.button("Open", key="intake_open"):
        state.update(dataset=str(chosen))
        st.rerun()


def results_out(opened: state.OpenView) -> None:
    """Downloads of the computed tables, the view file and the one-file report."""
    view, panel, compute = opened.view, opened.panel, opened.compute
    st.markdown(
        f"**Dataset:** {vocabulary.dataset_name(view, panel)} "
        f"(content fingerprint `{panel.fingerprint}`, the same for the same data)"
    )
    if panel.kind != "means":
        table = compute.indices(view.method)
        st.markdown("**Every index, district and year**")
        show.table_downloads(table, f"indices-{view.dataset}-{view.method}", key="out_indices")
    if panel.kind == "brackets":
        st.markdown("**Lorenz fit diagnostics**")
        fits = compute.fits((view.method,))
        show.table_downloads(fits, f"fits-{view.dataset}-{view.method}", key="out_fits")

    st.markdown("**This view**")
    left, right = st.columns(2)
    left.download_button(
        "View file (JSON)",
        view.to_json().encode("utf-8"),
        file_name=f"view-{show.slug(view.dataset)}.json",
        mime="application/json",
        key="out_view",
        on_click="ignore",
    )
    right.download_button(
        "Report (one HTML file)",
        lambda: report_html(opened),
        file_name=f"rift-report-{show.slug(view.dataset)}-{view.year}.html",
        mime="text/html",
        key="out_report",
        on_click="ignore",
    )
    view_file = st.file_uploader("Open a view file", type=["json"], key="out_view_in")
    if view_file is not None and st.button("Apply the view file", key="out_view_apply"):
        apply_view_file(view_file.getvalue())
    name = st.text_input("Save this view in the workspace as", key="out_view_name")
    if name and st.button("Save view", key="out_view_save"):
        try:
            saved = data.workspace().save_view(name, view.to_json())
        except DataError as error:
            show.problems(error, heading="The view could not be saved")
        else:
            show.notice(f"Saved as {Path(saved).name}.", "success")


def apply_view_file(content: bytes) -> None:
    """Replace the view by a view file's, with notices for anything that did not fit."""
    from explorer import views

    text = content.decode("utf-8", errors="replace")
    choices = state.known(state.panel(), data.catalog())
    new_view, notices = views.from_json(text, known=choices)
    st.session_state[state.VIEW] = new_view
    st.session_state[state.NOTICES] = list(notices)
    st.switch_page(state.page_path(getattr(new_view, "page", "map") or "map"))


def report_html(opened: state.OpenView) -> bytes:
    """The one-file HTML report of the current view (the same one ``rift report`` writes)."""
    from explorer import figures

    return figures.report_html(opened.view, opened.panel, opened.compute).encode("utf-8")


def view_json(view: Any) -> str:
    """The view as pretty JSON text (for display)."""
    return json.dumps(json.loads(view.to_json()), indent=2)
