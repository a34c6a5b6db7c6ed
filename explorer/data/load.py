"""``load_panel``: files in, a validated :class:`~explorer.data.model.Panel` out.

Reads the table (:mod:`explorer.data.tables`, or :mod:`explorer.data.office` for a table
as a statistics office publishes it), applies the column map
(:mod:`explorer.data.columns`), a crosswalk and a second table of populations, reads the
boundaries (:mod:`explorer.data.boundaries`) and hands everything to
:func:`explorer.data.validate.validate`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import pandas as pd

from explorer.data.boundaries import BoundarySource, read_boundaries
from explorer.data.columns import apply_column_map, parse_column_map
from explorer.data.model import DataError, Panel, Problem, fail
from explorer.data.office import (
    OfficeTable,
    ReadOptions,
    apply_crosswalk,
    join_measure,
    read_office_table,
)
from explorer.data.tables import read_table
from explorer.data.validate import detect_kind, validate

__all__ = ["PanelTable", "load_panel", "read_as_it_is", "read_crosswalk", "read_panel_table"]

#: Suffixes the office reader takes (delimited text and workbooks).
OFFICE_SUFFIXES = (".csv", ".tsv", ".txt", ".xlsx", ".xlsm")


@dataclass(frozen=True)
class PanelTable:
    """The panel's table as read, before validation, with the account of the reading.

    Attributes
    ----------
    frame : DataFrame
        ``region``, ``year`` and the measures, with the readers' notes in
        ``frame.attrs["problems"]``.
    reading : OfficeTable or None
        The office reader's account (layout, header line, skipped lines, totals set
        apart), or None when the table was tidy and read as it is.
    lines : dict
        Row position (0-based) to file line, for an office table read from one sheet.
    """

    frame: pd.DataFrame
    reading: OfficeTable | None = None
    lines: dict[int, int] = field(default_factory=dict)


def _office_wanted(frame: pd.DataFrame | None, options: ReadOptions) -> bool:
    """Whether the office reader should read the table rather than the plain one."""
    if frame is None or replace(options, year=None) != ReadOptions():
        return True  # unreadable as it is, or an option only the office reader knows
    columns = [str(c).strip() for c in frame.columns]
    if options.year is not None and "year" not in columns:
        return True  # a table for one year, the year given
    return detect_kind(columns) is None


def read_panel_table(
    panel_path: str | Path,
    *,
    sheet: str | int | None = None,
    column_map: Mapping[str, str] | str | None = None,
    options: ReadOptions | None = None,
    boundary_ids: Sequence[str] | None = None,
) -> PanelTable:
    """Read a panel table: as it is when tidy, through the office reader otherwise.

    A tidy table (its columns name a kind, see :func:`explorer.data.validate.detect_kind`)
    is read as it is; a table whose columns do not say what it holds (years across the
    columns, title rows above the header, a sheet per measure), or one read with any
    :class:`~explorer.data.office.ReadOptions` given, goes through
    :func:`~explorer.data.office.read_office_table`.

    Parameters
    ----------
    panel_path : path
        CSV, Parquet or Excel table.
    sheet : str or int, optional
        Excel sheet for a tidy workbook.
    column_map : mapping or str, optional
        Renames applied to a tidy table.
    options : ReadOptions, optional
        Office reading overrides (header line, measure, year, keep totals).
    boundary_ids : sequence of str, optional
        The boundary file's ids and names, to tell total rows from districts.

    Returns
    -------
    PanelTable
    """
    panel_path = Path(panel_path)
    options = options or ReadOptions()
    office = panel_path.suffix.lower() in OFFICE_SUFFIXES
    plain, plain_error = None, None
    if not (office and replace(options, year=None) != ReadOptions()):
        try:
            plain = _plain(panel_path, sheet, column_map)
        except DataError as error:
            if not office:
                raise
            plain_error = error
    if not office or not _office_wanted(plain, options):
        return PanelTable(plain)
    try:
        reading = read_office_table(
            panel_path, panel_path.name, options=options, boundary_ids=boundary_ids
        )
    except DataError as error:
        # A table neither reader can read: the plain reader's account is the plainer one,
        # unless the office reader understood the table and only needs a choice made.
        if plain_error is not None and not _needs_choice(error):
            raise plain_error from None
        raise
    frame = reading.table.reset_index(drop=True)
    frame.attrs = {
        "problems": list(reading.notes),
        # scales the file wrote (a % in a header or cell) outrank scales read off values
        "scales": {
            c.column: c.scale
            for c in reading.published.columns
            if c.scale == "percent" and ("% sign" in c.evidence or "says percent" in c.evidence)
        },
    }
    return PanelTable(frame, reading, dict(enumerate(reading.lines)))


def read_as_it_is(
    panel_path: str | Path,
    *,
    sheet: str | int | None = None,
    column_map: Mapping[str, str] | str | None = None,
    options: ReadOptions | None = None,
) -> bool:
    """Whether :func:`read_panel_table` reads this table as it is (tidy), told from its
    header and first lines alone, so a large file is not read a second time to say so.

    False when the office reader would be asked (or when the head cannot be read).
    """
    from explorer.data.tables import read_head

    panel_path = Path(panel_path)
    options = options or ReadOptions()
    if panel_path.suffix.lower() not in OFFICE_SUFFIXES:
        return True
    if replace(options, year=None) != ReadOptions():
        return False
    try:
        head = read_head(panel_path, sheet=sheet)
        if column_map:
            mapping = (
                parse_column_map(column_map) if isinstance(column_map, str) else dict(column_map)
            )
            head = apply_column_map(head, mapping, file=panel_path.name)
    except DataError:
        return False
    return not _office_wanted(head, options)


#: Words of the office reader's errors that mean it understood the table but needs the
#: planner to choose (the year of a one-year table).
NEEDS_CHOICE = ("no year column",)


def _needs_choice(error: DataError) -> bool:
    return any(w in p.message for p in error.problems for w in NEEDS_CHOICE)


def _plain(panel_path: Path, sheet, column_map) -> pd.DataFrame:
    frame = read_table(panel_path, sheet=sheet)
    if column_map:
        mapping = parse_column_map(column_map) if isinstance(column_map, str) else dict(column_map)
        frame = apply_column_map(frame, mapping, file=panel_path.name)
    return frame


def read_crosswalk(source: str | Path | pd.DataFrame | Mapping[str, str]) -> pd.DataFrame:
    """A ``region,boundary_id`` crosswalk from a file, a table or a mapping."""
    if isinstance(source, pd.DataFrame):
        return source
    if isinstance(source, Mapping):
        return pd.DataFrame({"region": list(source), "boundary_id": list(source.values())})
    table = read_table(Path(source))
    table.columns = [str(c).strip() for c in table.columns]
    return table.astype({c: str for c in table.columns if c in ("region", "boundary_id")})


def _with_crosswalk(frame: pd.DataFrame, crosswalk: Any, file: str) -> pd.DataFrame:
    name = Path(crosswalk).name if isinstance(crosswalk, str | Path) else "crosswalk"
    renamed, _ = apply_crosswalk(frame, read_crosswalk(crosswalk), file=name)
    renamed.attrs = dict(frame.attrs)
    renamed.index = frame.index
    return renamed


def _with_population(frame: pd.DataFrame, population: str | Path, file: str) -> pd.DataFrame:
    """The panel joined to a second table of populations (district, year, population)."""
    path = Path(population)
    other = read_panel_table(path)
    if "population" not in other.frame.columns:
        raise fail(
            "the second table holds no population column.",
            "Give a table with the district, the year and the population.",
            file=path.name,
        )
    joined, notes = join_measure(frame, other.frame[["region", "year", "population"]], path.name)
    joined.index = frame.index
    joined.attrs = {
        "problems": [
            *frame.attrs.get("problems", ()),
            *other.frame.attrs.get("problems", ()),
            *notes,
        ]
    }
    return joined


def _read_boundaries(boundaries_path, layer, crs, boundary_id):
    boundary_file = _source_name(boundaries_path)
    boundaries = read_boundaries(boundaries_path, layer=layer, crs=crs, file_label=boundary_file)
    if boundary_id is not None:
        boundaries = _with_id(boundaries, boundary_id, boundary_file)
    return boundaries, boundary_file


def _boundary_keys(boundaries) -> list[str] | None:
    """Every id or name the boundary file holds (which attribute is the id is decided
    later), so that a total row is told apart by a name the boundaries lack."""
    if boundaries is None:
        return None
    keys: set[str] = set()
    for column in boundaries.columns:
        if column != "geometry" and not pd.api.types.is_numeric_dtype(boundaries[column]):
            keys.update(str(v) for v in boundaries[column].dropna())
    return sorted(keys)


def load_panel(
    panel_path: str | Path,
    boundaries_path: BoundarySource | None = None,
    *,
    kind: str | None = None,
    column_map: Mapping[str, str] | str | None = None,
    boundary_id: str | None = None,
    crs: str | None = None,
    sheet: str | int | None = None,
    layer: str | None = None,
    levels: Sequence[str] | Mapping[str, str] | None = None,
    allow_negative: bool = False,
    options: ReadOptions | None = None,
    population: str | Path | None = None,
    crosswalk: str | Path | pd.DataFrame | Mapping[str, str] | None = None,
) -> Panel:
    """Read a panel file (and boundaries), map columns, validate, return a :class:`Panel`.

    Parameters
    ----------
    panel_path : path
        CSV, Parquet or Excel table: tidy, or as an office publishes it
        (see :func:`read_panel_table`).
    boundaries_path : path or sequence, optional
        A boundary file, or the parts of one Shapefile given together
        (see :func:`explorer.data.boundaries.read_boundaries`).
    kind, column_map, boundary_id, crs, sheet, layer, allow_negative
        How to read the files; ``column_map`` as a mapping or ``"region=Code,year=Yr"``.
    levels : sequence of str or mapping, optional
        The higher levels the planner chose, outermost first, optionally with display
        names (``{"ZONE_CD": "Zone"}``); by default the proposals of
        :func:`explorer.data.levels.propose_levels`.
    options : ReadOptions, optional
        Office reading overrides: header line, measure, year of a one-year table, keep
        total rows as districts.
    population : path, optional
        A second table (district, year, population) joined on district and year; the
        district-years found on one side only are reported.
    crosswalk : path, table or mapping, optional
        ``region,boundary_id`` pairs renaming the panel's districts to the boundary ids.

    Returns
    -------
    Panel
        Every note of the readers (lines skipped, codes read as missing, total rows set
        apart, unmatched keys of the second table) is in ``Panel.warnings``.

    Raises
    ------
    DataError
        Every problem found, each naming its file, line and column.
    """
    panel_path = Path(panel_path)
    file = panel_path.name
    boundaries, boundary_file = None, ""
    if boundaries_path is not None:
        boundaries, boundary_file = _read_boundaries(boundaries_path, layer, crs, boundary_id)
    read = read_panel_table(
        panel_path,
        sheet=sheet,
        column_map=column_map,
        options=options,
        boundary_ids=_boundary_keys(boundaries),
    )
    frame = read.frame
    if crosswalk is not None:
        frame = _with_crosswalk(frame, crosswalk, file)
    if population is not None:
        frame = _with_population(frame, population, file)
    panel = validate(
        frame,
        kind=kind,
        file=file,
        boundaries=boundaries,
        boundary_file=boundary_file,
        levels=levels,
        allow_negative=allow_negative,
    )
    if read.reading is None:
        return panel
    return _with_file_lines(panel, read.lines, file)


def _with_file_lines(panel: Panel, lines: dict[int, int], file: str) -> Panel:
    """Problems about an office table's rows, pointed at the file's lines.

    ``validate`` numbers the rows of the tidy table (position + 2); an office table's row
    comes from a file line (one per district when years run across the columns), or from
    no single line at all (several sheets combined), when the row number is dropped.
    """

    def moved(problem: Problem) -> Problem:
        if problem.file != file or problem.row is None:
            return problem
        return replace(problem, row=lines.get(problem.row - 2))

    return replace(panel, warnings=tuple(moved(p) for p in panel.warnings))


def _source_name(source: BoundarySource) -> str:
    if isinstance(source, str | Path):
        return Path(source).name
    names = [str(p[0]) if isinstance(p, tuple) else Path(p).name for p in source]
    shp = [n for n in names if n.lower().endswith(".shp")]
    return shp[0] if shp else ", ".join(names)


def _with_id(boundaries, boundary_id: str, boundary_file: str):
    """The boundaries with the named attribute as ``region``."""
    attrs = [c for c in boundaries.columns if c != "geometry"]
    if boundary_id not in attrs:
        raise fail(
            f"the boundary file has no attribute {boundary_id!r}; its attributes are: {', '.join(attrs)}",
            "choose one of these attributes as the id",
            file=boundary_file,
        )
    keep = boundaries.attrs
    if boundary_id != "region":
        boundaries = boundaries.rename(columns={"region": "region_in_file"}).rename(
            columns={boundary_id: "region"}
        )
    boundaries.attrs = keep
    return boundaries
