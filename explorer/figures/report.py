"""The one-file report of a view, built from the same figures the pages show.

Used by the app's report download and by ``rift report VIEWFILE``, so a colleague receives
exactly the figures on the sender's screen, whether or not the app is running.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from explorer.data import catalog
from explorer.data.model import Panel
from explorer.figures import carried as carried_figures
from explorer.figures import report_tables
from explorer.figures.atlas import AtlasFigures, atlas
from explorer.figures.breakdown import breakdown, change, poverty_split
from explorer.figures.brief import briefing
from explorer.figures.compute import Compute, PlainCompute
from explorer.figures.district import district
from explorer.figures.settle import settle
from explorer.figures.tables import names
from explorer.figures.timelines import timelines
from explorer.present import cautions, report, vocabulary
from explorer.present.report import ReportTable
from explorer.views import ViewState

__all__ = ["ReportSections", "report_for_view", "report_html", "sections"]


@dataclass(frozen=True)
class ReportSections:
    """Tables, charts, notes and cautions of a view, as :func:`report.build_report` takes.

    ``absent`` holds one sentence per section the view leaves out, saying why.
    """

    view: ViewState
    panel_info: dict[str, Any]
    tables: dict[str, ReportTable]
    charts: dict[str, Any]
    notes: list[str]
    cautions: list[str]
    absent: list[str] = field(default_factory=list)
    #: The briefing's paragraphs as (title, sentences), printed first.
    briefing: tuple[tuple[str, tuple[str, ...]], ...] = ()


def _map_section(found: AtlasFigures, kind: str, tables: dict, built: dict, absent: list) -> None:
    if found.empty:
        absent.append(f"Map and ranking: {found.notices[0]}")
        return
    tables[found.ranking_title] = report_tables.ranking_table(found, kind)
    finite = np.isfinite(found.layer["value"].to_numpy(dtype=float))
    if found.chart is not None and int(np.sum(finite)) >= 2:
        built["Map"] = found.chart
    elif found.chart is None:
        absent.append(f"Map: {found.remark or 'no map layer for this view.'}")
    else:
        absent.append("Map: fewer than two districts have a value this year, nothing to colour.")


def _breakdown_section(panel, view, compute, tables, built, notes, absent) -> bool:
    """The within/between split by year and the change between the view's years."""
    split = breakdown(panel, view, compute)
    built["Within and between"] = split.shown_chart
    tables[f"Split of the province's {vocabulary.index_label(split.index)}, {view.year}"] = (
        report_tables.split_table(split.shares)
    )
    notes.extend(n for n in (split.instead, split.note) if n)
    moved = change(panel, view, compute, split.index)
    if moved is None:
        absent.append(
            "What drove the change: the view's 'From' year is not before its 'To' year; "
            "choose two years on the Breakdown page to see it."
        )
        return False
    span = f"{view.year_from}–{view.year_to}"
    built[f"What drove the change, {span}"] = moved.shown_chart
    tables[f"Change terms, {span}"] = report_tables.change_table(moved)
    notes.append(moved.note)
    return True


def _district_section(panel, view, compute, tables, built, absent) -> None:
    sheet = district(panel, view, compute)
    label = f"{sheet.name} ({sheet.region}), {view.year}"
    if panel.kind == "means":
        built[f"Mean income over time: {sheet.name} ({sheet.region})"] = sheet.means_chart
        tables[f"Mean income by year: {sheet.name} ({sheet.region})"] = (
            report_tables.district_means(sheet)
        )
        return
    if panel.kind == "published":
        built[f"{sheet.name} among the districts over time"] = sheet.means_chart
        tables[f"Published figures: {label}"] = report_tables.district_published(sheet)
        return
    if sheet.indices is None or sheet.indices.empty:
        absent.append(f"District sheet: no index for {label}.")
        return
    tables[f"All indices: {label}"] = report_tables.district_indices(sheet, panel.kind)
    if sheet.welfare is not None:
        tables[f"Welfare in money: {label}"] = report_tables.district_welfare(sheet)
    if sheet.growth is not None and sheet.growth.chart is not None:
        built[f"Growth at each percentile: {sheet.name} ({sheet.region})"] = sheet.growth.chart
        tables[f"Growth: {sheet.name} ({sheet.region})"] = report_tables.plain_facts(
            sheet.growth.facts, sheet.growth.note
        )
    if sheet.has_bounds:
        built[f"Indices with bounds: {label}"] = sheet.strip
    else:  # dots without bars would say nothing the table does not
        absent.append(
            f"Chart of the indices with bounds, {label}: " + vocabulary.no_bound_text(panel.kind)
        )


def _poverty_section(panel, view, compute, tables, built, absent) -> None:
    """Poverty of every district against the view's line, and where the province's lies."""
    split = poverty_split(panel, view, compute)
    if split is None:
        return
    line = vocabulary.poverty_line_words(view)
    if panel.kind == "means":
        absent.append(f"Poverty: {split.notice}")
        return
    rows = compute.poverty(view.poverty_line, view.relative_to, view.method)
    rows = rows[rows["year"] == view.year]
    named = dict(zip(*(names(panel)[c] for c in ("region", "name")), strict=True))
    if len(rows):
        tables[f"Poverty by district, {view.year}, line {line}"] = report_tables.poverty_table(
            rows, named
        )
    if split.table is None:
        absent.append(f"Where the poverty lies: {split.notice}")
        return
    label = vocabulary.index_label(split.index)
    built[f"Where the province's {label[:1].lower() + label[1:]} lies, {view.year}"] = split.chart
    tables[f"{label} split over groups, {view.year}"] = report_tables.poverty_split_table(split)


def _what_if_section(panel, view, compute, tables, built, notes, absent) -> None:
    """The view's what-if scenario: before and after, the budget, who gains."""
    from explorer.figures.what_if import what_if

    shown = what_if(panel, view, compute)
    if shown.notice:
        absent.append(f"What if: {shown.notice}")
        return
    year = view.year
    for name, frame in (("inequality", shown.indices), ("poverty", shown.poverty)):
        tables[f"What if: the province's {name}, {year}, before and after"] = (
            report_tables.scenario_table(frame)
        )
    tables[f"What if: cost and revenue, {year}"] = report_tables.plain_facts(
        shown.budget, vocabulary.WHAT_IF_CAUTION
    )
    built[f"What if: who gains, {year}"] = shown.gain_chart
    if shown.change_map is not None:
        built[f"What if: change of each district's Gini, {year}"] = shown.change_map
    notes.extend(shown.notes)


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
    tables: dict[str, ReportTable] = {}
    built: dict[str, Any] = {}
    absent: list[str] = []
    notes = [vocabulary.caption(view, panel)]
    found = atlas(panel, view, compute)
    _map_section(found, panel.kind, tables, built, absent)
    built["Over time"] = timelines(panel, view, compute).chart
    changed = False
    if panel.kind == "published":
        absent.append(
            "Breakdown: published figures are shown as given; they cannot be split into "
            "within and between parts, since the incomes behind them were not published."
        )
    else:
        changed = _breakdown_section(panel, view, compute, tables, built, notes, absent)
    _poverty_section(panel, view, compute, tables, built, absent)
    if view.scenario:
        _what_if_section(panel, view, compute, tables, built, notes, absent)
    if view.districts:
        _district_section(panel, view, compute, tables, built, absent)
    else:
        absent.append(
            "District sheet: no district is chosen in this view; choose one on the Map or "
            "the District sheet."
        )
    carried = carried_figures.report_table(
        panel, dict(zip(*(names(panel)[c] for c in ("region", "name")), strict=True))
    )
    if carried is not None:
        tables[vocabulary.CARRIED_REPORT_TITLE] = carried
    if len(panel.excluded):
        named = dict(zip(*(names(panel)[c] for c in ("region", "name")), strict=True))
        tables["District-years set aside, with the reason"] = report_tables.set_aside_table(
            panel.excluded, named
        )
    warnings = cautions.for_view(
        panel.kind,
        ranking=True,
        wide_intervals=found.wide_count,
        income_concept=panel.income_concept,
        change=changed,
    )
    told = briefing(panel, view, compute)
    said = tuple((p.title, tuple(s.text for s in p.sentences)) for p in told.paragraphs)
    return ReportSections(
        view, _panel_info(view, panel), tables, built, notes, warnings, absent, said
    )


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
        absent=parts.absent,
        briefing=parts.briefing,
    )


def _facts_line(panel: Panel) -> str:
    from explorer.data.dataset_store import facts_of

    return facts_of(panel).caption()


def report_for_view(view: ViewState, data_dir: str | Path | None = None) -> str:
    """Open the view's dataset and write its report (for ``rift report``)."""
    return report_html(view, catalog.open_dataset(view.dataset, data_dir))
