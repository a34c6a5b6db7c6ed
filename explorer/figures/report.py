"""The one-file report of a view, built from the same figures the pages show.

Used by the app's report download and by ``rift report VIEWFILE``, so a colleague receives
exactly the figures on the sender's screen, whether or not the app is running.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from explorer.data import catalog
from explorer.data.model import Panel
from explorer.figures.atlas import AtlasFigures, atlas
from explorer.figures.breakdown import breakdown, change
from explorer.figures.compute import Compute, PlainCompute
from explorer.figures.district import district
from explorer.figures.settle import settle
from explorer.figures.timelines import timelines
from explorer.present import cautions, report, vocabulary
from explorer.views import ViewState

__all__ = ["ReportSections", "report_for_view", "report_html", "sections"]


@dataclass(frozen=True)
class ReportSections:
    """Tables, charts, notes and cautions of a view, as :func:`report.build_report` takes."""

    view: ViewState
    panel_info: dict[str, Any]
    tables: dict[str, pd.DataFrame]
    charts: dict[str, Any]
    notes: list[str]
    cautions: list[str]


def _map_section(found: AtlasFigures, tables: dict, built: dict) -> None:
    tables[found.ranking_title] = found.ranking.drop(columns=["wide"], errors="ignore")
    finite = np.isfinite(found.layer["value"].to_numpy(dtype=float)) if len(found.layer) else []
    if found.chart is not None and int(np.sum(finite)) >= 2:
        built["Map"] = found.chart


def _breakdown_section(panel, view, compute, tables, built, notes) -> bool:
    """The within/between split by year and the change between the view's years."""
    split = breakdown(panel, view, compute)
    built["Within and between"] = split.chart
    tables[f"Split of the province's {vocabulary.index_label(split.index)}, {view.year}"] = (
        split.shares
    )
    notes.append(split.note)
    moved = change(panel, view, compute, split.index)
    if moved is None:
        return False
    span = f"{view.year_from}–{view.year_to}"
    built[f"What drove the change, {span}"] = moved.chart
    tables[f"Change terms, {span}"] = moved.terms
    notes.append(moved.note)
    return True


def _district_section(panel, view, compute, tables, built) -> None:
    sheet = district(panel, view, compute)
    if sheet.indices is None or sheet.indices.empty:
        return
    label = f"{sheet.name} ({sheet.region}), {view.year}"
    tables[f"All indices: {label}"] = sheet.indices.drop(columns=["region", "year"])
    built[f"Indices with bounds: {label}"] = sheet.strip


def _panel_info(view: ViewState, panel: Panel) -> dict[str, Any]:
    from explorer.data.dataset_store import facts_of

    facts = facts_of(panel)
    return {
        "name": vocabulary.dataset_name(view, panel),
        "fingerprint": panel.fingerprint,
        "kind": panel.kind,
        "income_concept": facts.income_concept or panel.income_concept or "not stated",
        "unit": facts.unit or "not stated",
        "currency": facts.currency or "not stated",
        "price_base": facts.price_base or "not stated",
        "source": facts.source or "not stated",
        "districts": len(panel.regions),
        "years": f"{panel.years[0]}–{panel.years[-1]}",
    }


def sections(view: ViewState, panel: Panel, compute: Compute | None = None) -> ReportSections:
    """The report's sections: the Map, Timelines, Breakdown and District figures of a view."""
    view = settle(view, panel)
    compute = compute or PlainCompute(panel)
    tables: dict[str, pd.DataFrame] = {}
    built: dict[str, Any] = {}
    notes = [vocabulary.caption(view, panel)]
    found = atlas(panel, view, compute)
    _map_section(found, tables, built)
    built["Over time"] = timelines(panel, view, compute).chart
    changed = False
    if panel.kind == "published":
        notes.append(
            "Published figures are shown as given: they cannot be split into within and "
            "between parts, since the incomes behind them were not published."
        )
    else:
        changed = _breakdown_section(panel, view, compute, tables, built, notes)
    if panel.kind in ("brackets", "units") and view.districts:
        _district_section(panel, view, compute, tables, built)
    if len(panel.excluded):
        tables["District-years set aside, with the reason"] = panel.excluded
    warnings = cautions.for_view(
        panel.kind,
        ranking=True,
        wide_intervals=found.wide_count,
        income_concept=panel.income_concept,
        change=changed,
    )
    return ReportSections(view, _panel_info(view, panel), tables, built, notes, warnings)


def report_html(view: ViewState, panel: Panel, compute: Compute | None = None) -> str:
    """The self-contained HTML report of ``view`` on ``panel``."""
    parts = sections(view, panel, compute)
    return report.build_report(
        parts.view,
        panel_info=parts.panel_info,
        tables=parts.tables,
        charts=parts.charts,
        notes=parts.notes,
        cautions=parts.cautions,
        facts_line=_facts_line(panel),
    )


def _facts_line(panel: Panel) -> str:
    from explorer.data.dataset_store import facts_of

    return facts_of(panel).caption()


def report_for_view(view: ViewState, data_dir: str | Path | None = None) -> str:
    """Open the view's dataset and write its report (for ``rift report``)."""
    return report_html(view, catalog.open_dataset(view.dataset, data_dir))
