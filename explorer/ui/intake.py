"""The Intake page's pieces: reading uploads, their summary, saved datasets, results out."""

from __future__ import annotations

import dataclasses
import json
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import pandas as pd
import streamlit as st

from explorer import views
from explorer.data.dataset_store import facts_of
from explorer.data.model import DataError
from explorer.present import vocabulary
from explorer.ui import data, show, state

__all__ = [
    "apply_view_file",
    "dataset_facts",
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
    "published": "Figures the source published (a Gini, a poverty rate, a median income)",
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
    "gini",
    "poverty_rate",
    "median_income",
    "top10_share",
)
AS_IS = "(as in the file)"


def _safe_name(name: str) -> str:
    return show.slug(Path(name).name) or "upload"


@contextmanager
def _on_disk(*files: Any) -> Iterator[list[Any]]:
    """The uploads as files in a private temporary folder, removed afterwards.

    The readers work on paths; the folder lives only while the files are read. A list
    of uploads (the parts of one Shapefile) becomes a list of paths.
    """
    with tempfile.TemporaryDirectory(prefix="rift-upload-") as folder:
        paths: list[Any] = []
        for upload in files:
            if upload is None:
                paths.append(None)
            elif isinstance(upload, list):
                written = [_write(Path(folder), u) for u in upload]
                paths.append(written[0] if len(written) == 1 else written or None)
            else:
                paths.append(_write(Path(folder), upload))
        yield paths


def _write(folder: Path, upload: Any) -> Path:
    path = folder / _safe_name(upload.name)
    path.write_bytes(upload.getvalue())
    return path


def _as_list(files: Any) -> list[Any]:
    if files is None:
        return []
    return list(files) if isinstance(files, list | tuple) else [files]


@st.cache_data(show_spinner=False, max_entries=16)
def _columns(name: str, file_id: str, scope: str, _content: bytes) -> list[str]:
    # Keyed by the upload's id, so a large file is not hashed again on every rerun.
    from explorer import data as readers
    from explorer.data.tables import HEAD_BYTES

    with tempfile.TemporaryDirectory(prefix="rift-peek-") as folder:
        path = Path(folder) / _safe_name(name)
        # a text table's head is all read_head reads: a large upload is not written out whole
        whole = _content[:4] in (b"PAR1", b"PK\x03\x04")
        path.write_bytes(_content if whole else _content[: HEAD_BYTES + 1])
        try:
            return [str(c) for c in readers.read_head(path).columns]
        except DataError:
            return []


@st.cache_data(show_spinner="Looking at the files…", max_entries=16)
def _preview(key: str, scope: str, _panel: Any, _boundaries: list[Any], choices: str):
    # Keyed by the uploads' ids and the choices (as JSON), not by the files' bytes.
    from explorer.data.office import ReadOptions
    from explorer.data.office.preview import preview_inputs

    chosen = json.loads(choices)
    reading = ReadOptions.from_dict(chosen.pop("reading"))
    with _on_disk(_panel, _boundaries or None) as (panel_path, boundary_path):
        return preview_inputs(panel_path, boundary_path, options=reading, **chosen)


def _file_key(*uploads: Any) -> str:
    return "|".join(f"{u.name}:{getattr(u, 'file_id', '')}:{u.size}" for u in uploads)


MEASURES = {
    "": "Detect from the headers",
    "mean_income": "Mean income",
    "population": "Population",
    "gini": "Gini index (as published)",
}


def _office_choices() -> Any:
    """The planner's overrides of the office reading: header line, measure, year, totals."""
    from explorer.data.office import ReadOptions

    st.markdown("**Change the reading** (only where it was misunderstood)")
    left, middle, right = st.columns(3)
    header = left.number_input(
        "Header on line (0: detect)", min_value=0, max_value=10_000, step=1, key="in_header"
    )
    measure = middle.selectbox(
        "The values are", list(MEASURES), format_func=MEASURES.get, key="in_measure"
    )
    year = right.number_input(
        "Year of a one-year table (0: the table has its years)",
        min_value=0,
        max_value=2200,
        step=1,
        key="in_year",
    )
    keep = st.checkbox(
        "Keep rows recognised as totals as districts", key="in_keep_totals", value=False
    )
    return ReadOptions(
        header_row=int(header) or None,
        measure=measure or None,
        year=int(year) or None,
        keep_aggregates=bool(keep),
    )


def _understood(preview: Any) -> None:
    """What the readers understood, in words, before anything is used."""
    if preview.office:
        st.markdown("**What was understood of the table**")
        st.markdown("\n".join(f"- {show.plain(line)}" for line in preview.lines))
    for problem in preview.problems:
        show.notice(f"{problem.file + ': ' if problem.file else ''}{problem.message}", "warning")


def _level_choices(preview: Any) -> dict[str, str] | None:
    """Proposed levels as checkboxes with group counts, an order and display names."""
    if not preview.levels:
        return None
    st.markdown(
        "**Higher levels** — columns that put every district in exactly one group. "
        "Tick the ones to use, give each a name and an order (1 = outermost)."
    )
    chosen = []
    for i, candidate in enumerate(preview.levels):
        tick, name, order = st.columns([3, 3, 1])
        used = tick.checkbox(
            show.plain(
                f"{candidate.column}: {candidate.groups} groups (from the {candidate.source})"
            ),
            value=True,
            key=f"in_level_{candidate.column}",
        )
        shown = name.text_input(
            "Name shown", value=_readable(candidate.column), key=f"in_level_name_{candidate.column}"
        )
        rank = order.number_input(
            "Order",
            min_value=1,
            max_value=20,
            value=i + 1,
            key=f"in_level_order_{candidate.column}",
        )
        if used:
            chosen.append((int(rank), i, candidate.column, shown.strip() or candidate.column))
    return {column: shown for _, _, column, shown in sorted(chosen)}


CODE_WORDS = {"cd", "code", "id", "nm", "name", "txt"}


def _readable(column: str) -> str:
    """A first guess at a display name, words instead of a code: ``ZONE_CD`` -> Zone,
    ``SUB_REGION`` -> Sub region. The planner edits it."""
    words = column.replace("_", " ").replace("-", " ").split()
    while len(words) > 1 and words[-1].lower() in CODE_WORDS:
        words.pop()
    text = " ".join(words)
    if column.isupper() or "_" in column:
        text = text.capitalize()
    return text or column


def _name_choices(preview: Any, known: dict[str, str]) -> dict[str, str]:
    """Suggested name matches the planner accepts; returns the crosswalk panel -> boundary id."""
    names = preview.names
    accepted = {p: b for p, b in known.items() if names is None or p in names.panel_only}
    if names is None or not names.suggestions:
        return accepted
    st.markdown("**Districts whose names differ between the files**")
    for panel_name, options in names.suggestions.items():
        labels = [b for b, _ in options]
        use = st.checkbox(
            show.plain(f"'{panel_name}' in the panel is '{labels[0]}' in the boundaries"),
            value=known.get(panel_name) == labels[0],
            key=f"in_name_{panel_name}",
        )
        if use:
            accepted[panel_name] = labels[0]
        else:
            accepted.pop(panel_name, None)
    return accepted


def _crs_choice(preview: Any) -> str | None:
    """The coordinate system of a boundary file that names none, from the likely ones."""
    if not preview.crs_missing:
        return None
    st.markdown("**The boundary file names no coordinate system**")
    options = [c.code for c in preview.crs_candidates] + ["other"]
    labels = {c.code: f"{c.code} — {c.label} ({c.reason})" for c in preview.crs_candidates}
    labels["other"] = "Another system (type its EPSG code below)"
    chosen = st.selectbox("Coordinate system", options, format_func=labels.get, key="in_crs_choice")
    if "zz" in chosen or chosen == "other":
        typed = st.text_input(
            "EPSG code (for UTM: 326 and the zone in the north, 327 in the south, e.g. EPSG:32633)",
            key="in_crs",
        )
        return typed.strip() or None
    return chosen


def reading_options(
    panel_file: Any, boundary_files: Any = None, population_file: Any = None
) -> dict[str, Any]:
    """Controls for how to read the files, with a preview of what was understood.

    Returns the keyword options for ``load_panel`` (the population file is added when
    the files are read).
    """
    boundary_files = _as_list(boundary_files)
    options: dict[str, Any] = {}
    with st.expander("How to read the files", expanded=False):
        kind = st.selectbox("Kind of data", list(KINDS), format_func=KINDS.get, key="in_kind")
        options["kind"] = kind or None
        if panel_file.name.lower().endswith(".xlsx"):
            options["sheet"] = st.text_input("Sheet (empty: the first)", key="in_sheet") or None
        _column_choices(panel_file, options)
        if boundary_files:
            _boundary_text_choices(boundary_files, options)
        reading = _office_choices()
    options["options"] = reading
    choices = {
        "reading": reading.to_dict(),
        "sheet": options.get("sheet"),
        "column_map": options.get("column_map"),
        "boundary_id": options.get("boundary_id"),
        "layer": options.get("layer"),
        "crs": st.session_state.get("intake_crs_chosen"),
    }
    preview = _preview(
        _file_key(panel_file, *boundary_files),
        data.session_scope(),
        panel_file,
        boundary_files,
        json.dumps(choices, sort_keys=True, default=str),
    )
    _understood(preview)
    options["crs"] = _crs_choice(preview)
    st.session_state["intake_crs_chosen"] = options["crs"]
    crosswalk = _name_choices(preview, _known_crosswalk())
    options["crosswalk"] = crosswalk or None
    options["levels"] = _level_choices(preview)
    if population_file is not None:
        show.caption(
            f"Populations will be joined from {population_file.name} on district and year."
        )
    return options


def _column_choices(panel_file: Any, options: dict[str, Any]) -> None:
    columns = _columns(
        panel_file.name,
        str(getattr(panel_file, "file_id", "")),
        data.session_scope(),
        panel_file.getvalue(),
    )
    if not columns:
        return
    st.markdown("**Which column holds what** (leave as is if the names already match)")
    mapping = {}
    grid = st.columns(4)
    for i, target in enumerate(TARGETS):
        choice = grid[i % 4].selectbox(target, [AS_IS, *columns], key=f"in_map_{target}")
        if choice != AS_IS and choice != target:
            mapping[target] = choice
    options["column_map"] = mapping or None


def _boundary_text_choices(boundary_files: list[Any], options: dict[str, Any]) -> None:
    if any(f.name.lower().endswith(".gpkg") for f in boundary_files):
        options["layer"] = st.text_input("Layer (empty: the first)", key="in_layer") or None
    options["boundary_id"] = (
        st.text_input(
            "Boundary attribute holding the district id (empty: detect)", key="in_boundary_id"
        )
        or None
    )


def _known_crosswalk() -> dict[str, str]:
    """Name matches accepted before: this session's, then those stored with datasets."""
    known: dict[str, str] = {}
    try:
        workspace = data.workspace()
        for ident in workspace.list()["id"]:
            walk = workspace.options(str(ident)).get("crosswalk")
            if isinstance(walk, dict):
                known.update({str(k): str(v) for k, v in walk.items()})
    except DataError:
        pass
    known.update(st.session_state.get("intake_crosswalk") or {})
    return known


def _stored_options(options: dict[str, Any], population_file: Any) -> dict[str, Any]:
    """The options as plain values for the dataset's manifest."""
    stored = {k: v for k, v in options.items() if v is not None and k != "options"}
    reading = options.get("options")
    if reading is not None:
        stored["reading"] = reading.to_dict()
    if population_file is not None:
        stored["population"] = population_file.name
    return stored


def read_upload(
    panel_file: Any,
    boundary_files: Any,
    options: dict[str, Any],
    population_file: Any = None,
    changes: Any = None,
):
    """Read and validate the uploaded files; raises DataError with every problem.

    With boundary changes (:class:`explorer.ui.intake_vintages.Changes`) the panel is read
    without boundaries and carried to the target vintage; the carried panel is returned.
    """
    from explorer import data as readers
    from explorer.ui import intake_vintages

    boundary_files = _as_list(boundary_files)
    st.session_state["intake_crosswalk"] = options.get("crosswalk") or {}
    later = [u for u, _ in changes.later] if changes is not None else []
    extra = [changes.table, changes.finer] if changes is not None else [None, None]
    with st.status("Reading and checking the files…", expanded=True) as status:
        with _on_disk(panel_file, boundary_files or None, population_file, *extra, *later) as paths:
            panel_path, boundary_path, population_path, table_path, finer_path = paths[:5]
            show.caption(f"Reading {panel_file.name}…")
            try:
                loaded = readers.load_panel(
                    panel_path,
                    None if changes is not None else boundary_path,
                    population=population_path,
                    **options,
                )
                if changes is not None:
                    show.caption(vocabulary.VINTAGE_WORDS["part"].split(":")[0] + "…")
                    loaded, said = intake_vintages.carry(
                        loaded,
                        panel_file.name,
                        boundary_path,
                        changes,
                        {"later": paths[5:], "table": table_path, "finer": finer_path},
                    )
                    st.session_state.setdefault("rift_carry_said", {})[loaded.fingerprint] = said
            except DataError:
                status.update(label="The files have problems", state="error")
                raise
            except Exception as error:  # a reader failure must still read as a data problem
                status.update(label="The files could not be read", state="error")
                raise _unreadable(panel_file.name, error) from error
        status.update(label=f"Read {loaded.data.shape[0]:,} rows", state="complete")
    uploads = [panel_file, *boundary_files] + ([population_file] if population_file else [])
    stored = _stored_options(options, population_file)
    if changes is not None:
        uploads += changes.uploads()
        stored["carrying"] = changes.options()
    st.session_state.setdefault("rift_upload_sources", {})[loaded.fingerprint] = (
        [(u.name, u.getvalue()) for u in uploads],
        stored,
    )
    return loaded


def _unreadable(name: str, error: Exception) -> DataError:
    from explorer.data.model import Problem

    return DataError(
        (
            Problem(
                message=f"the file could not be read ({type(error).__name__})",
                fix="check that the file is a CSV, Excel, Parquet or boundary "
                "file of the kind its name says",
                file=name,
            ),
        )
    )


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
    _carried_summary(panel)
    from explorer.data.workspace import equal_weight_notice

    notice = equal_weight_notice(panel)
    if notice:
        st.info(notice + " Bring the populations in with the population table above.")
    sources, options = st.session_state.get("rift_upload_sources", {}).get(
        panel.fingerprint, ([], {})
    )
    facts = dataset_facts(panel)
    if st.button(
        "Save to the shared workspace",
        key="intake_save",
        help="Makes this dataset available to everyone using this workspace.",
    ):
        try:
            saved = data.workspace().add(panel, sources, options, facts)
        except DataError as error:
            show.problems(error, heading="The dataset could not be saved")
        else:
            data.uploads().pop(dataset_id, None)
            state.update(dataset=saved)
            st.session_state["intake_last"] = None
            where = data.data_dir() or "the default data folder"
            st.session_state[_FLASH] = (
                f"Saved “{facts.name or panel.name or saved}” to the shared workspace in {where} "
                f"(id {saved}); it is now the dataset on every page, and listed below."
            )
            st.rerun()


def _carried_summary(panel: Any) -> None:
    """How a carried panel was carried: what carrying said, then each district-year's way."""
    from explorer.data.carrying import carrying_of

    carrying = carrying_of(panel)
    if carrying is None:
        return
    for line in st.session_state.get("rift_carry_said", {}).get(panel.fingerprint, []):
        show.notice(line, "info")
    show.markdown(
        "**{}** (weights {})",
        vocabulary.CARRIED_NOTE_TITLE.format(year=carrying.to_vintage),
        carrying.weights_said(),
    )
    show.table(
        carrying.record[["region", "year", "carried", "how"]],
        "intake_carried",
        column_config={
            "region": vocabulary.CARRIED_COLUMNS["region"],
            "year": st.column_config.NumberColumn("Year", format="%d"),
            "carried": "Carried",
            "how": vocabulary.CARRIED_COLUMNS["how"],
        },
    )


UNIT_LABELS = {
    "": "Not stated",
    "person": "Per person",
    "household": "Per household",
    "per capita": "Per capita (household income divided by its members)",
}


def dataset_facts(panel: Any):
    """The facts the planner gives or confirms before saving: name, concept, unit, money,
    source. Shown in captions, the report and the view file."""
    from explorer.data.workspace import DatasetFacts

    st.markdown("**About this dataset** (shown with every figure made from it)")
    left, right = st.columns(2)
    name = left.text_input("Name", value=panel.name, key="facts_name")
    concept = right.text_input(
        "Income concept (e.g. disposable household income)",
        value=panel.income_concept,
        key="facts_concept",
    )
    unit = left.selectbox(
        "Income per", list(UNIT_LABELS), format_func=UNIT_LABELS.get, key="facts_unit"
    )
    currency = right.text_input("Currency", key="facts_currency")
    price_base = left.text_input(
        "Price base (e.g. current prices, 2015 prices)", key="facts_prices"
    )
    source = right.text_input("Source", key="facts_source")
    return DatasetFacts(
        name=name.strip(),
        income_concept=concept.strip(),
        unit=unit,
        currency=currency.strip(),
        price_base=price_base.strip(),
        source=source.strip(),
    )


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


#: Session key of what the last rename or delete did (said once, after the rerun).
_FLASH = "intake_stored_done"


def stored_datasets() -> None:
    """The workspace's datasets, with a button to open one."""
    done = st.session_state.pop(_FLASH, None)
    if done:
        show.notice(done, "success")
    try:
        listing = data.workspace().list()
        damaged = data.workspace().damaged()
    except DataError as error:
        show.problems(error, heading="The workspace could not be read")
        return
    root = data.data_dir()
    st.caption(f"Workspace folder: {root}" if root else "Workspace: the default data folder.")
    if not damaged.empty:
        noun = "dataset cannot" if len(damaged) == 1 else "datasets cannot"
        show.notice(f"{len(damaged)} stored {noun} be opened; why is listed below.", "warning")
        show.table(damaged, "intake_damaged")
    if listing.empty:
        st.info("No saved datasets yet. Bring in a panel and save it to the workspace.")
        return
    show.table(listing, "intake_stored")
    rows = listing.set_index("id")
    labels = data.saved_labels(listing)  # what tells same-named datasets apart
    chosen = st.selectbox(
        "Open a saved dataset",
        list(listing["id"]),
        format_func=lambda ident: labels.get(ident, ident),
        key="intake_open_choice",
    )
    if st.button("Open", key="intake_open"):
        state.update(dataset=str(chosen))
        st.rerun()
    _rename_or_delete(str(chosen), str(rows.loc[chosen, "name"]))


def _rename_or_delete(ident: str, name: str) -> None:
    """Rename the chosen stored dataset, or delete it after a confirmation."""
    with st.expander("Rename or delete this dataset"):
        new = st.text_input("New name", value=name, key="intake_rename_name", max_chars=120)
        if st.button("Rename", key="intake_rename"):
            cleaned = new.strip()
            if not cleaned:
                show.notice("A dataset needs a name: type one before renaming.", "warning")
            else:
                facts = data.workspace().facts(ident)
                data.workspace().set_facts(ident, dataclasses.replace(facts, name=cleaned))
                st.session_state[_FLASH] = f"Renamed to “{cleaned}” (id {ident})."
                st.rerun()
        sure = st.checkbox(
            f"Yes, delete “{show.plain(name)}” and its files from the workspace",
            key="intake_delete_confirm",
        )
        if st.button("Delete", key="intake_delete", disabled=not sure):
            data.workspace().remove(ident)
            if state.current_view().dataset == ident:
                state.update(dataset="demo")  # the view must not point at what is gone
            st.session_state.pop("intake_delete_confirm", None)
            st.session_state[_FLASH] = f"Deleted “{name}” (id {ident}) and its files."
            st.rerun()


def results_out(opened: state.OpenView) -> None:
    """Downloads of the computed tables, the view file and the one-file report."""
    view, panel, compute = opened.view, opened.panel, opened.compute
    show.markdown(
        "**Dataset:** {} (content fingerprint `{}`, the same for the same data)",
        vocabulary.dataset_name(view, panel),
        panel.fingerprint,
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
        views.view_file_text(view, facts_of(panel).to_dict()).encode("utf-8"),
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
    # a form, so that Enter in the name field saves
    with st.form("out_view_form", clear_on_submit=False, border=False):
        name = st.text_input("Save this view in the workspace as", key="out_view_name")
        pressed = st.form_submit_button("Save view")
    if pressed and not name.strip():
        show.notice("Type a name for the view first.", "warning")
    elif pressed:
        try:
            saved = data.workspace().save_view(name, view.to_json())
        except DataError as error:
            show.problems(error, heading="The view could not be saved")
        else:
            show.notice(
                f"Saved as {Path(saved).name} in the workspace. The same view as a link "
                "(add it to this app's address):",
                "success",
            )
            st.code(view.to_link() or "?", language=None)


def apply_view_file(content: bytes) -> None:
    """Replace the view by a view file's, with notices for anything that did not fit.

    A file that is not a view file at all (not JSON, another version, too large) leaves the
    current view as it is and says why: opening the default view in its place would show
    something other than what the file was meant to show. A byte-order mark is accepted.
    """
    from explorer import views

    try:
        text = views.check_view_file(content)
    except views.ViewFileError as error:
        show.notice(f"The view file was not applied: {error}. The view is unchanged.", "error")
        return
    choices = state.known(state.panel(), data.catalog())
    new_view, notices = views.from_json(text, known=choices)
    st.session_state[state.VIEW] = new_view
    state.add_notices(notices, source=state.FROM_VIEW_FILE)
    st.switch_page(state.page_path(getattr(new_view, "page", "map") or "map"))


def report_html(opened: state.OpenView) -> bytes:
    """The one-file HTML report of the current view (the same one ``rift report`` writes)."""
    from explorer import figures

    return figures.report_html(opened.view, opened.panel, opened.compute).encode("utf-8")


def view_json(view: Any) -> str:
    """The view as pretty JSON text (for display)."""
    return json.dumps(json.loads(view.to_json()), indent=2)
