"""The report's tables in the pages' words: titled columns, formatted numbers, notes once.

Each function takes the figures a page shows and returns a :class:`ReportTable` whose
``data`` keep their keys (as the pages' tables do) and whose ``shown`` rows are text with
the labels and number formats of :mod:`explorer.present.vocabulary`. A note shared by
several rows is taken out of the table and said once under it.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
import pandas as pd

from explorer.figures.atlas import RANK_COLUMNS, AtlasFigures
from explorer.figures.breakdown import ChangeFigures, PovertySplit
from explorer.figures.district import DistrictFigures, method_word
from explorer.present import vocabulary
from explorer.present.report import ReportTable

__all__ = [
    "change_table",
    "district_welfare",
    "plain_facts",
    "scenario_table",
    "poverty_table",
    "poverty_split_table",
    "district_indices",
    "district_means",
    "district_published",
    "notes_once",
    "ranking_table",
    "set_aside_table",
    "split_table",
]


def _number(value: Any) -> str:
    return vocabulary.figure(value, digits=4)


def _money(value: Any) -> str:
    return vocabulary.figure(value, money=True)


def _text(value: Any) -> str:
    return "" if value is None or (isinstance(value, float) and np.isnan(value)) else str(value)


def _shown(
    frame: pd.DataFrame,
    titles: Mapping[str, str],
    cells: Mapping[str, Callable[[dict[str, Any]], str]],
) -> pd.DataFrame:
    """Columns in ``titles`` (in order, those present), each cell made by ``cells`` or as text."""
    rows = frame.reset_index(drop=True).to_dict("records")
    out = pd.DataFrame(index=range(len(rows)))
    for column, title in titles.items():
        if column not in frame.columns:
            continue
        make = cells.get(column, lambda row, c=column: _text(row[c]))
        out[title] = [make(row) for row in rows]
    return out


def notes_once(shown: pd.DataFrame, column: str, label: str) -> tuple[pd.DataFrame, list[str]]:
    """Take a note column out of the table when a note repeats, and say each note once.

    Parameters
    ----------
    shown : DataFrame
        Text table.
    column : str
        The note column's title.
    label : str
        The column whose text names a row in the sentence (e.g. ``Index``).

    Returns
    -------
    (DataFrame, list of str)
        The table (without ``column`` when it was taken out) and one sentence per note,
        naming the rows it applies to (none named when it applies to all).
    """
    if column not in shown.columns:
        return shown, []
    notes = shown[column].fillna("").astype(str)
    given = notes[notes != ""]
    if given.empty:
        return shown.drop(columns=[column]), []
    if not given.duplicated().any() and len(given) < len(shown):
        return shown, []  # each note is its row's own: it stays beside its row
    sentences = []
    for note in dict.fromkeys(given):
        rows = shown.loc[notes == note, label].astype(str).tolist()
        said = note[:1].upper() + note[1:]
        said = said if said.endswith(".") else f"{said}."
        if len(rows) == len(shown):
            sentences.append(f"{column}: {said}")
        else:
            sentences.append(f"{column} for {', '.join(rows)}: {said}")
    return shown.drop(columns=[column]), sentences


def ranking_table(found: AtlasFigures, kind: str) -> ReportTable:
    """The Map page's ranking: its columns, titles and formats, its caution under it."""
    means = kind in ("means", "published")  # no bounds to show
    data = found.ranking.drop(columns=["wide"], errors="ignore")
    titles = {column: vocabulary.COLUMN_LABELS[column] for column in RANK_COLUMNS if column in data}
    titles["value"] = found.value_label
    if found.moved_since is None:
        titles.pop("rank_then", None)
        titles.pop("move", None)
    else:
        titles["rank_then"] = f"Rank in {found.moved_since}"
        titles["move"] = f"Move since {found.moved_since}"
    fmt = _money if found.money else _number
    cells = {
        "value": lambda row: fmt(row["value"]),
        "lower": lambda row: vocabulary.bound_text(row["lower"]) or "—",
        "upper": lambda row: vocabulary.bound_text(row["upper"]) or "—",
        "rank": lambda row: _text(row["rank"]),
        "rank_then": lambda row: vocabulary.figure(row.get("rank_then"), money=True),
    }
    notes = [found.ranking_caution, *found.notices]
    bounds = data[["lower", "upper"]].to_numpy(dtype=float) if len(data) else np.empty((0, 2))
    if means or not np.isfinite(bounds).any():
        titles.pop("lower", None)
        titles.pop("upper", None)
        titles.pop("rank_range", None)
        if not means:
            notes.append(vocabulary.no_bound_text(kind))
    return ReportTable(data, _shown(data, titles, cells), tuple(notes))


def _part_cells(frame: pd.DataFrame) -> dict[str, Callable[[dict[str, Any]], str]]:
    cells: dict[str, Callable[[dict[str, Any]], str]] = {
        column: make for column, make in vocabulary.PART_TEXT.items() if column in frame
    }
    cells["value"] = lambda row: _number(vocabulary.tidy_zero(pd.Series([row["value"]]))[0])
    cells["share"] = lambda row: vocabulary.percent(
        vocabulary.tidy_zero(pd.Series([row["share"]]))[0]
    )
    return cells


def split_table(shares: pd.DataFrame) -> ReportTable:
    """The Breakdown page's split of one year: parts in words, shares as percentages."""
    titles = {k: v for k, v in vocabulary.PART_COLUMNS.items() if k != "year"}
    return ReportTable(shares, _shown(shares, titles, _part_cells(shares)))


def change_table(moved: ChangeFigures) -> ReportTable:
    """The change terms as the Breakdown page lists them, with what each term means."""
    terms = moved.terms
    titles = {k: v for k, v in vocabulary.CHANGE_COLUMNS.items() if k != "year"}
    notes = [n for n in (moved.notice, moved.term_help().replace("**", "")) if n]
    return ReportTable(terms, _shown(terms, titles, _part_cells(terms)), tuple(notes))


def district_indices(sheet: DistrictFigures, kind: str) -> ReportTable:
    """The District sheet's "All indices" table; method and notes said once when shared."""
    data = sheet.indices.drop(columns=["region", "year"])
    columns = {"index": "Index", "value": "Value", "lower": "Lower bound", "upper": "Upper bound"}
    columns |= {"method": vocabulary.INDEX_COLUMNS["Method"], "note": "Note"}
    cells = {
        "index": lambda row: vocabulary.index_label(row["index"]),
        "value": lambda row: _number(row["value"]),
        "lower": lambda row: vocabulary.bound_text(row["lower"]) or "—",
        "upper": lambda row: vocabulary.bound_text(row["upper"]) or "—",
        "method": lambda row: method_word(row["method"]),
    }
    notes: list[str] = []
    bounds = data[["lower", "upper"]].to_numpy(dtype=float)
    if not np.isfinite(bounds).any():
        columns.pop("lower")
        columns.pop("upper")
        notes.append(vocabulary.no_bound_text(kind))
    shown = _shown(data, columns, cells)
    for column in ("Curve or data", "Note"):
        shown, said = notes_once(shown, column, "Index")
        notes.extend(said)
    return ReportTable(data, shown, tuple(notes))


def district_means(sheet: DistrictFigures) -> ReportTable:
    """The District sheet's mean incomes by year (means-only data)."""
    titles = vocabulary.MEANS_COLUMNS
    cells = {
        "mean_income": lambda row: _money(row["mean_income"]),
        "population": lambda row: _money(row["population"]),
        "ratio": lambda row: vocabulary.figure(row["ratio"], digits=3),
        "rank": lambda row: vocabulary.figure(row["rank"], money=True),
        "growth": lambda row: vocabulary.figure(row["growth"], digits=2),
    }
    return ReportTable(sheet.means, _shown(sheet.means, titles, cells))


def district_published(sheet: DistrictFigures) -> ReportTable:
    """The District sheet's published figures of the year, with their rank and scale."""
    titles = {
        "figure": "Figure",
        "value": "Value",
        "scale": "Scale",
        "rank": "Rank among districts",
    }
    return ReportTable(sheet.published, _shown(sheet.published, titles, {}))


def set_aside_table(excluded: pd.DataFrame, names: Mapping[str, str]) -> ReportTable:
    """District-years set aside, with the reason (said once when it is shared)."""
    titles = {"name": "District", "region": "Id", "year": "Year", "reason": "Reason"}
    data = excluded.reset_index(drop=True)
    rows = data.assign(
        name=data["region"].astype(str).map(lambda r: names.get(r, r)),
        row=data["region"].astype(str) + " " + data["year"].astype(str),
    )
    shown = _shown(rows, {**titles, "row": "Row"}, {})
    shown, notes = notes_once(shown, "Reason", "Row")
    return ReportTable(data, shown.drop(columns=["Row"]), tuple(notes))


def district_welfare(sheet: DistrictFigures) -> ReportTable:
    """The District sheet's welfare in money (already in words on the sheet)."""
    shown = _shown(sheet.welfare, vocabulary.WELFARE_COLUMNS, {})
    shown, notes = notes_once(shown, "Note", "Figure")
    return ReportTable(sheet.welfare, shown, (vocabulary.WELFARE_CAPTION, *notes))


def poverty_table(rows: pd.DataFrame, names: Mapping[str, str]) -> ReportTable:
    """Every poverty measure of every district in one year: one row per district, the
    highest headcount first; bounds in brackets where the shares give them."""
    keys = [k for k in vocabulary.POVERTY_HELP if k in set(rows["index"])]
    rows = rows.drop_duplicates(["region", "index"]).assign(region=rows["region"].astype(str))
    wide, low, high = (
        rows.pivot(index="region", columns="index", values=column).reindex(columns=keys)
        for column in ("value", "lower", "upper")
    )
    order = wide.sort_values(keys[0], ascending=False).index if keys else wide.index
    data = wide.reindex(order)[keys].reset_index()
    shown = pd.DataFrame({"District": [f"{names.get(str(r), r)} ({r})" for r in order]})
    for key in keys:
        cells = []
        for region in order:
            value, lo, hi = wide.at[region, key], low.at[region, key], high.at[region, key]
            text = vocabulary.figure(value)
            if np.isfinite(lo) and np.isfinite(hi):
                text += f" ({vocabulary.figure(lo)} to {vocabulary.figure(hi)})"
            cells.append(text)
        shown[vocabulary.index_label(key)] = cells
    return ReportTable(data, shown)


def poverty_split_table(split: PovertySplit) -> ReportTable:
    """The Breakdown's poverty split, in its words."""
    cells = {
        "population_share": lambda row: f"{100 * row['population_share']:.1f} %",
        "value": lambda row: _number(row["value"]),
        "contribution": lambda row: _number(row["contribution"]),
        "percent": lambda row: f"{row['percent']:.1f} %",
    }
    return ReportTable(split.table, _shown(split.table, vocabulary.POVERTY_SPLIT_COLUMNS, cells))


def plain_facts(facts: tuple[tuple[str, str], ...], note: str = "") -> ReportTable:
    """Label, value pairs (a sheet's metrics) as a two-column table, with a note under it."""
    data = pd.DataFrame(facts, columns=["figure", "value"])
    shown = data.rename(columns={"figure": "Figure", "value": "Value"})
    return ReportTable(data, shown, (note,) if note else ())


def scenario_table(frame: pd.DataFrame) -> ReportTable:
    """A what-if table: each figure before and after, and the change with its sign."""
    cells = {
        "before": lambda row: _number(row["before"]),
        "after": lambda row: _number(row["after"]),
        "change": lambda row: ("+" if row["change"] > 0 else "") + _number(row["change"]),
    }
    return ReportTable(frame, _shown(frame, vocabulary.SCENARIO_COLUMNS, cells))
