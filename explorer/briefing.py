"""The one-file report of a view: the same tables and charts the pages show, in one HTML file.

Used by the app's report download and by ``rift report VIEWFILE``, so a colleague receives
exactly the figures on the sender's screen, whether or not the app is running.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from explorer import data as io
from explorer.data.model import DataError, Panel, Problem
from explorer.present import cautions, charts, frames, report
from explorer.stats import decompose, indices
from explorer.views import ViewState

_DECOMPOSABLE = ("theil_t", "mld", "gini") + tuple(
    i for i in frames.DECOMPOSABLE if i.startswith("ge_")
)


def open_dataset(dataset_id: str, data_dir: str | Path | None = None) -> Panel:
    """The panel behind a view's dataset id: a demo dataset or one stored in a workspace."""
    if dataset_id in frames.DEMO_DATASETS:
        return io.demo_panel(frames.DEMO_DATASETS[dataset_id][1])
    from explorer.data.workspace import Workspace

    workspace = Workspace(Path(data_dir)) if data_dir else Workspace()
    known = set(workspace.list()["id"]) if len(workspace.list()) else set()
    if dataset_id not in known:
        raise DataError(
            [
                Problem(
                    f"the view's dataset {dataset_id!r} is not in the workspace",
                    fix="name the workspace that holds it with --data DIR, or save the "
                    "dataset there from the app's Intake page first",
                )
            ]
        )
    return workspace.open(dataset_id)


def settle(view: ViewState, panel: Panel) -> ViewState:
    """The view with empty choices filled from the panel (latest year, whole range)."""
    years = [int(y) for y in panel.years]
    changes: dict[str, Any] = {}
    if view.year is None or view.year not in years:
        changes["year"] = years[-1]
    if view.year_from is None or view.year_from not in years:
        changes["year_from"] = years[0]
    if view.year_to is None or view.year_to not in years:
        changes["year_to"] = years[-1]
    if panel.kind != "brackets" and view.method != "auto":
        changes["method"] = "auto"
    return view.replace(**changes) if changes else view


def _map_section(view, panel, table, out_tables, out_charts) -> int:
    """Map and ranking of the view's index; returns how many districts have wide bounds."""
    values = frames.map_values(panel, table, view.year, view.index)
    ranked = frames.ranking(values)
    out_tables["Districts ranked (1 = most unequal)"] = ranked.drop(
        columns=["wide"], errors="ignore"
    )
    finite = values[np.isfinite(values["value"].to_numpy(dtype=float))]
    if panel.boundaries is not None and len(finite) >= 2:
        classification = charts.classify(finite["value"], view.classes, view.k)
        values = values.assign(klass=classification.assign(values["value"]))
        features = charts.features_for_display(
            panel.boundaries,
            values[["region", "value", "lower", "upper", "klass", "wide"]],
        )
        out_charts["Map"] = charts.choropleth(
            features,
            value_label=frames.value_label(view, panel),
            classes=classification.labels,
            title=f"{frames.value_label(view, panel)}, {view.year}",
            caption=frames.caption(view, panel),
            selected=view.districts,
        )
    return int(values["wide"].sum())


def _timeline_section(view, panel, table, out_charts) -> None:
    series = table[table["index"] == view.index]
    series = series.assign(region=series["region"].astype(str)).merge(
        frames.names(panel), on="region", how="left"
    )
    out_charts["Over time"] = charts.trajectories(
        series,
        index=view.index,
        highlight=view.districts,
        title=f"{frames.value_label(view, panel)} by district over time",
        caption=frames.caption(view, panel).replace(f", {view.year}", ""),
    )


def _breakdown_section(view, panel, out_tables, out_charts, notes) -> bool:
    """The within/between split by year, and the change between the view's two years."""
    index = view.decomposition_index
    if index not in _DECOMPOSABLE:
        index = "theil_t"
    levels = tuple(panel.levels)
    parts = decompose.table(panel, by=levels, index=index, method=view.method)
    by_level = frames.per_level(parts)
    out_charts["Within and between"] = charts.components(
        by_level,
        index=index,
        caption=frames.caption(view, panel).replace(f", {view.year}", "")
        + " Bar height = the province's total.",
    )
    out_tables[f"Split of the province's {frames.index_label(index)}, {view.year}"] = (
        frames.share_table(by_level, view.year)
    )
    notes.append(
        f"Breakdown of {frames.index_label(index)} over "
        + (" → ".join([*levels, "district"]) if levels else "districts")
        + (
            "; the Gini's overlap part after Dagum (1997)."
            if index == "gini"
            else "; exact additive split (Shorrocks 1980)."
        )
    )
    if view.year_from is not None and view.year_to is not None and view.year_from < view.year_to:
        change_index = index if index in ("mld", "theil_t") else "mld"
        terms = decompose.change(panel, levels, change_index, view.year_from, view.year_to)
        out_charts[f"What drove the change, {view.year_from}–{view.year_to}"] = charts.change_bars(
            terms
        )
        out_tables[f"Change terms, {view.year_from}–{view.year_to}"] = terms
        notes.append(
            f"Change of {frames.index_label(change_index)} split after Mookherjee & "
            "Shorrocks (1982); the residual is the part the approximation leaves."
        )
        return True
    return False


def _district_section(view, panel, table, out_tables, out_charts) -> None:
    region = view.districts[0]
    own = table[(table["region"].astype(str) == region) & (table["year"] == view.year)]
    if own.empty:
        return
    names = frames.names(panel).set_index("region")["name"]
    label = f"{names.get(region, region)} ({region}), {view.year}"
    out_tables[f"All indices: {label}"] = own.drop(columns=["region", "year"])
    out_charts[f"Indices with bounds: {label}"] = charts.interval_strip(
        own, region=region, year=view.year
    )


def sections(view: ViewState, panel: Panel) -> dict[str, Any]:
    """Tables, charts, notes and cautions of a view, as :func:`report.build_report` takes."""
    view = settle(view, panel)
    tables: dict[str, pd.DataFrame] = {}
    built: dict[str, Any] = {}
    notes = [frames.caption(view, panel)]
    table = None
    if panel.kind != "means":
        table = indices.compute(panel, methods=(view.method,))
    wide = _map_section(view, panel, table, tables, built)
    if table is not None:
        _timeline_section(view, panel, table, built)
    changed = _breakdown_section(view, panel, tables, built, notes)
    if table is not None and view.districts:
        _district_section(view, panel, table, tables, built)
    if len(panel.excluded):
        tables["District-years set aside, with the reason"] = panel.excluded
    warnings = cautions.for_view(
        panel.kind,
        ranking=True,
        wide_intervals=wide,
        income_concept=panel.income_concept,
        change=changed,
    )
    info = {"name": frames.dataset_name(view, panel), "fingerprint": panel.fingerprint}
    info.update(
        kind=panel.kind,
        income_concept=panel.income_concept or "not stated",
        districts=len(panel.regions),
        years=f"{panel.years[0]}–{panel.years[-1]}",
    )
    return {
        "view": view,
        "panel_info": info,
        "tables": tables,
        "charts": built,
        "notes": notes,
        "cautions": warnings,
    }


def report_html(view: ViewState, panel: Panel) -> str:
    """The self-contained HTML report of ``view`` on ``panel``."""
    parts = sections(view, panel)
    return report.build_report(
        parts["view"],
        panel_info=parts["panel_info"],
        tables=parts["tables"],
        charts=parts["charts"],
        notes=parts["notes"],
        cautions=parts["cautions"],
    )


def report_for_view(view: ViewState, data_dir: str | Path | None = None) -> str:
    """Open the view's dataset and write its report (for ``rift report``)."""
    return report_html(view, open_dataset(view.dataset, data_dir))
