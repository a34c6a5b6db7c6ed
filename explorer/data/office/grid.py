"""The raw grid of a published table: every cell as text, no header assumed.

Delimited text (any of ``, ; tab |``, UTF-8 with or without BOM, else Latin-1) and Excel
workbooks (every sheet) are read into :class:`Grid` objects. Blank lines are not kept, but
every kept line remembers its line number in the file so messages can point at it. Memory is
bounded: a table wider than :data:`MAX_COLUMNS` or with more than :data:`MAX_CELLS` cells is
refused before its rows are built.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
from collections import Counter
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from explorer.data.model import fail
from explorer.data.sheets import sheet_lines

__all__ = [
    "DELIMITERS",
    "MAX_BYTES",
    "MAX_CELLS",
    "MAX_COLUMNS",
    "Grid",
    "Line",
    "read_grids",
    "source_bytes",
]

DELIMITERS = (",", ";", "\t", "|")
MAX_COLUMNS = 1_000
MAX_CELLS = 2_000_000
MAX_BYTES = 200_000_000  # a district table is far smaller; refuse before reading it
SNIFF_LINES = 60

#: One kept line of a table: its 1-based line number in the file and its cells as text.
Line = tuple[int, tuple[str, ...]]


@dataclass(frozen=True)
class Grid:
    """The non-blank lines of one table (a text file or one sheet of a workbook).

    Attributes
    ----------
    lines : tuple of Line
        ``(line number, cells)`` for every line with at least one non-blank cell, trailing
        blank cells removed.
    sheet : str or None
        Sheet name for a workbook, None for a text file.
    delimiter, encoding : str
        What was detected for a text file ("" for a workbook).
    """

    lines: tuple[Line, ...]
    sheet: str | None = None
    delimiter: str = ""
    encoding: str = ""

    @property
    def width(self) -> int:
        """Widest line, in cells."""
        return max((len(cells) for _, cells in self.lines), default=0)


def source_bytes(source: str | Path | bytes, name: str | None) -> tuple[bytes, str]:
    """The bytes of ``source`` (a path, or bytes with their file ``name``) and the name."""
    if isinstance(source, bytes | bytearray):
        return bytes(source), name or "upload"
    path = Path(source)
    try:
        if path.stat().st_size > MAX_BYTES:
            raise fail(
                f"the file is larger than {MAX_BYTES // 1_000_000} MB; that is more than a "
                "district table.",
                "Keep only the districts and years you need.",
                file=name or path.name,
            )
        return path.read_bytes(), name or path.name
    except OSError as exc:
        raise fail(
            f"the file cannot be read ({exc.strerror or exc}).",
            "Check the path and that the file is not open elsewhere.",
            file=name or path.name,
        ) from exc


def _trimmed(cells: list[str]) -> tuple[str, ...]:
    end = len(cells)
    while end and not cells[end - 1].strip():
        end -= 1
    return tuple(cells[:end])


def _decode(data: bytes) -> tuple[str, str]:
    # UTF-16 when its BOM says so (spreadsheet "Unicode text"); then UTF-8 (a BOM is
    # dropped); Latin-1 decodes any byte, so it is the last resort.
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        try:
            return data.decode("utf-16"), "utf-16"
        except UnicodeDecodeError:
            pass
    try:
        return data.decode("utf-8-sig"), "utf-8"
    except UnicodeDecodeError:
        return data.decode("latin-1"), "latin-1"


def _sniff(text: str) -> str:
    """The delimiter that splits the first lines into the most, most regular, fields."""
    sample = [ln for ln in text.splitlines()[:SNIFF_LINES] if ln.strip()]
    if not sample:
        return ","
    best, best_score = ",", (0, 0)
    for delimiter in DELIMITERS:
        widths = Counter(len(row) for row in csv.reader(sample, delimiter=delimiter))
        width, count = max(widths.items(), key=lambda kv: (kv[1] * (kv[0] > 1), kv[0]))
        score = (count if width > 1 else 0, width)
        if score > best_score:
            best, best_score = delimiter, score
    return best


def _bounded(file: str, width: int, cells: int) -> None:
    if width > MAX_COLUMNS:
        raise fail(
            f"the table is {width} columns wide; at most {MAX_COLUMNS} are read.",
            "Save only the table itself (districts down, years or measures across).",
            file=file,
        )
    if cells > MAX_CELLS:
        raise fail(
            f"the table has more than {MAX_CELLS:,} cells; that is more than a district table.",
            "Split the file, or keep only the districts and years you need.",
            file=file,
        )


def _text_grid(data: bytes, file: str, delimiter: str | None) -> Grid:
    text, encoding = _decode(data)
    delimiter = delimiter or _sniff(text)
    lines: list[Line] = []
    cells = 0
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    for row in reader:
        row_cells = _trimmed([c.strip(" \ufeff") for c in row])
        cells += len(row_cells)
        _bounded(file, len(row_cells), cells)
        if row_cells:
            lines.append((reader.line_num, row_cells))
    return Grid(tuple(lines), None, delimiter, encoding)


def _cell_text(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return str(value)
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    if isinstance(value, dt.datetime | dt.date):
        return value.isoformat()
    return str(value).strip()


def _sheet_grid(sheet: Any, file: str) -> Grid:
    # sheet_lines refuses an absurd used range (stated or real) naming its far cell, and
    # keeps only non-blank rows, so a far-away stray cell never builds blank rows
    lines: list[Line] = []
    cells = 0
    for number, row in sheet_lines(sheet, file):
        row_cells = _trimmed([_cell_text(v) for v in row])
        if row_cells:
            cells += len(row_cells)
            _bounded(file, len(row_cells), cells)
            lines.append((number, row_cells))
    return Grid(tuple(lines), sheet.title)


def _workbook_grids(data: bytes, file: str) -> list[Grid]:
    import openpyxl

    try:
        book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many types for damaged workbooks
        raise fail(
            f"the workbook cannot be opened ({type(exc).__name__}).",
            "Open it in a spreadsheet program and save it again as .xlsx.",
            file=file,
        ) from exc
    try:
        return [_sheet_grid(sheet, f"{file} [{sheet.title}]") for sheet in book.worksheets]
    finally:
        book.close()


def read_grids(
    source: str | Path | bytes, name: str | None = None, delimiter: str | None = None
) -> tuple[str, list[Grid]]:
    """Every cell of a text file or workbook as text, one :class:`Grid` per table.

    Parameters
    ----------
    source : path or bytes
        The file, or its bytes (then ``name`` tells its type by its extension).
    name : str, optional
        File name as the planner knows it, used in messages.
    delimiter : str, optional
        Force a delimiter instead of detecting one.

    Returns
    -------
    name : str
    grids : list of Grid
        One for a text file, one per sheet (in order) for a workbook; sheets without any
        cell are left out.

    Raises
    ------
    DataError
        When the file cannot be read, or is beyond the size bounds.
    """
    data, file = source_bytes(source, name)
    if data[:4] == b"PK\x03\x04" or file.lower().endswith((".xlsx", ".xlsm")):
        grids = [g for g in _workbook_grids(data, file) if g.lines]
    else:
        grids = [g for g in [_text_grid(data, file, delimiter)] if g.lines]
    if not grids:
        raise fail("the file holds no cells.", "Choose the file that holds the table.", file=file)
    return file, grids
