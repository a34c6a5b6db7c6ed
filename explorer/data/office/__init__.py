"""Readers for tables as statistics offices publish them.

:func:`read_office_table` takes a delimited text file or an Excel workbook as an office
writes it (title and note rows, footnote markers, thousands separators, suppression codes,
years across the columns, a sheet per measure or per year, total rows) and returns an
:class:`OfficeTable`: one tidy long table (``region``, ``year``, one column per measure)
with everything that was cleaned, skipped or set apart, and the :class:`ReadOptions` that
reproduce the reading. :func:`join_measure` joins a second table (district, year, population
or mean) on district and year.

Examples
--------
>>> reading = read_office_table("income_by_district.csv", year=None)   # doctest: +SKIP
>>> reading.layout.words, reading.table.columns.tolist()                # doctest: +SKIP
"""

from __future__ import annotations

from collections.abc import Collection
from dataclasses import asdict, dataclass, field, replace
from pathlib import Path
from typing import Any

import pandas as pd

from explorer.data.model import DataError, Problem, fail
from explorer.data.office.aggregates import set_apart_aggregates
from explorer.data.office.cells import decimal_mark
from explorer.data.office.grid import Grid, read_grids
from explorer.data.office.header import Frame, find_frame, first_words
from explorer.data.office.join import join_measure
from explorer.data.office.layouts import LAYOUTS, Tidy, tidy_frame
from explorer.data.office.measures import header_year, measure_key
from explorer.data.office.names import NameMatch, apply_crosswalk, match_names, normalise
from explorer.data.office.published import Published, recognise_published

__all__ = [
    "Layout",
    "NameMatch",
    "OfficeTable",
    "Published",
    "ReadOptions",
    "apply_crosswalk",
    "join_measure",
    "match_names",
    "normalise",
    "read_office_table",
    "recognise_published",
]

LISTED = 5


@dataclass(frozen=True)
class ReadOptions:
    """The choices that reproduce a reading; any of them may be a planner's override.

    ``None`` means "detect". :attr:`OfficeTable.options` holds what was detected, so
    reading the same file with those options gives the same table.
    """

    header_row: int | None = None
    measure: str | tuple[str, ...] | None = None
    year: int | None = None
    decimal: str | None = None
    delimiter: str | None = None
    keep_aggregates: bool = False

    def to_dict(self) -> dict[str, Any]:
        """Plain values, for a manifest or a view file."""
        out = asdict(self)
        if isinstance(self.measure, tuple):
            out["measure"] = list(self.measure)
        return out

    @classmethod
    def from_dict(cls, values: dict[str, Any]) -> ReadOptions:
        """The options back from :meth:`to_dict`; unknown keys are refused."""
        unknown = set(values) - set(cls.__dataclass_fields__)
        if unknown:
            raise fail(
                f"unknown reading option(s): {', '.join(sorted(unknown))}.",
                f"Use only {', '.join(cls.__dataclass_fields__)}.",
            )
        measure = values.get("measure")
        return cls(
            **{**values, "measure": tuple(measure) if isinstance(measure, list) else measure}
        )


@dataclass(frozen=True)
class Layout:
    """What was understood of the table's shape, as a key and in words."""

    key: str
    words: str
    measures: tuple[str, ...]
    sheets: tuple[tuple[str | None, str, int], ...] = ()  # (sheet, layout key, header line)


@dataclass(frozen=True)
class OfficeTable:
    """A published table read into one tidy long table, with an account of the reading.

    Attributes
    ----------
    table : DataFrame
        ``region`` (text as written, zeros kept), ``year`` (int), one float column per
        measure (``mean_income``, ``population``, ``gini``, ``share_1`` …), text columns kept.
    layout : Layout
    header_row : int
        1-based line of the header (of the first sheet for a workbook).
    skipped : tuple of (sheet, line, first words, where)
        Lines not read: ``where`` is "above", "among" or "below" the data.
    notes : tuple of Problem
        Warnings: every kind of decoration removed, suppression codes with counts, lines
        skipped, aggregate rows set apart.
    aggregates : DataFrame
        Rows recognised as totals, with ``line`` and ``reason``.
    options : ReadOptions
        The options that reproduce this reading.
    published : Published
        Whether the table holds published indices, and their scales.
    lines : tuple of int
        The file line of each row of ``table`` (a table read from one sheet), else empty.
    """

    table: pd.DataFrame
    layout: Layout
    header_row: int
    skipped: tuple[tuple[str | None, int, str, str], ...]
    notes: tuple[Problem, ...]
    aggregates: pd.DataFrame
    options: ReadOptions
    published: Published = field(default_factory=lambda: Published(False, ()))
    lines: tuple[int, ...] = ()

    def summary(self) -> list[str]:
        """What was understood, one sentence a line, for a preview before the table is used."""
        table = self.table
        years = sorted(table["year"].unique())
        span = f"{years[0]}–{years[-1]}" if len(years) > 1 else str(years[0]) if years else "-"
        lines = [
            f"Layout: {self.layout.words}.",
            f"Header on line {self.header_row}; measures: {', '.join(self.layout.measures)}.",
            f"{table['region'].nunique()} districts, years {span}, {len(table)} rows.",
        ]
        if len(self.aggregates):
            lines.append(
                f"{self.aggregates['region'].nunique()} total row(s) set apart: "
                + ", ".join(self.aggregates["region"].drop_duplicates().head(LISTED))
                + "."
            )
        for column in self.published.columns:
            lines.append(f"{column.column}: published {column.measure}, {column.scale}.")
        return lines + [p.message for p in self.notes]


def _skipped_notes(frame: Frame, sheet: str | None, file: str) -> tuple[list, list[Problem]]:
    skipped, notes = [], []
    parts = (
        (
            "above",
            frame.above,
            "above the header (titles, notes)",
            "Give the line of the header if it is elsewhere.",
        ),
        ("among", frame.between, "among the data without values", ""),
        ("below", frame.below, "below the data (sources, footnotes)", ""),
    )
    for where, lines, words, fix in parts:
        if not lines:
            continue
        skipped += [(sheet, number, first_words(cells), where) for number, cells in lines]
        shown = "; ".join(f"line {n}: '{first_words(c)}'" for n, c in lines[:LISTED])
        more = f" and {len(lines) - LISTED} more" if len(lines) > LISTED else ""
        notes.append(
            Problem(
                f"{len(lines)} line(s) {words} were not read ({shown}{more}).",
                fix,
                file=file,
                severity="warning",
            )
        )
    return skipped, notes


def _read_grid(grid: Grid, file: str, options: ReadOptions, single: bool):
    where = f"{file} [{grid.sheet}]" if grid.sheet else file
    prefer = "," if grid.delimiter == ";" else "."
    decimal = options.decimal or decimal_mark((c for _, cells in grid.lines for c in cells), prefer)
    frame = find_frame(grid, decimal, options.header_row if single else None, where)
    sheet_year = header_year(grid.sheet) if grid.sheet else None
    year = sheet_year[1] if sheet_year and not sheet_year[0] else options.year
    tidy = tidy_frame(
        frame,
        decimal,
        where,
        year=year,
        measure=options.measure,
        fallback=grid.sheet if grid.sheet and measure_key(grid.sheet) else None,
    )
    skipped, notes = _skipped_notes(frame, grid.sheet, where)
    return tidy, frame, decimal, skipped, notes


def _combine(tidies: list[Tidy], file: str) -> pd.DataFrame:
    """One table from several sheets: same measures stacked, other measures joined."""
    if len(tidies) == 1:
        return tidies[0].table
    order: dict[str, int] = {}
    for tidy in tidies:
        for region in tidy.table["region"]:
            order.setdefault(region, len(order) + 1)
    groups: dict[tuple[str, ...], list[pd.DataFrame]] = {}
    for tidy in tidies:
        groups.setdefault(tidy.measures, []).append(tidy.table.drop(columns="line"))
    tables = [pd.concat(parts, ignore_index=True) for parts in groups.values()]
    combined = tables[0]
    for table in tables[1:]:
        clash = (set(combined.columns) & set(table.columns)) - {"region", "year"}
        if clash:
            raise fail(
                f"two sheets both hold {', '.join(sorted(clash))} in different layouts.",
                "Keep one sheet per measure or one sheet per year.",
                file=file,
            )
        combined = combined.merge(table, on=["region", "year"], how="outer")
    # rows keep the order districts first appear in, which the total-row check relies on
    return (
        combined.assign(line=combined["region"].map(order))
        .sort_values(["line", "year"], kind="stable")
        .reset_index(drop=True)
    )


def _aggregate_notes(aggregates: pd.DataFrame, keep: bool, file: str) -> list[Problem]:
    if aggregates.empty:
        return []
    rows = aggregates.drop_duplicates("line")
    shown = "; ".join(f"'{r.region}' ({r.reason})" for r in rows.head(LISTED).itertuples())
    more = f" and {len(rows) - LISTED} more" if len(rows) > LISTED else ""
    tail = (
        "They are kept in the table, as asked."
        if keep
        else "They are set apart, not read as districts."
    )
    return [
        Problem(
            f"{len(rows)} row(s) are totals of other rows: {shown}{more}. {tail}",
            "" if keep else "Choose to keep total rows if they are districts after all.",
            file=file,
            severity="warning",
        )
    ]


def _check_unique(table: pd.DataFrame, file: str, file_lines: bool) -> None:
    doubled = table[table.duplicated(["region", "year"], keep=False)]
    if doubled.empty:
        return
    first = doubled.iloc[0]
    raise fail(
        f"'{first['region']}' appears more than once for {first['year']} "
        f"({len(doubled)} rows share a district and year with another).",
        "Give each district a unique name or code (codes are safest).",
        file=file,
        row=int(first["line"]) if file_lines else None,
    )


def _layout(readings: list[tuple[Grid, Tidy, Frame]]) -> Layout:
    """What the sheets' layouts add up to, as a key and in words."""
    tidies = [t for _, t, _ in readings]
    sheets = tuple((g.sheet, t.layout, f.header[0]) for g, t, f in readings)
    measures = tuple(dict.fromkeys(m for t in tidies for m in t.measures))
    key = tidies[0].layout if len({t.layout for t in tidies}) == 1 else "mixed"
    words = LAYOUTS.get(key, "sheets in different layouts")
    if len(readings) > 1:
        if all(header_year(g.sheet or "") for g, _, _ in readings):
            words += "; one year per sheet"
        elif len({t.measures for t in tidies}) == len(tidies):
            words += "; one measure per sheet"
        else:
            words += "; sheets stacked"
    return Layout(key, words, measures, sheets)


def read_office_table(
    source: str | Path | bytes,
    name: str | None = None,
    *,
    options: ReadOptions | None = None,
    boundary_ids: Collection[str] | None = None,
    **overrides: Any,
) -> OfficeTable:
    """Read a published regional table into one tidy long table.

    Parameters
    ----------
    source : path or bytes
        CSV/TSV/TXT (any of ``, ; tab |``) or XLSX; bytes need ``name`` for messages.
    name : str, optional
        File name as the planner knows it.
    options : ReadOptions, optional
        Overrides (header line, measure, year, decimal mark, delimiter, keep totals).
    boundary_ids : collection of str, optional
        Ids or names of the boundary file's districts, to tell total rows apart.
    **overrides
        Single fields of :class:`ReadOptions` (``year=2001``) on top of ``options``.

    Returns
    -------
    OfficeTable

    Raises
    ------
    DataError
        With every problem: no data, no header, no year for a one-year table, two rows for
        one district and year, beyond the size bounds.
    """
    options = replace(options or ReadOptions(), **overrides)
    file, grids = read_grids(source, name, options.delimiter)
    readings, notes, skipped, failures = [], [], [], []
    for grid in grids:
        try:
            readings.append((grid, *_read_grid(grid, file, options, len(grids) == 1)))
        except DataError as error:
            if len(grids) == 1:
                raise
            failures.append((grid.sheet, error))
    if not readings:
        raise DataError([p for _, e in failures for p in e.problems])
    for sheet, error in failures:
        notes.append(
            Problem(
                f"sheet '{sheet}' holds no table that could be read and was "
                f"skipped ({error.problems[0].message})",
                file=file,
                severity="warning",
            )
        )
    tidies = [r[1] for r in readings]
    for _, tidy, _, _, lines, problems in readings:
        skipped += lines
        notes += [*problems, *tidy.notes]
    table = _combine(tidies, file)
    districts, aggregates = set_apart_aggregates(table, boundary_ids)
    notes += _aggregate_notes(aggregates, options.keep_aggregates, file)
    kept = table if options.keep_aggregates else districts
    _check_unique(kept, file, file_lines=len(readings) == 1)
    grid0, frame0, decimal0 = readings[0][0], readings[0][2], readings[0][3]
    layout = _layout([(g, t, f) for g, t, f, *_ in readings])
    detected = replace(
        options,
        decimal=decimal0,
        delimiter=grid0.delimiter or None,
        header_row=frame0.header[0] if len(grids) == 1 else options.header_row,
        measure=options.measure,
    )
    headers = {k: v for t in tidies for k, v in t.headers.items()}
    percent = {c for t in tidies for c in t.percent}
    out = kept.drop(columns="line").reset_index(drop=True)
    lines = tuple(int(n) for n in kept["line"]) if len(readings) == 1 else ()
    return OfficeTable(
        out,
        layout,
        frame0.header[0],
        tuple(skipped),
        tuple(notes),
        aggregates,
        detected,
        recognise_published(out, headers, percent),
        lines,
    )
